#include "godwit/core/error.h"

#include <doctest/doctest.h>

#include <set>
#include <string_view>
#include <vector>

using namespace godwit;

namespace {
// Every code, from the enum itself (its values run from 0 to `internal`,
// which error.h keeps last), not from a list kept by hand beside it.
std::vector<ErrorCode> every_code() {
  std::vector<ErrorCode> all;
  for (int i = 0; i <= static_cast<int>(ErrorCode::internal); ++i) all.push_back(static_cast<ErrorCode>(i));
  return all;
}
}  // namespace

TEST_CASE("each error code has its own wire name, which reads back as the code") {
  const auto all = every_code();
  CHECK(all.size() >= 11);
  std::set<std::string_view> names;
  for (auto c : all) {
    CAPTURE(static_cast<int>(c));
    // A code missing from error.cc's table reads as `internal`'s name.
    CHECK(code_from_wire_name(wire_name(c)) == c);
    names.insert(wire_name(c));
    for (char ch : wire_name(c)) CHECK(((ch >= 'a' && ch <= 'z') || ch == '_'));  // stable lowercase names
  }
  CHECK(names.size() == all.size());
  CHECK(code_from_wire_name("no_such_code") == ErrorCode::internal);
}

TEST_CASE("describe names the file and the position") {
  Error e{ErrorCode::corrupt, "decoding failed", "/air/h06.flac", 12.5};
  CHECK(e.describe() == "/air/h06.flac: decoding failed (at 12.500 s)");
}

TEST_CASE("Result holds a value or an error") {
  Result<int> a = 3;
  Result<int> b = Error{ErrorCode::empty, "x", "", {}};
  CHECK(a.ok());
  CHECK(a.value() == 3);
  CHECK(!b.ok());
  CHECK(b.error().code == ErrorCode::empty);
}
