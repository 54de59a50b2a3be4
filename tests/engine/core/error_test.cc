#include "godwit/core/error.h"

#include <doctest/doctest.h>

using namespace godwit;

TEST_CASE("each error code has a distinct wire name and a documented exit code") {
  const ErrorCode all[] = {ErrorCode::usage, ErrorCode::not_found, ErrorCode::unreadable, ErrorCode::unsupported,
                           ErrorCode::empty, ErrorCode::corrupt, ErrorCode::io, ErrorCode::cancelled,
                           ErrorCode::invalid_template, ErrorCode::forbidden, ErrorCode::busy,
                           ErrorCode::unavailable, ErrorCode::not_found_job, ErrorCode::bad_request,
                           ErrorCode::too_large, ErrorCode::no_placements, ErrorCode::internal};
  for (auto a : all)
    for (auto b : all)
      if (a != b) CHECK(wire_name(a) != wire_name(b));
  // README "Exit codes".
  CHECK(exit_code(ErrorCode::usage) == 2);
  CHECK(exit_code(ErrorCode::corrupt) == 3);
  CHECK(exit_code(ErrorCode::io) == 5);
  CHECK(exit_code(ErrorCode::cancelled) == 130);
  CHECK(exit_code(ErrorCode::no_placements) == 8);
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
