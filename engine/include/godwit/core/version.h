// The version of this build: CMake's project version ("0.1.0").
//
// Thread contract: plain function.
#pragma once

namespace godwit {

const char* godwit_version();

}  // namespace godwit
