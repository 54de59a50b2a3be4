// Over 400 lines: the journal is one format, its replay at open (compaction,
// orphans, torn tails, crash notes), its appends and its rewrites while
// running (retention by age and count) read best side by side.
#include "job_store.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <random>
#include <set>
#include <tuple>
#include <sstream>

#include "atomic_file.h"
#include "json_text.h"
#include "wire_code.h"

namespace godwit {
namespace {

std::string utc_now() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

std::string new_job_id() {
  static std::mutex mu;
  static std::mt19937_64 rng{std::random_device{}()};
  std::lock_guard lock(mu);
  char buf[24];
  std::snprintf(buf, sizeof buf, "j%015llx", static_cast<unsigned long long>(rng() >> 4));
  return buf;
}

// A journal line, or the last of two glued together: after a write that
// failed part way (a full disk) left half a line without its newline, the
// next line was appended to it. Events start with "error" or "event" (keys
// are written sorted).
std::optional<nlohmann::json> parse_journal_line(const std::string& line) {
  for (size_t at = 0; at != std::string::npos; at = line.find("{\"e", at + 1)) {
    try {
      return nlohmann::json::parse(line.begin() + static_cast<std::ptrdiff_t>(at), line.end());
    } catch (const std::exception&) {
    }
  }
  return std::nullopt;
}

// Seconds since 1970 of an ISO 8601 UTC time as utc_now() writes it; 0
// when it is not one (such a job counts as old).
double utc_seconds(const std::string& iso) {
  std::tm tm{};
  const char* end = strptime(iso.c_str(), "%Y-%m-%dT%H:%M:%SZ", &tm);
  if (!end || *end) return 0;
  return static_cast<double>(timegm(&tm));
}

double now_utc_s() { return static_cast<double>(std::time(nullptr)); }

double now_s() {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

}  // namespace

const char* job_state_name(JobState s) {
  switch (s) {
    case JobState::queued: return "queued";
    case JobState::running: return "running";
    case JobState::done: return "done";
    case JobState::failed: return "failed";
    case JobState::cancelled: return "cancelled";
  }
  return "queued";
}

std::optional<JobState> job_state_from(const std::string& n) {
  for (JobState s : {JobState::queued, JobState::running, JobState::done, JobState::failed, JobState::cancelled})
    if (n == job_state_name(s)) return s;
  return std::nullopt;
}

Result<std::unique_ptr<JobStore>> JobStore::open(const std::string& dir, size_t max_queued, size_t max_finished,
                                                double max_finished_age_s) {
  namespace fs = std::filesystem;
  std::error_code ec;
  fs::create_directories(fs::path(dir) / "results", ec);
  if (ec) return Error{ErrorCode::io, "cannot create the state folder: " + ec.message(), dir, std::nullopt};
  std::unique_ptr<JobStore> s(new JobStore());
  s->dir_ = dir;
  s->max_queued_ = max_queued;
  s->max_finished_ = std::max<size_t>(1, max_finished);
  s->max_finished_age_s_ = max_finished_age_s;
  const std::string journal = dir + "/journal.jsonl";
  // Left by a kill mid-write: a result, the journal's compaction, the FFT
  // cost cache (written beside the journal at exit).
  remove_stale_temporaries(dir);
  remove_stale_temporaries(dir + "/results");
  // Replay.
  std::vector<std::string> order;
  bool pruned_lines = false;
  size_t lines_read = 0;
  {
    std::ifstream in(journal);
    std::string line;
    while (std::getline(in, line)) {
      ++lines_read;
      const auto parsed = parse_journal_line(line);
      if (!parsed || !parsed->is_object()) continue;  // torn: never acknowledged
      const nlohmann::json& j = *parsed;
      const std::string ev = j.value("event", ""), id = j.value("job", "");
      if (id.empty()) continue;
      if (ev == "submit") {
        JobInfo info;
        info.id = id;
        info.spec = j.value("spec", nlohmann::json::object());
        info.submitted = j.value("submitted", "");
        if (!s->jobs_.count(id)) order.push_back(id);
        s->jobs_[id] = info;
      } else if (ev == "finished") {  // a finished job as a rewrite keeps it
        const auto st = job_state_from(j.value("state", ""));
        if (!st || *st == JobState::queued || *st == JobState::running) continue;
        JobInfo info;
        info.id = id;
        info.state = *st;
        info.spec = {{"kind", j.value("kind", "")}};
        info.submitted = j.value("submitted", "");
        info.finished = j.value("finished", info.submitted);
        info.error = j.value("error", nlohmann::json());
        if (!s->jobs_.count(id)) order.push_back(id);
        s->jobs_[id] = info;
      } else if (ev == "pruned") {
        s->jobs_.erase(id);
        pruned_lines = true;
      } else if (auto it = s->jobs_.find(id); it != s->jobs_.end()) {
        if (ev == "crashed") ++it->second.crashes;
        if (auto st = job_state_from(ev)) {
          it->second.state = *st;
          it->second.finished = j.value("finished", it->second.submitted);  // older lines: no time
          // Its spec let go at once, so a long journal never holds every
          // spec at the same time; but a done job whose result is missing
          // keeps it, to run again (below).
          if (*st != JobState::done || fs::exists(fs::path(dir) / "results" / (id + ".json")))
            it->second.spec = {{"kind", it->second.spec.value("kind", "")}};
        }
        if (ev == "failed") it->second.error = j.value("error", nlohmann::json());
      }
    }
  }
  std::vector<std::string> crash_failed;  // failed at this open: their "failed" line is appended below
  for (const auto& id : order) {
    if (!s->jobs_.count(id)) continue;  // pruned
    JobInfo& info = s->jobs_[id];
    const bool have_result = fs::exists(fs::path(dir) / "results" / (id + ".json"));
    if (info.state == JobState::done && !have_result) {
      if (info.spec.size() > 1) {
        info.state = JobState::queued;  // run again
      } else {  // kept as one line: nothing left to run it from
        info.state = JobState::failed;
        info.error = {{"code", std::string(wire_code_name(ErrorCode::io))},
                      {"message", "the job's result file is missing from the state folder"}};
        crash_failed.push_back(id);
      }
    }
    // Crashed the daemon each time it ran: failed, not run into a crash loop.
    if ((info.state == JobState::queued || info.state == JobState::running) &&
        info.crashes >= CrashRecord::kMaxCrashes) {
      info.state = JobState::failed;
      info.error = {{"code", std::string(wire_code_name(ErrorCode::internal))},
                    {"message", "the daemon crashed " + std::to_string(info.crashes) +
                                    " times while running this job; it is not run again (internal error, please "
                                    "report it)"}};
      info.finished = utc_now();
      crash_failed.push_back(id);
    }
    if (info.state == JobState::queued || info.state == JobState::running) {
      info.state = JobState::queued;
      info.progress = 0;
      s->queue_.push_back(id);
    }
    if (info.state == JobState::done) info.progress = 1;
    if (info.state != JobState::queued) {
      info.spec = {{"kind", info.spec.value("kind", "")}};  // a finished job's spec is not kept
      s->finished_.push_back(id);
    }
  }
  // Beyond max_finished, the oldest finished jobs are forgotten, and so are
  // those older than max_finished_age_s; the journal is rewritten with the
  // rest, as it is when it names jobs pruned while running or is twice
  // the length of a rewrite (else it would grow forever). A rewrite that
  // fails (a full disk) leaves the journal as it was, which replays to the
  // same jobs: it is tried again at the next open.
  std::set<std::string> on_disk;  // the jobs the journal on disk names, once this is done
  for (const auto& [id, info] : s->jobs_) on_disk.insert(id);
  std::set<std::string> gone;
  for (const auto& id : s->finished_)
    if (s->max_finished_age_s_ > 0 &&
        utc_seconds(s->jobs_[id].finished) < now_utc_s() - s->max_finished_age_s_)
      gone.insert(id);
  for (auto it = s->finished_.begin(); s->finished_.size() - gone.size() > s->max_finished_ && it != s->finished_.end();
       ++it)
    gone.insert(*it);
  s->forget(gone);
  size_t live_lines = 0;
  const std::string compacted = s->journal_text(live_lines);
  if (!gone.empty() || pruned_lines || lines_read > 2 * live_lines + 64) {
    if (write_file_atomically(journal, compacted)) {
      for (const auto& id : gone) on_disk.erase(id);
      crash_failed.clear();  // the rewrite holds their "failed" lines
      lines_read = live_lines;
    }
  }
  s->journal_lines_ = lines_read;
  // Results (and report folders) of jobs the journal no longer names
  // (pruned; a kill between a "pruned" line and the removal of its result)
  // are removed. A result stays while its job is in the journal: else the
  // job would run again.
  std::vector<fs::path> orphans;
  for (fs::directory_iterator it(fs::path(dir) / "results", ec), end; !ec && it != end; it.increment(ec)) {
    const fs::path p = it->path();
    const std::string name = p.filename().string();
    if (name.empty() || name[0] == '.') continue;  // temporaries: removed above, or by the job that writes them
    std::error_code de;
    const bool result = p.extension() == ".json", folder = it->is_directory(de);
    if ((result && !on_disk.count(p.stem().string())) || (folder && !on_disk.count(name))) orphans.push_back(p);
  }
  for (const auto& p : orphans) {
    std::error_code rc;
    fs::remove_all(p, rc);
  }
  s->journal_fd_ = ::open(journal.c_str(), O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
  if (s->journal_fd_ < 0)
    return Error{ErrorCode::io, std::string("cannot open the journal: ") + std::strerror(errno), journal, std::nullopt};
  // A torn tail (a crash or a full disk mid-append; never acknowledged) is
  // cut off, so the next line starts on a line of its own.
  {
    // Read backwards from the end in blocks: the journal is never held whole.
    std::ifstream in(journal, std::ios::binary | std::ios::ate);
    const auto size = static_cast<size_t>(std::max<std::streamoff>(0, in.tellg()));
    size_t keep = 0;
    std::string block;
    for (size_t end = size; end > 0;) {
      const size_t from = end > 65536 ? end - 65536 : 0;
      block.resize(end - from);
      in.seekg(static_cast<std::streamoff>(from));
      in.read(block.data(), static_cast<std::streamsize>(block.size()));
      if (const size_t nl = block.rfind('\n'); nl != std::string::npos) {
        keep = from + nl + 1;
        break;
      }
      end = from;
    }
    if (keep < size && ::ftruncate(s->journal_fd_, static_cast<off_t>(keep)) != 0)
      s->torn_ = true;  // then the next append starts with a newline
  }
  for (const auto& id : crash_failed) {
    std::lock_guard jl(s->journal_mu_);
    const JobInfo& info = s->jobs_[id];
    (void)s->append({{"event", "failed"}, {"job", id}, {"error", info.error}, {"finished", info.finished}});
    // lost: failed again next open
  }
  s->crash_.set_journal_fd(s->journal_fd_);
  return s;
}

std::string JobStore::journal_text(size_t& lines) const {
  std::string text;
  lines = 0;
  for (const auto& id : finished_) {
    const JobInfo& info = jobs_.at(id);
    nlohmann::json line{{"event", "finished"},           {"job", id},
                        {"state", job_state_name(info.state)}, {"kind", info.spec.value("kind", "")},
                        {"submitted", info.submitted},   {"finished", info.finished}};
    if (!info.error.is_null()) line["error"] = info.error;
    text += json_text(line) + "\n";
    ++lines;
  }
  auto unfinished = [&](const JobInfo& info) {
    text += json_text({{"event", "submit"}, {"job", info.id}, {"spec", info.spec}, {"submitted", info.submitted}}) + "\n";
    ++lines;
    for (int k = 0; k < info.crashes; ++k) {
      text += json_text({{"event", "crashed"}, {"job", info.id}}) + "\n";
      ++lines;
    }
  };
  for (const auto& [id, info] : jobs_)
    if (info.state == JobState::running) unfinished(info);
  for (const auto& id : queue_)
    if (auto it = jobs_.find(id); it != jobs_.end() && it->second.state == JobState::queued) unfinished(it->second);
  return text;
}

Status JobStore::reopen_journal() {
  const std::string journal = dir_ + "/journal.jsonl";
  const int fd = ::open(journal.c_str(), O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
  if (fd < 0)
    return Error{ErrorCode::io, std::string("cannot open the journal: ") + std::strerror(errno), journal, std::nullopt};
  crash_.set_journal_fd(fd);  // before the old one closes: a crash note never goes to a closed fd
  if (journal_fd_ >= 0) ::close(journal_fd_);
  journal_fd_ = fd;
  torn_ = false;
  return ok_status();
}

Status JobStore::compact_locked() {
  std::string text;
  size_t lines = 0;
  {
    std::lock_guard lock(mu_);
    text = journal_text(lines);
  }
  if (auto st = write_file_atomically(dir_ + "/journal.jsonl", text); !st) return st;
  journal_lines_ = lines;
  // Appends go to the new file from here; should it not open, they fail
  // (a submit is refused, not lost) until it does (append() retries).
  return reopen_journal();
}

size_t JobStore::journal_lines() const {
  std::lock_guard jl(journal_mu_);
  return journal_lines_;
}

JobStore::~JobStore() {
  crash_.set_journal_fd(-1);
  if (journal_fd_ >= 0) ::close(journal_fd_);
}

void JobStore::forget(const std::set<std::string>& ids) {
  if (ids.empty()) return;
  for (const auto& id : ids) {
    jobs_.erase(id);
    cancel_.erase(id);
    last_emit_.erase(id);
  }
  finished_.erase(std::remove_if(finished_.begin(), finished_.end(), [&](const std::string& id) { return ids.count(id) > 0; }),
                  finished_.end());
}

Status JobStore::append(const nlohmann::json& line) {
  if (journal_fd_ < 0)  // a compaction could not open the new journal: try again
    if (auto st = reopen_journal(); !st) return st;
  std::string text = torn_ ? "\n" : "";
  text += json_text(line);
  text += '\n';
  struct stat st {};
  const off_t before = ::fstat(journal_fd_, &st) == 0 ? st.st_size : -1;
  size_t done = 0;
  while (done < text.size()) {
    const ssize_t n = ::write(journal_fd_, text.data() + done, text.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      const std::string why = std::strerror(errno);
      // Part of the line may be written (a full disk): cut it off, or, if
      // that fails too, start the next line on a line of its own.
      if (done > 0 && (before < 0 || ::ftruncate(journal_fd_, before) != 0)) torn_ = true;
      return Error{ErrorCode::io, "journal write failed: " + why, dir_, std::nullopt};
    }
    done += static_cast<size_t>(n);
  }
  torn_ = false;
  ++journal_lines_;
  if (::fsync(journal_fd_) != 0)
    return Error{ErrorCode::io, std::string("journal fsync failed: ") + std::strerror(errno), dir_, std::nullopt};
  return ok_status();
}

Result<std::string> JobStore::submit(const nlohmann::json& spec) {
  const std::string id = new_job_id();
  {
    std::lock_guard lock(mu_);
    if (stopping_) return Error{ProtocolCode::unavailable, "the daemon is shutting down", "", std::nullopt};
    if (queue_.size() >= max_queued_)
      return Error{ProtocolCode::busy, "the queue is full (" + std::to_string(max_queued_) + " jobs); retry later", "",
                   std::nullopt};
  }
  JobInfo info;
  info.id = id;
  info.spec = spec;
  info.submitted = utc_now();
  {
    // The journal and memory change together (a compaction in between
    // would write the journal without the job).
    std::lock_guard jl(journal_mu_);
    if (auto st = append({{"event", "submit"}, {"job", id}, {"spec", spec}, {"submitted", info.submitted}}); !st)
      return st.error();
    std::lock_guard lock(mu_);
    jobs_[id] = info;
  }
  // Announced before a worker can take it, so watchers see queued, then running.
  emit({{"event", "state"}, {"job", id}, {"state", "queued"}});
  {
    std::lock_guard lock(mu_);
    queue_.push_back(id);
  }
  cv_.notify_one();
  return id;
}

std::optional<JobInfo> JobStore::get(const std::string& id) const {
  std::lock_guard lock(mu_);
  auto it = jobs_.find(id);
  if (it == jobs_.end()) return std::nullopt;
  return it->second;
}

std::vector<JobInfo> JobStore::list(std::optional<JobState> state) const {
  std::lock_guard lock(mu_);
  std::vector<JobInfo> out;
  for (const auto& [id, j] : jobs_)
    if (!state || j.state == *state) out.push_back(j);
  std::sort(out.begin(), out.end(),
            [](const JobInfo& a, const JobInfo& b) { return std::tie(a.submitted, a.id) < std::tie(b.submitted, b.id); });
  return out;
}

bool JobStore::cancel(const std::string& id) {
  bool queued = false;
  {
    std::lock_guard lock(mu_);
    auto it = jobs_.find(id);
    if (it == jobs_.end()) return false;
    if (it->second.state == JobState::running) {
      cancel_[id] = true;
      return true;
    }
    if (it->second.state != JobState::queued) return false;
    queue_.erase(std::remove(queue_.begin(), queue_.end(), id), queue_.end());
    queued = true;
  }
  if (queued) mark_cancelled(id);
  return true;
}

std::string JobStore::files_dir(const std::string& id) const { return dir_ + "/results/" + id; }

std::vector<JobStore::FileEntry> JobStore::list_files(const std::string& id) const {
  namespace fs = std::filesystem;
  std::vector<FileEntry> out;
  const fs::path root = files_dir(id);
  std::error_code ec;
  if (!fs::is_directory(fs::symlink_status(root, ec))) return out;
  for (fs::recursive_directory_iterator it(root, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string leaf = it->path().filename().string();
    if (!leaf.empty() && leaf[0] == '.') {  // a folder being written, or a temporary
      if (it->is_directory(ec)) it.disable_recursion_pending();
      continue;
    }
    if (!it->is_regular_file(ec) || it->is_symlink(ec)) continue;
    out.push_back({fs::relative(it->path(), root, ec).generic_string(), it->file_size(ec)});
  }
  std::sort(out.begin(), out.end(), [](const FileEntry& a, const FileEntry& b) { return a.name < b.name; });
  return out;
}

std::optional<std::string> JobStore::read_file(const std::string& id, const std::string& name) const {
  // Only a name the listing gives: no "..", no absolute path, no link.
  const auto files = list_files(id);
  if (std::none_of(files.begin(), files.end(), [&](const FileEntry& f) { return f.name == name; })) return std::nullopt;
  std::ifstream in(files_dir(id) + "/" + name, std::ios::binary);
  if (!in) return std::nullopt;
  return std::string((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
}

std::optional<std::string> JobStore::result_text(const std::string& id) const {
  std::ifstream in(dir_ + "/results/" + id + ".json", std::ios::binary);
  if (!in) return std::nullopt;
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

std::optional<JobInfo> JobStore::take() {
  std::unique_lock lock(mu_);
  std::string id;
  for (;;) {
    cv_.wait(lock, [&] { return stopping_ || !queue_.empty(); });
    if (stopping_) return std::nullopt;
    id = queue_.front();
    queue_.pop_front();
    if (jobs_[id].state == JobState::queued) break;  // cancelled between submit and enqueue
  }
  JobInfo& j = jobs_[id];
  j.state = JobState::running;
  ++running_;
  if (auto slot = crash_.arm(id)) crash_slots_[id] = *slot;
  JobInfo copy = j;
  lock.unlock();
  emit({{"event", "state"}, {"job", id}, {"state", "running"}});
  return copy;
}

bool JobStore::cancel_requested(const std::string& id) const {
  std::lock_guard lock(mu_);
  auto it = cancel_.find(id);
  return it != cancel_.end() && it->second;
}

void JobStore::set_progress(const std::string& id, double fraction) {
  bool send = false;
  {
    std::lock_guard lock(mu_);
    auto it = jobs_.find(id);
    if (it == jobs_.end()) return;
    it->second.progress = fraction;
    const double t = now_s();
    if (t - last_emit_[id] >= 0.25) {
      last_emit_[id] = t;
      send = true;
    }
  }
  if (send) emit({{"event", "progress"}, {"job", id}, {"progress", fraction}});
}

void JobStore::set_state(const std::string& id, JobState s, const nlohmann::json& extra) {
  nlohmann::json line{{"event", job_state_name(s)}, {"job", id}};
  line.update(extra);
  const bool over = s == JobState::done || s == JobState::failed || s == JobState::cancelled;
  if (over) line["finished"] = utc_now();
  {
    // The journal and memory change together (see submit).
    std::lock_guard jl(journal_mu_);
    (void)append(line);  // a lost terminal line only means the job runs again after a restart
    std::lock_guard lock(mu_);
    JobInfo& j = jobs_[id];
    if (j.state == JobState::running && running_ > 0) --running_;
    if (auto it = crash_slots_.find(id); it != crash_slots_.end()) {
      crash_.disarm(it->second);
      crash_slots_.erase(it);
    }
    j.state = s;
    if (s == JobState::done) j.progress = 1;
    if (s == JobState::failed) j.error = extra.value("error", nlohmann::json());
    cancel_.erase(id);
    last_emit_.erase(id);
    if (over) {
      j.finished = line["finished"].get<std::string>();
      j.spec = {{"kind", j.spec.value("kind", "")}};  // a finished job's spec is not kept
      finished_.push_back(id);
    }
  }
  nlohmann::json ev{{"event", "state"}, {"job", id}, {"state", job_state_name(s)}};
  emit(ev);
  prune();
}

void JobStore::prune() {
  std::set<std::string> gone;
  {
    std::lock_guard lock(mu_);
    for (auto it = finished_.begin(); finished_.size() - gone.size() > max_finished_ && it != finished_.end(); ++it)
      gone.insert(*it);
    forget(gone);
  }
  drop_finished(gone);
}

size_t JobStore::expire(double now_utc) {
  if (max_finished_age_s_ <= 0) return 0;
  std::set<std::string> gone;
  {
    std::lock_guard lock(mu_);
    for (const auto& id : finished_)
      if (utc_seconds(jobs_[id].finished) < now_utc - max_finished_age_s_) gone.insert(id);
    forget(gone);
  }
  drop_finished(gone, !gone.empty());  // a retention pass: the journal rewritten without them at once
  return gone.size();
}

void JobStore::drop_finished(const std::set<std::string>& gone, bool compact) {
  std::lock_guard jl(journal_mu_);
  for (const auto& id : gone) (void)append({{"event", "pruned"}, {"job", id}});  // lost: pruned again at start
  // After the journal says so: a result removed first would make a kill
  // in between run its job again.
  for (const auto& id : gone) {
    std::error_code ec;
    std::filesystem::remove(dir_ + "/results/" + id + ".json", ec);
    std::filesystem::remove_all(files_dir(id), ec);
  }
  size_t live = 0;
  {
    std::lock_guard lock(mu_);
    for (const auto& [id, info] : jobs_) live += 1 + (info.state == JobState::queued || info.state == JobState::running
                                                          ? static_cast<size_t>(info.crashes)
                                                          : 0);
  }
  if (compact || journal_lines_ > 2 * live + 64) (void)compact_locked();  // failed: the old journal stays, tried again later
}

void JobStore::finish(const std::string& id, const nlohmann::json& result) {
  if (auto st = write_file_atomically(dir_ + "/results/" + id + ".json", json_text(result) + "\n"); !st) {
    fail(id, {{"code", std::string(wire_code_name(ErrorCode::io))}, {"message", st.error().describe()}});
    return;
  }
  set_state(id, JobState::done, nlohmann::json::object());
}

void JobStore::fail(const std::string& id, const nlohmann::json& error) {
  set_state(id, JobState::failed, {{"error", error}});
}

void JobStore::mark_cancelled(const std::string& id) { set_state(id, JobState::cancelled, nlohmann::json::object()); }

void JobStore::stop() {
  {
    std::lock_guard lock(mu_);
    stopping_ = true;
  }
  cv_.notify_all();
}

size_t JobStore::queued() const {
  std::lock_guard lock(mu_);
  return queue_.size();
}

size_t JobStore::running() const {
  std::lock_guard lock(mu_);
  return running_;
}

size_t JobStore::subscribe(Listener l) {
  std::lock_guard lock(listeners_mu_);
  listeners_[next_listener_] = std::move(l);
  return next_listener_++;
}

void JobStore::unsubscribe(size_t handle) {
  std::lock_guard lock(listeners_mu_);
  listeners_.erase(handle);
}

void JobStore::emit(const nlohmann::json& event) {
  std::vector<Listener> ls;
  {
    std::lock_guard lock(listeners_mu_);
    for (const auto& [h, l] : listeners_) ls.push_back(l);
  }
  for (const auto& l : ls) l(event);
}

}  // namespace godwit
