#include "job_priority.h"

#include <sched.h>
#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <cerrno>

namespace godwit {

bool lower_this_thread_priority(int increment, bool idle_class) {
  // On Linux PRIO_PROCESS and sched_setscheduler with a thread id act on
  // that thread alone.
  const auto tid = static_cast<pid_t>(::syscall(SYS_gettid));
  bool ok = true;
  if (idle_class) {
    sched_param p{};
    p.sched_priority = 0;  // the only one SCHED_IDLE takes
    ok = ::sched_setscheduler(tid, SCHED_IDLE, &p) == 0;
  }
  if (increment <= 0) return ok;
  errno = 0;
  const int now = ::getpriority(PRIO_PROCESS, static_cast<id_t>(tid));
  if (now == -1 && errno != 0) return false;
  return ::setpriority(PRIO_PROCESS, static_cast<id_t>(tid), now + increment) == 0 && ok;
}

}  // namespace godwit
