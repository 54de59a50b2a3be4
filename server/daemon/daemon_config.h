// godwitd's configuration: a TOML file (config/godwitd.toml documents every
// key), each key overridable on the command line.
#pragma once

#include <string>
#include <vector>

#include "godwit/core/error.h"
#include "host_port.h"  // split_host_port, for the listen address
#include "station_config.h"

namespace godwit {

struct DaemonConfig {
  std::string listen = "127.0.0.1:7878";
  std::string state_dir = "/var/lib/godwit";
  std::vector<std::string> roots;
  std::string library;
  std::string drop;
  std::string schedules;  // planned logs for the drop folder's daily reconciliation
  // The station's IANA time zone (Europe/Berlin): planned times written with
  // a UTC offset are converted to its local time, for the drop folder's
  // reconciliations and reconcile jobs that give no time_zone. Empty: none.
  std::string time_zone;
  // The top-level station (drop, schedules above): its name in the store
  // of record; empty: named by its recordings' file names.
  std::string station;
  std::string name_pattern = kDefaultNamePattern;  // a recording's start time in its name
  // [[stations]], as written (station_config.h); empty: the top-level one.
  std::vector<StationConfig> stations;
  size_t workers = 1;
  int threads_per_job = 1;
  int job_nice = 10;  // jobs' threads run this much nicer than requests' (job_priority.h)
  // Jobs' threads and those parsing long request lines in Linux's idle
  // class: they take only CPU time the I/O and request threads leave (and,
  // Linux weighing a group's share of a core by its threads' load, that
  // other programs leave: for a machine that serves godwitd alone).
  bool idle_class = false;
  std::string token_file;
  std::string log_level = "info";
  std::string planner = "measure";
  // limits
  size_t max_line_bytes = 24u << 20;  // room for one inline spot of max_inline_mb in base64
  size_t max_connections = 256;
  size_t max_connections_per_address = 64;
  double idle_timeout_s = 300;
  double read_timeout_s = 10;
  double watch_heartbeat_s = 30;
  size_t max_reply_bytes = 32u << 20;
  size_t max_queued = 100;
  size_t max_finished_jobs = 10000;
  size_t max_templates = 500;
  size_t max_recordings = 1000;
  double max_recording_h = 168;
  size_t max_inline_mb = 16;
  // drop folder
  double drop_poll_s = 2;
  double drop_stable_s = 5;
  bool drop_inotify = true;
  // Reconcile jobs (and the drop folder's day) write excerpts to listen to
  // beside their HTML page (report_files.h).
  bool excerpts = true;
  // queue mode (task_queue.h): empty url = off
  std::string queue_url;          // redis://HOST:PORT/STREAM
  size_t queue_workers = 1;       // tasks this daemon runs at once
  size_t queue_templates_per_task = 25;
  double queue_task_span_s = 3600;  // a stream over 1.5 of these is split
  double queue_claim_idle_s = 30;
  int queue_max_attempts = 3;
  // [retention]: the store of record's detections and placements of days
  // older than detections_days (a station may say otherwise), and finished
  // jobs older than finished_jobs_days (besides limits.max_finished_jobs),
  // are deleted every interval_h and at start. 0 days: kept for ever.
  double retention_detections_days = 400;
  double retention_finished_jobs_days = 30;
  double retention_interval_h = 6;
};

// Reads `path` over the defaults in `cfg`. Errors: not_found, usage (TOML
// syntax, a key of the wrong type, an unknown key in a [[stations]] table).
Status load_daemon_config(const std::string& path, DaemonConfig& cfg);

// The stations the daemon runs drop folders for, their keys filled from the
// top level where left out (station_config.h): [[stations]], else the
// top-level `drop` as one station, else none. Checked (check_stations).
// Errors: usage (both [[stations]] and a top-level `drop`; what
// check_stations finds).
Result<std::vector<StationConfig>> effective_stations(const DaemonConfig& cfg);

}  // namespace godwit
