#include "job_priority.h"

#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <cerrno>

namespace godwit {

bool lower_this_thread_priority(int increment) {
  if (increment <= 0) return true;
  // On Linux PRIO_PROCESS with a thread id sets that thread's nice value.
  const auto tid = static_cast<id_t>(::syscall(SYS_gettid));
  errno = 0;
  const int now = ::getpriority(PRIO_PROCESS, tid);
  if (now == -1 && errno != 0) return false;
  return ::setpriority(PRIO_PROCESS, tid, now + increment) == 0;
}

}  // namespace godwit
