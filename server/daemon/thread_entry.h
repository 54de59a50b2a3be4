// The entry of every thread godwitd starts (workers, drop folder, queue
// workers and heartbeat): runs `loop`; an exception that escapes it (units
// of work are already guarded, error_boundary.h, so this is a bug in the
// loop itself) is logged with the thread's name and aborts the process, as
// an uncaught exception would but saying why. The abort is a crash: the
// journal records it against the jobs running (job_store.h), so a job that
// keeps crashing the daemon is not re-run forever.
#pragma once

#include <functional>
#include <string>

namespace godwit {

void thread_entry(const std::string& name, const std::function<void()>& loop);

}  // namespace godwit
