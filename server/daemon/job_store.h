// JobStore: the daemon's jobs, durable across crashes.
//
// Journal (STATE/journal.jsonl): one JSON object per line, appended and
// fsync'ed before a submit is acknowledged: {"event":"submit","job",
// "spec"}, {"event":"done"|"failed"|"cancelled","job",...}. Results
// (STATE/results/<id>.json) are written atomically (temp, fsync, rename)
// before their "done" line; a reconcile job's page and excerpts go to the
// folder STATE/results/<id>/ (files_dir) before it, and go with the job
// when it is forgotten. On open the journal is replayed: a job whose
// last event is submit (it was queued or running at a crash), or whose
// result file is missing, is queued again; the journal is compacted when
// it names pruned jobs, and results (and folders) of jobs it no longer
// names are removed. A torn line (a crash or a full disk part way through
// an append, never acknowledged) is skipped, and a line glued to it is
// still read; a torn tail is cut off at open, and an append that fails
// part way cuts off what it wrote. Temporary files left by a kill
// (results, the compaction, the FFT cost cache beside the journal) are
// removed at open. A job that crashed the daemon (crash_record.h) gets a
// "crashed" line; one that did so CrashRecord::kMaxCrashes times is failed
// at open with `internal` instead of being queued again.
//
// Thread contract: safe for concurrent use; no lock is held over an fsync
// of a result or over a job.
#pragma once

#include <condition_variable>
#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "crash_record.h"
#include "godwit/core/error.h"

namespace godwit {

enum class JobState { queued, running, done, failed, cancelled };
const char* job_state_name(JobState s);
std::optional<JobState> job_state_from(const std::string& name);

struct JobInfo {
  std::string id;
  JobState state = JobState::queued;
  double progress = 0;
  nlohmann::json spec;
  nlohmann::json error;  // null unless failed
  std::string submitted;  // ISO 8601 UTC
  std::string finished;   // ISO 8601 UTC, once done, failed or cancelled
  int crashes = 0;        // times the daemon crashed while running it ("crashed" lines)
};

class JobStore {
 public:
  // Beyond `max_finished` finished (done, failed, cancelled) jobs, the
  // oldest are forgotten with their results, as are those finished more
  // than `max_finished_age_s` ago (at open and at each expire(); <= 0:
  // no age limit): a "pruned" line in the journal, which is rewritten
  // without them (compacted) at open and, while running, once it holds
  // more than twice the lines a rewrite would (plus 64).
  //
  // A finished job is held in memory as its id, state, kind, times and
  // error only: its spec (hundreds of paths, for a long reconcile job)
  // is dropped when it finishes, and a rewritten journal keeps the same
  // one line per finished job ({"event":"finished","job","state","kind",
  // "submitted","finished","error"?}). A done job of such a line whose
  // result has gone is failed (io) at open, not run again.
  static Result<std::unique_ptr<JobStore>> open(const std::string& state_dir, size_t max_queued,
                                                size_t max_finished = 10000,
                                                double max_finished_age_s = 30 * 86400.0);
  ~JobStore();  // closes the journal
  JobStore(const JobStore&) = delete;
  JobStore& operator=(const JobStore&) = delete;

  // Errors: busy (queue full), io (journal write failed; nothing recorded).
  Result<std::string> submit(const nlohmann::json& spec);
  std::optional<JobInfo> get(const std::string& id) const;
  // By submission time, then id.
  std::vector<JobInfo> list(std::optional<JobState> state) const;
  // Queued jobs are cancelled at once; running ones when they next poll.
  // False when the job is unknown or already over.
  bool cancel(const std::string& id);
  std::optional<std::string> result_text(const std::string& id) const;
  // The folder of a job's report files beside its JSON result (a reconcile
  // job's reconcile.html and listen/*.opus).
  std::string files_dir(const std::string& id) const;
  struct FileEntry {
    std::string name;  // relative: "reconcile.html", "listen/S001_20260314T060037.250.opus"
    uintmax_t bytes = 0;
  };
  // The regular files in it and in its subfolders (not those starting with
  // '.': a folder being written), sorted by name; empty when none.
  std::vector<FileEntry> list_files(const std::string& id) const;
  // One of list_files() by its name; empty for any other name.
  std::optional<std::string> read_file(const std::string& id, const std::string& name) const;

  // Worker side. Blocks until a job is queued or stop() is called.
  std::optional<JobInfo> take();
  bool cancel_requested(const std::string& id) const;
  void set_progress(const std::string& id, double fraction);
  void finish(const std::string& id, const nlohmann::json& result);
  void fail(const std::string& id, const nlohmann::json& error);
  void mark_cancelled(const std::string& id);
  // Wakes take() callers with nothing; they return empty from then on.
  void stop();
  // From now on a fatal signal notes the running jobs in the journal
  // (crash_record.h). Once per process, by godwitd.
  void note_crashes() { crash_.install_handler(); }

  size_t queued() const;
  size_t running() const;

  // Forgets the finished jobs that finished more than max_finished_age_s
  // before `now_utc` (seconds since 1970, UTC), with their results, and
  // compacts the journal when any went. Returns how many went.
  size_t expire(double now_utc);
  // Lines in the journal now (for tests and the log).
  size_t journal_lines() const;

  // Events (state changes and throttled progress) for `watch`; called on
  // the worker's thread. Returns a handle for unsubscribe().
  using Listener = std::function<void(const nlohmann::json& event)>;
  size_t subscribe(Listener l);
  void unsubscribe(size_t handle);

 private:
  JobStore() = default;
  Status append(const nlohmann::json& line);  // REQUIRES: journal_mu_ held
  void emit(const nlohmann::json& event);
  void set_state(const std::string& id, JobState s, const nlohmann::json& extra);
  void prune();                            // beyond max_finished_
  // Drops finished jobs from memory (their result files are the caller's).
  void forget(const std::set<std::string>& ids);  // REQUIRES: mu_ held (or opening)
  // The "pruned" lines of `gone`, then their results and folders removed,
  // then the journal compacted if `compact` or worthwhile.
  void drop_finished(const std::set<std::string>& gone, bool compact = false);
  // The journal as a rewrite writes it (finished jobs first, oldest first,
  // then running and queued ones), and its line count. REQUIRES: mu_ held.
  std::string journal_text(size_t& lines) const;
  // Rewrites the journal from memory and appends to the new one. REQUIRES:
  // journal_mu_ held (and no mu_). A failed rewrite leaves the old one.
  Status compact_locked();
  Status reopen_journal();  // REQUIRES: journal_mu_ held
  std::string dir_;
  size_t max_queued_ = 0;
  size_t max_finished_ = 10000;
  double max_finished_age_s_ = 0;
  int journal_fd_ = -1;
  size_t journal_lines_ = 0;  // GUARDED_BY(journal_mu_)
  bool torn_ = false;  // GUARDED_BY(journal_mu_): the journal may end inside a line
  mutable std::mutex journal_mu_;  // serializes journal appends (held over their fsync only)
  mutable std::mutex mu_;
  std::condition_variable cv_;
  std::map<std::string, JobInfo> jobs_;             // GUARDED_BY(mu_)
  std::deque<std::string> queue_;                   // GUARDED_BY(mu_)
  std::deque<std::string> finished_;                // GUARDED_BY(mu_): oldest first
  std::map<std::string, bool> cancel_;              // GUARDED_BY(mu_)
  std::map<std::string, double> last_emit_;         // GUARDED_BY(mu_)
  bool stopping_ = false;                           // GUARDED_BY(mu_)
  size_t running_ = 0;                              // GUARDED_BY(mu_)
  mutable std::mutex listeners_mu_;
  std::map<size_t, Listener> listeners_;            // GUARDED_BY(listeners_mu_)
  size_t next_listener_ = 1;
  CrashRecord crash_;
  std::map<std::string, size_t> crash_slots_;       // GUARDED_BY(mu_): running job -> its CrashRecord slot
};

}  // namespace godwit
