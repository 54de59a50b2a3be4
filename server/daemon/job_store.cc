// Over 400 lines: the journal is one format, its replay at open (compaction,
// orphans, torn tails, crash notes) and its appends read best side by side.
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

Result<std::unique_ptr<JobStore>> JobStore::open(const std::string& dir, size_t max_queued, size_t max_finished) {
  namespace fs = std::filesystem;
  std::error_code ec;
  fs::create_directories(fs::path(dir) / "results", ec);
  if (ec) return Error{ErrorCode::io, "cannot create the state folder: " + ec.message(), dir, std::nullopt};
  std::unique_ptr<JobStore> s(new JobStore());
  s->dir_ = dir;
  s->max_queued_ = max_queued;
  s->max_finished_ = std::max<size_t>(1, max_finished);
  const std::string journal = dir + "/journal.jsonl";
  // Left by a kill mid-write: a result, the journal's compaction, the FFT
  // cost cache (written beside the journal at exit).
  remove_stale_temporaries(dir);
  remove_stale_temporaries(dir + "/results");
  // Replay.
  std::vector<std::string> order;
  bool pruned_lines = false;
  {
    std::ifstream in(journal);
    std::string line;
    while (std::getline(in, line)) {
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
      } else if (ev == "pruned") {
        s->jobs_.erase(id);
        pruned_lines = true;
      } else if (auto it = s->jobs_.find(id); it != s->jobs_.end()) {
        if (ev == "crashed") ++it->second.crashes;
        if (auto st = job_state_from(ev)) it->second.state = *st;
        if (ev == "failed") it->second.error = j.value("error", nlohmann::json());
      }
    }
  }
  std::vector<std::string> kept;
  std::vector<std::string> crash_failed;  // failed at this open: their "failed" line is appended below
  for (const auto& id : order) {
    if (!s->jobs_.count(id)) continue;  // pruned
    kept.push_back(id);
    JobInfo& info = s->jobs_[id];
    const bool have_result = fs::exists(fs::path(dir) / "results" / (id + ".json"));
    if (info.state == JobState::done && !have_result) info.state = JobState::queued;
    // Crashed the daemon each time it ran: failed, not run into a crash loop.
    if ((info.state == JobState::queued || info.state == JobState::running) &&
        info.crashes >= CrashRecord::kMaxCrashes) {
      info.state = JobState::failed;
      info.error = {{"code", std::string(wire_name(ErrorCode::internal))},
                    {"message", "the daemon crashed " + std::to_string(info.crashes) +
                                    " times while running this job; it is not run again (internal error, please "
                                    "report it)"}};
      crash_failed.push_back(id);
    }
    if (info.state == JobState::queued || info.state == JobState::running) {
      info.state = JobState::queued;
      info.progress = 0;
      s->queue_.push_back(id);
    }
    if (info.state == JobState::done) info.progress = 1;
    if (info.state != JobState::queued) s->finished_.push_back(id);
  }
  // Beyond max_finished, the oldest finished jobs are forgotten, and the
  // journal is rewritten with the rest, as it is when it names jobs pruned
  // while running (else it would grow forever). A rewrite that fails (a
  // full disk) leaves the journal as it was, which replays to the same
  // jobs: it is tried again at the next open.
  std::set<std::string> on_disk;  // the jobs the journal on disk names, once this is done
  for (const auto& [id, info] : s->jobs_) on_disk.insert(id);
  if (s->finished_.size() > s->max_finished_ || pruned_lines) {
    std::set<std::string> gone;
    while (s->finished_.size() > s->max_finished_) {
      gone.insert(s->finished_.front());
      s->forget(s->finished_.front());
    }
    std::string text;
    for (const auto& id : kept) {
      if (gone.count(id)) continue;
      const JobInfo& info = s->jobs_[id];
      text += json_text({{"event", "submit"}, {"job", id}, {"spec", info.spec}, {"submitted", info.submitted}}) + "\n";
      if (info.state == JobState::queued) {
        for (int k = 0; k < info.crashes; ++k) text += json_text({{"event", "crashed"}, {"job", id}}) + "\n";
        continue;
      }
      nlohmann::json end{{"event", job_state_name(info.state)}, {"job", id}};
      if (info.state == JobState::failed) end["error"] = info.error;
      text += json_text(end) + "\n";
    }
    if (write_file_atomically(journal, text)) {
      for (const auto& id : gone) on_disk.erase(id);
      crash_failed.clear();  // the rewrite holds their "failed" lines
    }
  }
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
    std::ifstream in(journal, std::ios::binary);
    std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const size_t keep = text.rfind('\n') == std::string::npos ? 0 : text.rfind('\n') + 1;
    if (keep < text.size() && ::ftruncate(s->journal_fd_, static_cast<off_t>(keep)) != 0)
      s->torn_ = true;  // then the next append starts with a newline
  }
  for (const auto& id : crash_failed) {
    std::lock_guard jl(s->journal_mu_);
    (void)s->append({{"event", "failed"}, {"job", id}, {"error", s->jobs_[id].error}});  // lost: failed again next open
  }
  s->crash_.set_journal_fd(s->journal_fd_);
  return s;
}

JobStore::~JobStore() {
  crash_.set_journal_fd(-1);
  if (journal_fd_ >= 0) ::close(journal_fd_);
}

void JobStore::forget(const std::string& id) {
  jobs_.erase(id);
  cancel_.erase(id);
  last_emit_.erase(id);
  finished_.pop_front();
}

Status JobStore::append(const nlohmann::json& line) {
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
  if (::fsync(journal_fd_) != 0)
    return Error{ErrorCode::io, std::string("journal fsync failed: ") + std::strerror(errno), dir_, std::nullopt};
  return ok_status();
}

Result<std::string> JobStore::submit(const nlohmann::json& spec) {
  const std::string id = new_job_id();
  {
    std::lock_guard lock(mu_);
    if (stopping_) return Error{ErrorCode::unavailable, "the daemon is shutting down", "", std::nullopt};
    if (queue_.size() >= max_queued_)
      return Error{ErrorCode::busy, "the queue is full (" + std::to_string(max_queued_) + " jobs); retry later", "",
                   std::nullopt};
  }
  JobInfo info;
  info.id = id;
  info.spec = spec;
  info.submitted = utc_now();
  {
    std::lock_guard jl(journal_mu_);
    if (auto st = append({{"event", "submit"}, {"job", id}, {"spec", spec}, {"submitted", info.submitted}}); !st)
      return st.error();
  }
  {
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
  {
    std::lock_guard jl(journal_mu_);
    (void)append(line);  // a lost terminal line only means the job runs again after a restart
  }
  {
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
    if (s == JobState::done || s == JobState::failed || s == JobState::cancelled) finished_.push_back(id);
  }
  nlohmann::json ev{{"event", "state"}, {"job", id}, {"state", job_state_name(s)}};
  emit(ev);
  prune();
}

void JobStore::prune() {
  std::vector<std::string> gone;
  {
    std::lock_guard lock(mu_);
    while (finished_.size() > max_finished_) {
      gone.push_back(finished_.front());
      forget(finished_.front());
    }
  }
  if (gone.empty()) return;
  {
    std::lock_guard jl(journal_mu_);
    for (const auto& id : gone) (void)append({{"event", "pruned"}, {"job", id}});  // lost: pruned again at start
  }
  // After the journal says so: a result removed first would make a kill
  // in between run its job again.
  for (const auto& id : gone) {
    std::error_code ec;
    std::filesystem::remove(dir_ + "/results/" + id + ".json", ec);
    std::filesystem::remove_all(files_dir(id), ec);
  }
}

void JobStore::finish(const std::string& id, const nlohmann::json& result) {
  if (auto st = write_file_atomically(dir_ + "/results/" + id + ".json", json_text(result) + "\n"); !st) {
    fail(id, {{"code", "io"}, {"message", st.error().describe()}});
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
