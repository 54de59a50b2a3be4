#include "exit_code.h"

#include <doctest/doctest.h>

#include <fstream>
#include <set>
#include <sstream>
#include <string>

using namespace godwit;

namespace {

// The codes in README.md's "Exit codes" table (rows "| N | meaning |").
std::set<int> documented_exit_codes() {
  std::ifstream in(std::string(GODWIT_SOURCE_DIR) + "/README.md");
  std::string line;
  bool in_section = false;
  std::set<int> codes;
  while (std::getline(in, line)) {
    if (line.rfind("#", 0) == 0) in_section = line.find("Exit codes") != std::string::npos;
    if (!in_section || line.rfind("| ", 0) != 0) continue;
    std::istringstream cell(line.substr(2));
    int code = -1;
    if (cell >> code) codes.insert(code);
  }
  return codes;
}

}  // namespace

TEST_CASE("every error code has an exit code of the table, and the README documents exactly the table") {
  std::set<int> table;
  for (ExitCode c : all_exit_codes()) table.insert(exit_status(c));
  CHECK(table.size() == all_exit_codes().size());  // no two names for one status
  // Every code a run can fail with, the engine's and the protocol's, from
  // wire_code.h's table (not a list kept here).
  CHECK(all_wire_codes().size() >= 17);
  for (ErrorCode e : all_wire_codes()) {
    CAPTURE(wire_code_name(e));
    CHECK(table.count(exit_status(exit_code_for(e))) == 1);
    CHECK(exit_code_for(e) != ExitCode::done);  // a failure never exits 0
  }
  CHECK(documented_exit_codes() == table);
}

TEST_CASE("the exit codes scripts rely on") {
  // README "Exit codes"; godwit reconcile --help.
  CHECK(exit_status(exit_code_for(ErrorCode::usage)) == 2);
  CHECK(exit_status(exit_code_for(ErrorCode::corrupt)) == 3);
  CHECK(exit_status(exit_code_for(ErrorCode::io)) == 5);
  CHECK(exit_status(exit_code_for(ErrorCode::no_placements)) == 8);
  CHECK(exit_status(exit_code_for(ErrorCode::cancelled)) == 130);
  CHECK(exit_status(exit_code_for(ErrorCode::internal)) == 70);
  // README "Exit codes": 6 refused, 7 daemon unavailable or busy.
  CHECK(exit_status(exit_code_for(ProtocolCode::forbidden)) == 6);
  CHECK(exit_status(exit_code_for(ProtocolCode::unknown_job)) == 6);
  CHECK(exit_status(exit_code_for(ProtocolCode::busy)) == 7);
  CHECK(exit_status(exit_code_for(ProtocolCode::unavailable)) == 7);
}

TEST_CASE("a request godwitd refused exits refused, unless the daemon is unavailable or busy") {
  for (ErrorCode e : all_wire_codes()) {
    CAPTURE(wire_code_name(e));
    const bool unavailable = e == ProtocolCode::busy || e == ProtocolCode::unavailable;
    CHECK(exit_code_for_reply(e) == (unavailable ? ExitCode::daemon_unavailable : ExitCode::refused));
  }
  CHECK(exit_code_for_reply(wire_code_from_name("")) == ExitCode::refused);  // a reply without a code
  CHECK(exit_code_for_reply(wire_code_from_name("no_such_code")) == ExitCode::refused);
}
