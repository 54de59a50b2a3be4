#include "godwit/core/version.h"

#ifndef GODWIT_VERSION
#error "GODWIT_VERSION is set by engine/CMakeLists.txt"
#endif

namespace godwit {

const char* godwit_version() { return GODWIT_VERSION; }

}  // namespace godwit
