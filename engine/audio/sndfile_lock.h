// libsndfile keeps the error of a failed sf_open (and sf_open_virtual)
// process-wide (sf_strerror(nullptr)): open and read it under this lock.
#pragma once

#include <mutex>

namespace godwit::detail {

std::mutex& sndfile_open_mutex();

}  // namespace godwit::detail
