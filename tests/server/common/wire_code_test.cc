// The codes a reply carries: the engine's and the daemon protocol's, each
// with one wire name, and the protocol's exactly those server/PROTOCOL.md
// documents (its "Error codes:" paragraph is the contract clients code to).
#include "wire_code.h"

#include <doctest/doctest.h>

#include <fstream>
#include <regex>
#include <set>
#include <string>

#include "godwit/report/locate_report.h"

using namespace godwit;

namespace {

// The codes named in PROTOCOL.md's "Error codes:" paragraph: each item's
// `name`, with the explanations in parentheses left out.
std::set<std::string> documented_codes() {
  std::ifstream in(std::string(GODWIT_SOURCE_DIR) + "/server/PROTOCOL.md");
  std::string line;
  std::set<std::string> names;
  while (std::getline(in, line)) {
    if (line.rfind("Error codes:", 0) != 0) continue;
    const std::string items = std::regex_replace(line, std::regex(R"(\([^)]*\))"), "");
    const std::regex name("`([a-z_]+)`");
    for (std::sregex_iterator it(items.begin(), items.end(), name), end; it != end; ++it) names.insert((*it)[1].str());
  }
  return names;
}

bool is_engine_code(ErrorCode c) { return static_cast<int>(c) <= static_cast<int>(ErrorCode::internal); }

}  // namespace

TEST_CASE("each wire code has its own name, which reads back as the code") {
  std::set<std::string_view> names;
  size_t engine = 0;
  for (ErrorCode c : all_wire_codes()) {
    CAPTURE(static_cast<int>(c));
    CAPTURE(wire_code_name(c));
    CHECK(wire_code_from_name(wire_code_name(c)) == c);
    names.insert(wire_code_name(c));
    if (is_engine_code(c)) {
      ++engine;
      CHECK(wire_code_name(c) == wire_name(c));  // the engine's codes keep the engine's names
    } else {
      CHECK(wire_name(c) == "internal");  // the engine does not name the protocol's codes
    }
  }
  CHECK(names.size() == all_wire_codes().size());
  CHECK(engine == static_cast<size_t>(ErrorCode::internal) + 1);  // every engine code is a wire code
  CHECK(all_wire_codes().size() > engine);
  CHECK(wire_code_from_name("no_such_code") == ErrorCode::internal);
}

TEST_CASE("the protocol's codes are those PROTOCOL.md documents, and it names no code the daemon lacks") {
  const auto documented = documented_codes();
  REQUIRE(documented.size() >= 10);
  for (ErrorCode c : all_wire_codes()) {
    if (is_engine_code(c)) continue;
    CAPTURE(wire_code_name(c));
    CHECK(documented.count(std::string(wire_code_name(c))) == 1);
  }
  for (const auto& n : documented) {
    CAPTURE(n);
    CHECK(wire_code_from_name(n) != ErrorCode::internal);
  }
}

TEST_CASE("an error's JSON names a protocol code by its wire name, and an engine code as the engine does") {
  const Error refused{ProtocolCode::too_large, "inline spot 'a' is over 1 MB", "", std::nullopt};
  CHECK(wire_error_to_json(refused).dump() ==
        nlohmann::json{{"code", "too_large"}, {"message", "inline spot 'a' is over 1 MB"}}.dump());
  const Error broke{ErrorCode::corrupt, "decoding failed", "/air/h06.flac", 12.3456};
  CHECK(wire_error_to_json(broke).dump() == error_to_json(broke).dump());
}
