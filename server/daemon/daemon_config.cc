#include "daemon_config.h"

#include <toml++/toml.h>

#include <filesystem>

namespace godwit {

Status load_daemon_config(const std::string& path, DaemonConfig& c) {
  if (!std::filesystem::exists(path)) return Error{ErrorCode::not_found, "no such config file", path, std::nullopt};
  toml::table t;
  try {
    t = toml::parse_file(path);
  } catch (const toml::parse_error& e) {
    return Error{ErrorCode::usage,
                 std::string(e.description()) + " (line " + std::to_string(e.source().begin.line) + ")", path,
                 std::nullopt};
  }
  std::string bad;
  auto str = [&](const toml::node_view<toml::node> n, std::string& out, const char* key) {
    if (!n) return;
    if (auto v = n.value<std::string>()) out = *v;
    else bad = key;
  };
  auto num = [&](const toml::node_view<toml::node> n, auto& out, const char* key) {
    if (!n) return;
    if (auto v = n.value<double>()) out = static_cast<std::decay_t<decltype(out)>>(*v);
    else bad = key;
  };
  str(t["listen"], c.listen, "listen");
  str(t["state_dir"], c.state_dir, "state_dir");
  str(t["library"], c.library, "library");
  str(t["drop"], c.drop, "drop");
  str(t["schedules"], c.schedules, "schedules");
  str(t["time_zone"], c.time_zone, "time_zone");
  str(t["token_file"], c.token_file, "token_file");
  str(t["log_level"], c.log_level, "log_level");
  str(t["planner"], c.planner, "planner");
  num(t["workers"], c.workers, "workers");
  num(t["threads_per_job"], c.threads_per_job, "threads_per_job");
  num(t["job_nice"], c.job_nice, "job_nice");
  if (auto roots = t["roots"].as_array()) {
    c.roots.clear();
    for (auto& r : *roots)
      if (auto v = r.value<std::string>()) c.roots.push_back(*v);
      else bad = "roots";
  }
  num(t["limits"]["max_line_bytes"], c.max_line_bytes, "limits.max_line_bytes");
  num(t["limits"]["max_connections"], c.max_connections, "limits.max_connections");
  num(t["limits"]["idle_timeout_s"], c.idle_timeout_s, "limits.idle_timeout_s");
  num(t["limits"]["read_timeout_s"], c.read_timeout_s, "limits.read_timeout_s");
  num(t["limits"]["max_queued"], c.max_queued, "limits.max_queued");
  num(t["limits"]["max_connections_per_address"], c.max_connections_per_address, "limits.max_connections_per_address");
  num(t["limits"]["watch_heartbeat_s"], c.watch_heartbeat_s, "limits.watch_heartbeat_s");
  num(t["limits"]["max_reply_bytes"], c.max_reply_bytes, "limits.max_reply_bytes");
  num(t["limits"]["max_finished_jobs"], c.max_finished_jobs, "limits.max_finished_jobs");
  num(t["limits"]["max_templates"], c.max_templates, "limits.max_templates");
  num(t["limits"]["max_recordings"], c.max_recordings, "limits.max_recordings");
  num(t["limits"]["max_recording_h"], c.max_recording_h, "limits.max_recording_h");
  num(t["limits"]["max_inline_mb"], c.max_inline_mb, "limits.max_inline_mb");
  num(t["drop_folder"]["poll_s"], c.drop_poll_s, "drop_folder.poll_s");
  num(t["drop_folder"]["stable_s"], c.drop_stable_s, "drop_folder.stable_s");
  if (auto n = t["excerpts"]) {
    if (auto v = n.value<bool>()) c.excerpts = *v;
    else bad = "excerpts";
  }
  if (auto n = t["drop_folder"]["use_inotify"]) {
    if (auto v = n.value<bool>()) c.drop_inotify = *v;
    else bad = "drop_folder.use_inotify";
  }
  str(t["queue"]["url"], c.queue_url, "queue.url");
  num(t["queue"]["workers"], c.queue_workers, "queue.workers");
  num(t["queue"]["templates_per_task"], c.queue_templates_per_task, "queue.templates_per_task");
  num(t["queue"]["task_span_s"], c.queue_task_span_s, "queue.task_span_s");
  num(t["queue"]["claim_idle_s"], c.queue_claim_idle_s, "queue.claim_idle_s");
  num(t["queue"]["max_attempts"], c.queue_max_attempts, "queue.max_attempts");
  if (!bad.empty()) return Error{ErrorCode::usage, "key '" + bad + "' has the wrong type", path, std::nullopt};
  return ok_status();
}

}  // namespace godwit
