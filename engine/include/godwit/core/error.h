// Errors as values at module edges.
//
// Callers branch on `Error::code` (a few stable codes); `message` is for
// people. Each code has one wire name (protocol, JSON), from the single
// table in error.cc. Exit codes are the programs' (server/common/exit_code.h).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <variant>

namespace godwit {

enum class ErrorCode {
  usage,             // bad options or arguments
  not_found,         // a path does not exist
  unreadable,        // exists but cannot be opened or read (permissions, not audio)
  unsupported,       // audio in a format or layout this build cannot decode
  empty,             // decodes to no samples, or only silence where audio is required
  corrupt,           // decoding failed part way through
  io,                // an operating-system error while reading or writing
  cancelled,         // the caller asked to stop
  invalid_template,  // a master that cannot serve as a template (too short, silent)
  forbidden,         // a path outside the daemon's roots, or a missing or wrong token
  busy,              // the daemon's queue is full: retry later
  unavailable,       // the daemon is shutting down, or cannot be reached
  not_found_job,     // no such job
  bad_request,       // malformed JSON, unknown op, missing or mistyped field
  too_large,         // a request line, inline spot or job over its limit
  no_placements,     // a planned log without a single valid row (empty, header only, or every row rejected)
  internal,          // a bug: please report it. Keep it last: the codes run from 0 to it (error_test.cc)
};

struct Error {
  ErrorCode code = ErrorCode::internal;
  std::string message;
  std::string path;                // the file concerned, if any
  std::optional<double> offset_s;  // position in that file, if known

  // "path: message (at 12.345 s)" for people.
  std::string describe() const;
};

// Stable lowercase name used on the wire and in JSON documents.
std::string_view wire_name(ErrorCode code);
// The code of a wire name; `internal` for a name this build does not know.
ErrorCode code_from_wire_name(std::string_view name);

// Either a value or an Error. Deliberately small: `ok()`, `value()`,
// `error()`; `value()` on an error (or `error()` on a value) is a bug and
// throws std::bad_variant_access.
template <class T>
class [[nodiscard]] Result {
 public:
  Result(T value) : v_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Error error) : v_(std::move(error)) {}  // NOLINT
  bool ok() const { return v_.index() == 0; }
  explicit operator bool() const { return ok(); }
  T& value() & { return std::get<0>(v_); }
  const T& value() const& { return std::get<0>(v_); }
  T&& value() && { return std::get<0>(std::move(v_)); }
  const Error& error() const { return std::get<1>(v_); }

 private:
  std::variant<T, Error> v_;
};

// Result of an operation with no value.
struct Done {};
using Status = Result<Done>;
inline Status ok_status() { return Done{}; }

}  // namespace godwit
