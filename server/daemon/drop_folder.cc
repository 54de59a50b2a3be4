#include "drop_folder.h"

#include <poll.h>
#include <spdlog/spdlog.h>
#include <sys/inotify.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <filesystem>
#include <set>

#include "atomic_file.h"
#include "godwit/compliance/civil_time.h"
#include "godwit/report/excerpt.h"
#include "error_boundary.h"
#include "job_priority.h"
#include "library_scan.h"
#include "json_text.h"
#include "thread_entry.h"
#include "wire_code.h"

namespace godwit {
namespace fs = std::filesystem;

namespace {

struct Seen {
  uintmax_t size = 0;
  fs::file_time_type mtime;
  std::chrono::steady_clock::time_point since;
};

}  // namespace

DropFolder::DropFolder(DropOptions options, const JobRunner& runner, JobExecutor executor)
    : o_(std::move(options)),
      who_(o_.station.empty() ? "drop folder" : "drop folder (station " + o_.station + ")"),
      runner_(runner),
      executor_(std::move(executor)) {
  if (!executor_) executor_ = local_executor(runner_);
  if (o_.library.empty()) o_.library = runner_.config().default_library;
  if (o_.time_zone.empty()) o_.time_zone = runner_.config().time_zone;
}

DropFolder::~DropFolder() { stop(); }

Status DropFolder::start() {
  std::error_code ec;
  for (const char* sub : {"incoming", "work", "results", "done", "failed"}) {
    fs::create_directories(fs::path(o_.dir) / sub, ec);
    if (ec) return Error{ErrorCode::io, "cannot create the drop folder: " + ec.message(), o_.dir, std::nullopt};
  }
  if (o_.use_inotify) {
    inotify_fd_ = inotify_init1(IN_NONBLOCK | IN_CLOEXEC);
    if (inotify_fd_ >= 0 &&
        inotify_add_watch(inotify_fd_, (fs::path(o_.dir) / "incoming").c_str(), IN_CLOSE_WRITE | IN_MOVED_TO) < 0) {
      ::close(inotify_fd_);
      inotify_fd_ = -1;
    }
    if (inotify_fd_ < 0) spdlog::warn("{}: inotify unavailable, polling every {} s", who_, o_.poll_s);
  }
  for (const char* sub : {"results", "failed"})  // left by a kill mid-write
    remove_stale_temporaries((fs::path(o_.dir) / sub).string());
  // Listed after the watch is in place, so nothing falls between the two.
  for (fs::directory_iterator it(fs::path(o_.dir) / "incoming", ec), end; !ec && it != end; it.increment(ec))
    preexisting_.insert(it->path().filename().string());
  thread_ = std::thread([this] { thread_entry(who_, [this] { loop(); }); });
  return ok_status();
}

void DropFolder::stop() {
  stop_ = true;
  if (thread_.joinable()) thread_.join();
  if (inotify_fd_ >= 0) ::close(inotify_fd_);
  inotify_fd_ = -1;
}

void DropFolder::loop() {
  (void)lower_this_thread_priority(runner_.config().job_nice, runner_.config().idle_class);  // its jobs run below requests
  const fs::path incoming = fs::path(o_.dir) / "incoming", work = fs::path(o_.dir) / "work";
  // Claimed before a crash: run again (under a name JSON can carry, for
  // files claimed before names were made so). Anything but a regular file
  // (a link, which may lead anywhere) is set aside.
  std::error_code ec;
  std::vector<std::string> left;
  for (fs::directory_iterator it(work, ec), end; !ec && it != end; it.increment(ec))
    left.push_back(it->path().filename().string());
  for (const auto& name : left) {
    if (stop_) break;
    if (auto why = not_regular(work / name)) {
      reject(work / name, *why);
      continue;
    }
    const std::string safe = escape_invalid_utf8(name);
    std::error_code rc;
    if (safe != name) fs::rename(work / name, work / safe, rc);
    if (rc) spdlog::warn("{}: cannot rename {}: {}", who_, safe, rc.message());
    else process(safe);
  }

  std::map<std::string, Seen> seen;
  // With inotify, a file is complete when it was closed after writing or
  // moved in, and has not changed since for stable_s (a writer that
  // appends in chunks closes it after each). Files there before the watch
  // began get no event; for them, and without inotify, stable_s is the rule.
  std::set<std::string> closed;
  std::set<std::string> preexisting = std::move(preexisting_);
  while (!stop_) {
    if (inotify_fd_ >= 0) {
      pollfd p{inotify_fd_, POLLIN, 0};
      if (::poll(&p, 1, static_cast<int>(std::min(o_.poll_s, 0.5) * 1000)) > 0) {
        alignas(inotify_event) char buf[8192];
        ssize_t n;
        while ((n = ::read(inotify_fd_, buf, sizeof buf)) > 0) {
          for (char* q = buf; q < buf + n;) {
            auto* ev = reinterpret_cast<inotify_event*>(q);
            if (ev->len) closed.insert(ev->name);
            q += sizeof(inotify_event) + ev->len;
          }
        }
      }
    } else {
      std::this_thread::sleep_for(std::chrono::milliseconds(static_cast<int>(o_.poll_s * 1000)));
    }
    const auto now = std::chrono::steady_clock::now();
    std::set<std::string> present;
    std::vector<std::string> ready;
    for (fs::directory_iterator it(incoming, ec), end; !ec && it != end; it.increment(ec)) {
      const std::string name = it->path().filename().string();
      if (is_temporary_name(name)) continue;
      present.insert(name);
      const auto why = not_regular(it->path());
      std::error_code se;
      const auto size = why ? 0 : it->file_size(se);
      const auto mtime = it->symlink_status(se).type() == fs::file_type::symlink ? fs::file_time_type{}
                                                                                 : it->last_write_time(se);
      auto s = seen.find(name);
      if (s == seen.end() || s->second.size != size || s->second.mtime != mtime) {
        seen[name] = {size, mtime, now};
        continue;
      }
      if (std::chrono::duration<double>(now - s->second.since).count() < o_.stable_s) continue;
      if (why) {  // a link, folder, pipe...: never processed, and not left to pile up
        reject(it->path(), *why);
        continue;
      }
      if (inotify_fd_ < 0 || preexisting.count(name) || closed.count(name)) ready.push_back(name);
    }
    for (auto it = seen.begin(); it != seen.end();) it = present.count(it->first) ? std::next(it) : seen.erase(it);
    for (auto it = closed.begin(); it != closed.end();) it = present.count(*it) ? std::next(it) : closed.erase(it);
    for (const auto& name : ready) {
      if (stop_) break;
      std::error_code rc;
      // Claimed under a name no earlier file has (its result would be
      // overwritten) that JSON can carry (bytes that are not UTF-8 as %XX).
      const std::string claimed = unused_name(escape_invalid_utf8(name));
      fs::rename(incoming / name, work / claimed, rc);  // the claim
      if (rc) {
        spdlog::warn("{}: cannot claim {}: {}", who_, claimed, rc.message());
        continue;
      }
      seen.erase(name);
      closed.erase(name);
      preexisting.erase(name);
      if (claimed != name) spdlog::info("{}: {} claimed as {} (the name was taken)", who_, name, claimed);
      process(claimed);
    }
  }
}

bool DropFolder::is_temporary_name(const std::string& name) {
  auto ends_with = [&](std::string_view suffix) {
    return name.size() >= suffix.size() && name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0;
  };
  return name.empty() || name[0] == '.' || ends_with(".part") || ends_with(".tmp") || ends_with("~");
}

std::optional<std::string> DropFolder::not_regular(const fs::path& p) {
  std::error_code ec;
  const auto st = fs::symlink_status(p, ec);
  if (ec) return "cannot be examined: " + ec.message();
  switch (st.type()) {
    case fs::file_type::regular: return std::nullopt;
    case fs::file_type::symlink: return std::string("a symbolic link (it could lead outside the allowed roots)");
    case fs::file_type::directory: return std::string("a folder");
    case fs::file_type::fifo: return std::string("a pipe");
    default: return std::string("not a regular file");
  }
}

std::string DropFolder::unused_name(const std::string& name, const fs::path& itself) const {
  const fs::path base(o_.dir);
  auto taken = [&](const std::string& n) {
    std::error_code ec;
    for (const fs::path& p : {base / "work" / n, base / "done" / n, base / "failed" / n,
                              base / "results" / (n + ".json"), base / "failed" / (n + ".error.json")})
      if (p != itself && fs::exists(fs::symlink_status(p, ec))) return true;
    return false;
  };
  if (!taken(name)) return name;
  const fs::path p(name);
  const std::string stem = p.stem().string(), ext = p.extension().string();
  for (int n = 2;; ++n) {
    const std::string candidate = stem + "-" + std::to_string(n) + ext;
    if (!taken(candidate)) return candidate;
  }
}

void DropFolder::reject(const fs::path& from, const std::string& why) {
  const fs::path base(o_.dir);
  const std::string name = unused_name(escape_invalid_utf8(from.filename().string()), from);
  std::error_code ec;
  fs::rename(from, base / "failed" / name, ec);  // the link itself, never what it leads to
  if (ec) {
    spdlog::warn("{}: {} is {}; cannot move it to failed/: {}", who_, from.filename().string(), why, ec.message());
    return;
  }
  nlohmann::json err = wire_error_to_json(Error{
      ErrorCode::unsupported, "not processed: " + why + "; the drop folder takes regular files only", "", std::nullopt});
  err["file"] = name;
  (void)write_file_atomically((base / "failed" / (name + ".error.json")).string(), json_text(err, 2) + "\n");
  spdlog::warn("{}: {} is {}: moved to failed/ unprocessed", who_, name, why);
}

void DropFolder::process(const std::string& name) {
  try {
    process_file(name);
  } catch (...) {  // the file's error boundary (error_boundary.h): it fails, the daemon carries on
    const std::string what = internal_error_message("");
    spdlog::error("{}: {} failed: {}", who_, name, what);
    const fs::path base(o_.dir);
    std::error_code ec;
    fs::rename(base / "work" / name, base / "failed" / name, ec);
    nlohmann::json err = wire_error_to_json(Error{ErrorCode::internal, what, "", std::nullopt});
    err["file"] = name;
    (void)write_file_atomically((base / "failed" / (name + ".error.json")).string(), json_text(err, 2) + "\n");
  }
}

void DropFolder::process_file(const std::string& name) {
  const fs::path base(o_.dir);
  const std::string path = (base / "work" / name).string();
  spdlog::info("{}: processing {}", who_, name);
  Result<nlohmann::json> doc = Error{ErrorCode::internal, "not run", path, std::nullopt};
  auto lib = runner_.library_files(o_.library);
  if (!lib) {
    doc = lib.error();
  } else {
    LocateSpec spec;  // the engine's search defaults
    spec.templates = lib.value();
    spec.recordings = {path};
    if (auto st = check_job_spec(spec); !st) {
      doc = st.error();
    } else {
      // The job id follows from the file: after a crash its re-run finds
      // the tasks already stored by the queue.
      const std::string id = o_.station.empty() ? "drop-" + name : "drop-" + o_.station + "-" + name;
      doc = executor_(id, job_spec_to_json(spec), [](double) {}, [this] { return stop_.load(); },
                      [&](std::string_view w) { spdlog::warn("{} {}: {}", who_, name, w); }, nullptr);
    }
  }
  std::error_code ec;
  if (!doc && doc.error().code == ErrorCode::cancelled) return;  // stays in work/ for the next start
  bool failed = !doc;
  std::string reason;
  if (doc) {
    // A recording that broke part way is a failure for the drop folder too.
    for (const auto& r : doc.value().value("recordings", nlohmann::json::array()))
      if (r.contains("error")) {
        failed = true;
        reason = r["error"].value("message", "");
      }
  }
  if (doc) {
    if (auto st = write_file_atomically((base / "results" / (name + ".json")).string(), json_text(doc.value(), 2) + "\n"); !st) {
      failed = true;
      reason = st.error().describe();
    }
  }
  if (!failed) {
    fs::rename(path, base / "done" / name, ec);
    spdlog::info("{}: {} done", who_, name);
    if (!o_.schedules.empty()) reconcile_day(name);
    return;
  }
  nlohmann::json err = wire_error_to_json(doc ? Error{ErrorCode::corrupt, reason, "", std::nullopt} : doc.error());
  err["file"] = name;
  (void)write_file_atomically((base / "failed" / (name + ".error.json")).string(), json_text(err, 2) + "\n");
  fs::rename(path, base / "failed" / name, ec);
  spdlog::warn("{}: {} failed: {}", who_, name, err.value("message", ""));
}

void DropFolder::reconcile_day(const std::string& name) {
  const auto start = time_from_name(name, o_.name_pattern);
  if (!start) {
    spdlog::warn("{}: {} has no start time in its name; not reconciled", who_, name);
    return;
  }
  const std::string day = format_iso8601_local(*start, 0).substr(0, 10);  // YYYY-MM-DD
  std::string compact = day;
  compact.erase(std::remove(compact.begin(), compact.end(), '-'), compact.end());
  std::error_code ec;
  std::string schedule;
  for (fs::directory_iterator it(o_.schedules, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string n = it->path().filename().string();
    if (it->path().extension() == ".csv" && (n.find(day) != std::string::npos || n.find(compact) != std::string::npos))
      schedule = it->path().string();
  }
  if (schedule.empty()) return;
  std::vector<std::string> recordings;
  for (fs::directory_iterator it(fs::path(o_.dir) / "done", ec), end; !ec && it != end; it.increment(ec)) {
    const auto t = time_from_name(it->path().filename().string(), o_.name_pattern);
    if (t && format_iso8601_local(*t, 0).substr(0, 10) == day) recordings.push_back(it->path().string());
  }
  std::sort(recordings.begin(), recordings.end());
  ReconcileSpec spec;
  spec.library = o_.library;
  spec.schedule = schedule;
  spec.recordings = recordings;
  spec.time_zone = o_.time_zone;
  spec.station = o_.station;
  if (o_.name_pattern != ReconcileOptions{}.name_pattern) spec.name_pattern = o_.name_pattern;
  if (auto st = check_job_spec(spec); !st) {
    spdlog::warn("{}: reconciling {} failed: {}", who_, day, st.error().describe());
    return;
  }
  // The page and its excerpts: results/<log>.reconcile.html and
  // results/<log>.listen/, remade whole each time.
  const std::string stem = fs::path(schedule).stem().string();
  ReportFiles files;
  files.dir = (fs::path(o_.dir) / "results").string();
  files.html_name = stem + ".reconcile.html";
  files.listen_folder = safe_file_name(stem, 100) + ".listen";  // a plain name in the page's links
  files.excerpts = runner_.config().excerpts;
  // In queue mode the day's search is shared out (hour x batch tasks) and
  // its reconciliation rebuilt here from the merged search.
  auto doc = executor_(
      o_.station.empty() ? "drop-day-" + day : "drop-day-" + o_.station + "-" + day, job_spec_to_json(spec), [](double) {}, [this] { return stop_.load(); },
      [&](std::string_view w) { spdlog::warn("{} {}: {}", who_, day, w); }, &files);
  if (!doc) {
    spdlog::warn("{}: reconciling {} failed: {}", who_, day, doc.error().describe());
    return;
  }
  const std::string out = (fs::path(o_.dir) / "results" / (stem + ".reconcile.json")).string();
  if (auto st = write_file_atomically(out, json_text(doc.value(), 2) + "\n"); !st)
    spdlog::warn("{}: {}", who_, st.error().describe());
  else
    spdlog::info("{}: {} reconciled over {} recording(s)", who_, day, recordings.size());
}

}  // namespace godwit
