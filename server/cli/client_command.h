// `godwit submit|status|result|cancel|jobs|watch|health --connect HOST:PORT`:
// a client of godwitd, so nobody needs netcat. Prints the daemon's JSON.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>

namespace godwit {

std::function<int()> add_client_commands(CLI::App& app);

}  // namespace godwit
