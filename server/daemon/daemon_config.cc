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
  str(t["station"], c.station, "station");
  str(t["name_pattern"], c.name_pattern, "name_pattern");
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
  if (auto n = t["idle_class"]) {
    if (auto v = n.value<bool>()) c.idle_class = *v;
    else bad = "idle_class";
  }
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
  num(t["retention"]["detections_days"], c.retention_detections_days, "retention.detections_days");
  num(t["retention"]["finished_jobs_days"], c.retention_finished_jobs_days, "retention.finished_jobs_days");
  num(t["retention"]["interval_h"], c.retention_interval_h, "retention.interval_h");
  if (!bad.empty()) return Error{ErrorCode::usage, "key '" + bad + "' has the wrong type", path, std::nullopt};
  if (auto n = t["stations"]) {
    auto* list = n.as_array();
    if (!list || !list->is_array_of_tables())
      return Error{ErrorCode::usage, "'stations' must be [[stations]] tables", path, std::nullopt};
    c.stations.clear();
    for (auto& node : *list) {
      const toml::table& tab = *node.as_table();
      StationConfig s;
      const std::string where = "[[stations]] #" + std::to_string(c.stations.size() + 1);
      for (const auto& [key, value] : tab) {
        const std::string k(key.str());
        std::string* field = k == "name"           ? &s.name
                             : k == "drop"         ? &s.drop
                             : k == "schedules"    ? &s.schedules
                             : k == "library"      ? &s.library
                             : k == "name_pattern" ? &s.name_pattern
                             : k == "time_zone"    ? &s.time_zone
                                                   : nullptr;
        if (field) {
          if (auto v = value.value<std::string>()) *field = *v;
          else return Error{ErrorCode::usage, where + ": '" + k + "' must be a string", path, std::nullopt};
        } else if (k == "retention_days") {
          if (auto v = value.value<double>()) s.retention_days = *v;
          else return Error{ErrorCode::usage, where + ": 'retention_days' must be a number", path, std::nullopt};
        } else {
          return Error{ErrorCode::usage,
                       where + ": unknown key '" + k +
                           "' (a station has name, drop, schedules, library, name_pattern, time_zone, retention_days)",
                       path, std::nullopt};
        }
      }
      if (s.name.empty()) return Error{ErrorCode::usage, where + ": 'name' is required", path, std::nullopt};
      c.stations.push_back(std::move(s));
    }
  }
  return ok_status();
}

Result<std::vector<StationConfig>> effective_stations(const DaemonConfig& c) {
  std::vector<StationConfig> out;
  if (!c.stations.empty()) {
    if (!c.drop.empty())
      return Error{ErrorCode::usage,
                   "'drop' is set at the top level (or by --drop) and [[stations]] are configured: give each station "
                   "its drop folder in its [[stations]] table",
                   "", std::nullopt};
    if (!c.schedules.empty())
      return Error{ErrorCode::usage,
                   "'schedules' is set at the top level (or by --schedules) and [[stations]] are configured: give "
                   "each station its planned logs in its [[stations]] table",
                   "", std::nullopt};
    out = c.stations;
  } else if (!c.drop.empty()) {
    StationConfig s;
    s.name = c.station;
    s.drop = c.drop;
    s.schedules = c.schedules;
    out.push_back(s);
  }
  for (auto& s : out) {
    if (s.library.empty()) s.library = c.library;
    if (s.name_pattern.empty()) s.name_pattern = c.name_pattern;
    if (s.time_zone.empty()) s.time_zone = c.time_zone;
  }
  if (auto st = check_stations(out); !st) return st.error();
  return out;
}

}  // namespace godwit
