// `godwit airings` and `godwit proof`: the history commands, reading the
// store of record in a state directory (--state-dir) or asking godwitd
// (--connect).
#pragma once

#include <CLI/CLI.hpp>
#include <functional>

namespace godwit {

// Registers both subcommands; the returned function runs whichever was given.
std::function<int()> add_record_commands(CLI::App& app);

}  // namespace godwit
