// CrashRecord: the journal's note that godwitd crashed while jobs ran.
//
// A fatal signal (SIGSEGV, SIGBUS, SIGFPE, SIGILL, or SIGABRT: a failed
// assertion, an uncaught exception) appends {"event":"crashed","job":ID} to
// the journal for every job running at that moment, fsyncs it, and lets the
// signal do what it would have done. SIGKILL and a power loss leave no note:
// such a job runs again, as before. JobStore counts the notes when it opens
// the journal and fails a job that crashed the daemon kMaxCrashes times
// instead of running it again (a crash loop at every start).
//
// Thread contract: arm() and disarm() are safe for concurrent use; the
// handler is async-signal-safe (write, fsync, sigaction, raise only).
#pragma once

#include <array>
#include <atomic>
#include <cstddef>
#include <optional>
#include <string>

namespace godwit {

class CrashRecord {
 public:
  static constexpr size_t kSlots = 64;  // jobs noted at once: more than any daemon runs
  static constexpr int kMaxCrashes = 3;  // crashes while running a job before it is failed

  CrashRecord() = default;
  ~CrashRecord();  // no longer handled
  CrashRecord(const CrashRecord&) = delete;
  CrashRecord& operator=(const CrashRecord&) = delete;

  // The journal the notes go to (O_APPEND). -1: none.
  void set_journal_fd(int fd) { fd_.store(fd); }
  // `job` runs from now on: the slot noting it, or empty when every slot
  // is taken or the id is over 200 bytes (its crash then goes unnoted).
  std::optional<size_t> arm(const std::string& job);
  // The job of `slot` is over.
  void disarm(size_t slot);
  // Handles fatal signals for this record (one per process; the last call
  // wins). godwitd calls it; tests and fuzz targets that open stores do not.
  void install_handler();

 private:
  static void on_fatal_signal(int sig);
  void write_notes() const;  // async-signal-safe

  struct Slot {
    std::atomic<bool> taken{false};  // claimed by arm()
    std::atomic<bool> armed{false};  // `line` is complete and its job runs
    char line[256] = {};
    size_t len = 0;
  };
  std::array<Slot, kSlots> slots_;
  std::atomic<int> fd_{-1};
};

}  // namespace godwit
