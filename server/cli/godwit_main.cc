// godwit: the command line. Offline runs of the engine (locate, reconcile)
// and a client of godwitd (submit, status, result, cancel, jobs, watch, health).
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <iostream>

#include "client_command.h"
#include "exit_code.h"
#include "godwit/core/version.h"
#include "locate_command.h"
#include "reconcile_command.h"
#include "record_commands.h"

int main(int argc, char** argv) {
  CLI::App app{"godwit: find where known audio clips (spots) aired in broadcast recordings"};
  app.require_subcommand(1);
  app.set_version_flag("--version", std::string("godwit ") + godwit::godwit_version());
  auto locate = godwit::add_locate_command(app);
  auto reconcile = godwit::add_reconcile_command(app);
  auto client = godwit::add_client_commands(app);
  auto record = godwit::add_record_commands(app);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return exit_status(app.exit(e) == 0 ? godwit::ExitCode::done : godwit::ExitCode::usage);
  }
  try {
    if (app.got_subcommand("locate")) return locate();
    if (app.got_subcommand("reconcile")) return reconcile();
    if (app.got_subcommand("airings") || app.got_subcommand("proof")) return record();
    return client();
  } catch (const std::exception& e) {
    std::cerr << "godwit: internal error: " << e.what() << "\n";
    return exit_status(godwit::ExitCode::internal);
  }
  return exit_status(godwit::ExitCode::usage);
}
