// Jobs run below requests: a thread that runs jobs lowers its own CPU
// priority, so that while jobs keep every core busy the I/O and request
// threads still run as soon as a request arrives (`status` within
// milliseconds, not after the scheduler's next turn). Two ways, per
// thread and inherited by the engine threads it starts:
//   - its nice value, raised by an increment: a nicer thread gets a smaller
//     share of the CPU, but a thread waking to answer a request may still
//     wait for the nicer one's turn to end;
//   - Linux's idle class (SCHED_IDLE, sched(7)), besides: the thread takes
//     only CPU time no other thread of the daemon wants, and a waking
//     request thread takes the core from it at once. Other programs are
//     not affected: between processes (Linux groups a session's tasks for
//     the scheduler) the daemon keeps its share.
//
// Thread contract: affects the calling thread only.
#pragma once

namespace godwit {

// Raises the calling thread's nice value by `increment` (0: unchanged) and,
// with `idle_class`, moves it to SCHED_IDLE. Returns false when the system
// refused either (the thread then runs as before, or with the nice value).
bool lower_this_thread_priority(int increment, bool idle_class = false);

}  // namespace godwit
