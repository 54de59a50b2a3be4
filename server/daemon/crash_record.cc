#include "crash_record.h"

#include <signal.h>
#include <unistd.h>

#include <cstring>

namespace godwit {
namespace {

std::atomic<const CrashRecord*> g_record{nullptr};
constexpr int kFatalSignals[] = {SIGSEGV, SIGBUS, SIGFPE, SIGILL, SIGABRT};

}  // namespace

CrashRecord::~CrashRecord() {
  fd_.store(-1);
  const CrashRecord* self = this;
  g_record.compare_exchange_strong(self, nullptr);
}

std::optional<size_t> CrashRecord::arm(const std::string& job) {
  // Keys are written sorted, as every journal line ("event" first).
  const std::string line = "\n{\"event\":\"crashed\",\"job\":\"" + job + "\"}\n";
  if (job.size() > 200 || job.find_first_of("\"\\") != std::string::npos) return std::nullopt;
  for (size_t i = 0; i < kSlots; ++i) {
    bool expected = false;
    if (!slots_[i].taken.compare_exchange_strong(expected, true)) continue;
    std::memcpy(slots_[i].line, line.data(), line.size());
    slots_[i].len = line.size();
    slots_[i].armed.store(true);
    return i;
  }
  return std::nullopt;
}

void CrashRecord::disarm(size_t slot) {
  if (slot >= kSlots) return;
  slots_[slot].armed.store(false);
  slots_[slot].taken.store(false);
}

void CrashRecord::write_notes() const {
  const int fd = fd_.load();
  if (fd < 0) return;
  bool any = false;
  for (const auto& s : slots_) {
    if (!s.armed.load()) continue;
    // The leading newline ends a line another thread may have been
    // appending; the replay skips the empty line and the torn one.
    ssize_t ignored = ::write(fd, s.line, s.len);
    (void)ignored;
    any = true;
  }
  if (any) ::fsync(fd);
}

void CrashRecord::on_fatal_signal(int sig) {
  if (const CrashRecord* r = g_record.load()) r->write_notes();
  // SA_RESETHAND restored the default action: the signal now does what it
  // would have done (a core dump, the process ended by it).
  ::raise(sig);
}

void CrashRecord::install_handler() {
  g_record.store(this);
  struct sigaction sa;
  std::memset(&sa, 0, sizeof sa);
  sa.sa_handler = &CrashRecord::on_fatal_signal;
  sigemptyset(&sa.sa_mask);
  sa.sa_flags = SA_RESETHAND | SA_NODEFER;
  for (int sig : kFatalSignals) ::sigaction(sig, &sa, nullptr);
}

}  // namespace godwit
