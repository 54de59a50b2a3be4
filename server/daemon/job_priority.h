// Jobs run below requests: a thread that runs jobs lowers its own CPU
// priority (its Linux nice value; per thread, and inherited by the engine
// threads it starts), so that while jobs keep every core busy the I/O and
// request threads still run as soon as a request arrives (`status` within
// milliseconds, not after the scheduler's next turn).
//
// Thread contract: affects the calling thread only.
#pragma once

namespace godwit {

// Raises the calling thread's nice value by `increment` (0: unchanged).
// Returns false when the system refused (the thread then runs as before).
bool lower_this_thread_priority(int increment);

}  // namespace godwit
