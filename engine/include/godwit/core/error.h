// Errors as values at module edges.
//
// Callers branch on `Error::code` (a few stable codes); `message` is for
// people. Each of the engine's codes has one wire name (JSON documents), from
// the table in error.cc. The engine knows nothing of a protocol or of
// processes: the daemon's own codes (forbidden, busy, ...) and their names are
// the server's (server/common/wire_code.h), the exit codes too
// (server/common/exit_code.h).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <variant>

namespace godwit {

// What the engine itself can fail with. The enum is open (its underlying type
// is fixed): a program built on the engine may carry codes of its own in an
// Error, numbered from kFirstProgramErrorCode up (godwit's daemon protocol:
// server/common/wire_code.h). The engine never produces one, and wire_name()
// below does not name them.
enum class ErrorCode : int {
  usage,             // bad options or arguments
  not_found,         // a path does not exist
  unreadable,        // exists but cannot be opened or read (permissions, not audio)
  unsupported,       // audio in a format or layout this build cannot decode
  empty,             // decodes to no samples, or only silence where audio is required
  corrupt,           // decoding failed part way through
  io,                // an operating-system error while reading or writing
  cancelled,         // the caller asked to stop
  invalid_template,  // a master that cannot serve as a template (too short, silent)
  no_placements,     // a planned log without a single valid row (empty, header only, or every row rejected)
  internal,          // a bug: please report it. Keep it last: the codes run from 0 to it (error_test.cc)
};

// The first code a program may define beside the engine's (see ErrorCode).
inline constexpr int kFirstProgramErrorCode = 64;

struct Error {
  ErrorCode code = ErrorCode::internal;
  std::string message;
  std::string path;                // the file concerned, if any
  std::optional<double> offset_s;  // position in that file, if known

  // "path: message (at 12.345 s)" for people.
  std::string describe() const;
};

// Stable lowercase name of one of the engine's codes, used in JSON documents
// and on the wire; `internal`'s for a code the engine does not define (a
// program's: name those with the program's table).
std::string_view wire_name(ErrorCode code);
// The engine's code of a wire name; `internal` for a name it does not know.
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
