// The error boundary of a unit of work (a job, a task, a request, a dropped
// file): whatever it throws, of any type, becomes an `internal` error of
// that unit, and the program carries on. Every thread of the daemon runs its
// units through guarded(); what still escapes a thread's loop is caught by
// thread_entry (daemon/thread_entry.h), logged, and ends the process.
#pragma once

#include <string>
#include <string_view>
#include <type_traits>

#include "godwit/core/error.h"

namespace godwit {

// "<context>: internal error (please report it): <what>". REQUIRES: called
// inside a catch block (it rethrows the current exception to name it).
std::string internal_error_message(std::string_view context);

// Runs `body` (returning a Result<T> or a Status) and returns its result;
// an exception it throws becomes Error{internal, internal_error_message(context)}.
template <class F>
auto guarded(std::string_view context, F&& body) -> std::invoke_result_t<F> {
  try {
    return body();
  } catch (...) {
    return Error{ErrorCode::internal, internal_error_message(context), "", std::nullopt};
  }
}

}  // namespace godwit
