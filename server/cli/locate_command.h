// `godwit locate`: find masters in recordings, print JSON or CSV.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>

namespace godwit {

// Adds the subcommand to `app`; the returned function runs it after parsing
// and returns the process exit code.
std::function<int()> add_locate_command(CLI::App& app);

}  // namespace godwit
