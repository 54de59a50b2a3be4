#include "error_boundary.h"

#include <exception>

namespace godwit {

std::string internal_error_message(std::string_view context) {
  std::string what;
  try {
    throw;
  } catch (const std::exception& e) {
    what = e.what();
  } catch (...) {
    what = "an exception that is not a std::exception";
  }
  std::string s(context);
  if (!s.empty()) s += ": ";
  return s + "internal error (please report it): " + what;
}

}  // namespace godwit
