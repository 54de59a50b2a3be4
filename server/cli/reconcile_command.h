// `godwit reconcile`: verdicts for a planned log against airchecks.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>

namespace godwit {

std::function<int()> add_reconcile_command(CLI::App& app);

}  // namespace godwit
