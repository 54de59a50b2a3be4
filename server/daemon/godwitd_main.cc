// godwitd: the daemon. JSON Lines over TCP (PROTOCOL.md), a job journal,
// a worker pool, and the drop folder.
#include <spdlog/sinks/stdout_color_sinks.h>
#include <spdlog/spdlog.h>

#include <CLI/CLI.hpp>
#include <utility>  // before Asio: Boost 1.74 awaitable.hpp uses std::exchange without it
#include <boost/asio.hpp>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <set>
#include <sstream>

#include "cache_dir.h"
#include "daemon_config.h"
#include "dispatcher.h"
#include "distributed_jobs.h"
#include "godwit/compliance/civil_time.h"
#include "drop_folder.h"
#include "housekeeper.h"
#include "exit_code.h"
#include "job_runner.h"
#include "job_store.h"
#include "path_guard.h"
#include "queue_worker.h"
#include "record_ops.h"
#include "record_retention.h"
#include "record_store.h"
#include "server.h"
#include "worker_pool.h"
#include "json_text.h"

using namespace godwit;

namespace {

std::string read_token(const std::string& path, std::string& err) {
  if (path.empty()) return {};
  std::ifstream in(path);
  if (!in) {
    err = "cannot read the token file " + path;
    return {};
  }
  std::string t;
  std::getline(in, t);
  while (!t.empty() && (t.back() == '\r' || t.back() == ' ')) t.pop_back();
  if (t.size() < 16) err = "the token in " + path + " is shorter than 16 characters";
  return t;
}

// Inline spots saved for a submit that was never journaled (the daemon was
// killed between the two): no job will read them.
void remove_orphan_inline_spots(const JobStore& store, const std::string& inline_dir) {
  namespace fs = std::filesystem;
  std::set<std::string> used;
  for (const auto& j : store.list(std::nullopt))
    for (const auto& t : j.spec.value("templates", nlohmann::json::array()))
      if (t.is_string()) used.insert(fs::path(t.get<std::string>()).parent_path().filename().string());
  std::error_code ec;
  for (fs::directory_iterator it(inline_dir, ec), end; !ec && it != end; it.increment(ec)) {
    if (used.count(it->path().filename().string())) continue;
    std::error_code rc;
    fs::remove_all(it->path(), rc);
  }
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"godwitd: the godwit daemon (JSON Lines over TCP, drop folders)"};
  app.footer(
      "Several stations, each with its drop folder, planned logs, library, file-name pattern, time zone and "
      "retention: [[stations]] tables in the config file (config/godwitd.toml). --drop, --schedules, --station and "
      "--name-pattern set one station, as before; they cannot be combined with [[stations]]. Retention of the store "
      "of record and of finished jobs: the [retention] table (defaults: detections and placements 400 days, "
      "finished jobs 30 days and limits.max_finished_jobs 10000, applied at start and every 6 h).");
  std::string config_path;
  DaemonConfig cfg;
  app.add_option("--config,-c", config_path, "TOML configuration (see config/godwitd.toml)");
  // Overrides: parsed after the file is read.
  std::string listen, state_dir, library, drop, schedules, token_file, log_level, time_zone, station, name_pattern;
  std::vector<std::string> roots;
  size_t workers = 0;
  double stable_s = -1, poll_s = -1;
  bool no_inotify = false;
  bool no_excerpts = false;
  std::string planner;
  app.add_option("--listen", listen, "HOST:PORT to listen on (default 127.0.0.1:7878; [::1]:PORT for IPv6)");
  app.add_option("--state-dir", state_dir, "journal, results, inline spots, FFTW wisdom");
  app.add_option("--root", roots, "a folder requests may read (repeatable); paths elsewhere are forbidden");
  app.add_option("--library", library, "default library of masters (and the drop folder's)");
  app.add_option("--drop", drop, "drop folder (incoming, work, results, done, failed)");
  app.add_option("--schedules", schedules, "planned logs (<...YYYY-MM-DD...>.csv): the drop folder reconciles each day");
  app.add_option("--time-zone", time_zone,
                 "the station's IANA time zone (Europe/Berlin): planned times written with a UTC offset or Z are "
                 "converted to its local time (drop folder, and reconcile jobs that give no time_zone)");
  app.add_option("--station", station,
                 "the drop folder's station: the name the store of record files its days under (default: what the "
                 "recordings' names hold before their timestamp, else 'default')");
  app.add_option("--name-pattern", name_pattern,
                 "where a dropped recording's start time is in its name, strftime-style (%Y %m %d %H %M %S; default "
                 "%Y%m%dT%H%M%S)");
  app.add_option("--workers", workers, "jobs run at once (default 1)");
  app.add_option("--token-file", token_file, "file holding the shared token; required when listening beyond loopback");
  app.add_option("--log-level", log_level, "trace, debug, info, warn, error (default info)");
  app.add_option("--planner", planner, "FFTW planning: measure or estimate");
  app.add_option("--drop-stable-s", stable_s,
                 "a dropped file is complete when unchanged this long (with inotify: and closed after writing or "
                 "moved in; default 5)");
  app.add_option("--drop-poll-s", poll_s, "drop folder polling period (default 2)");
  app.add_flag("--no-inotify", no_inotify, "poll the drop folder instead of using inotify (network shares)");
  app.add_flag("--no-excerpts", no_excerpts,
               "reconcile jobs and the drop folder's days write no excerpts to listen to (default: they do)");
  std::string queue;
  size_t queue_workers = 0, templates_per_task = 0;
  double claim_idle_s = -1;
  int max_attempts = 0;
  app.add_option("--queue", queue,
                 "queue mode: redis://HOST:PORT/STREAM. Jobs submitted here are split into tasks on that Redis "
                 "stream, and this daemon runs tasks from it, with every other daemon on the same stream");
  app.add_option("--queue-workers", queue_workers, "tasks this daemon runs at once in queue mode (default 1)");
  app.add_option("--templates-per-task", templates_per_task, "masters per task (default 25)");
  double task_span_s = 0;
  app.add_option("--task-span-s", task_span_s,
                 "stream seconds per task: longer recordings and reconcile runs are split into spans of this "
                 "(default 3600; at least 120)");
  app.add_option("--claim-idle-s", claim_idle_s,
                 "a task whose worker went quiet this long is run by another (default 30)");
  app.add_option("--max-attempts", max_attempts, "a task failing this many times is dead-lettered (default 3)");
  CLI11_PARSE(app, argc, argv);

  auto apply_overrides = [&](DaemonConfig& c) {
    if (!listen.empty()) c.listen = listen;
    if (!state_dir.empty()) c.state_dir = state_dir;
    if (!roots.empty()) c.roots = roots;
    if (!library.empty()) c.library = library;
    if (!drop.empty()) c.drop = drop;
    if (!schedules.empty()) c.schedules = schedules;
    if (!time_zone.empty()) c.time_zone = time_zone;
    if (!station.empty()) c.station = station;
    if (!name_pattern.empty()) c.name_pattern = name_pattern;
    if (workers) c.workers = workers;
    if (!token_file.empty()) c.token_file = token_file;
    if (!log_level.empty()) c.log_level = log_level;
    if (!planner.empty()) c.planner = planner;
    if (stable_s >= 0) c.drop_stable_s = stable_s;
    if (poll_s > 0) c.drop_poll_s = poll_s;
    if (no_inotify) c.drop_inotify = false;
    if (no_excerpts) c.excerpts = false;
    if (!queue.empty()) c.queue_url = queue;
    if (queue_workers) c.queue_workers = queue_workers;
    if (templates_per_task) c.queue_templates_per_task = templates_per_task;
    if (task_span_s > 0) c.queue_task_span_s = task_span_s;
    if (claim_idle_s >= 0) c.queue_claim_idle_s = claim_idle_s;
    if (max_attempts > 0) c.queue_max_attempts = max_attempts;
  };
  if (!config_path.empty()) {
    if (auto st = load_daemon_config(config_path, cfg); !st) {
      std::cerr << "godwitd: " << st.error().describe() << "\n";
      return exit_status(ExitCode::usage);
    }
  }
  apply_overrides(cfg);
  // Logs go to stderr; stdout carries only the machine-readable first line.
  spdlog::set_default_logger(spdlog::stderr_color_mt("godwitd"));
  spdlog::set_level(spdlog::level::from_str(cfg.log_level));

  if (!cfg.time_zone.empty()) {
    if (auto tz = TimeZone::find(cfg.time_zone); !tz) {
      std::cerr << "godwitd: time_zone: " << tz.error().message << "\n";
      return exit_status(ExitCode::usage);
    }
  }
  // The stations and their folders, checked before anything starts.
  auto stations_r = effective_stations(cfg);
  if (!stations_r) {
    std::cerr << "godwitd: " << stations_r.error().message << "\n";
    return exit_status(ExitCode::usage);
  }
  const std::vector<StationConfig> stations = stations_r.value();
  for (auto [key, value] : {std::pair{"retention.detections_days", cfg.retention_detections_days},
                            std::pair{"retention.finished_jobs_days", cfg.retention_finished_jobs_days}})
    if (!(std::isfinite(value) && value >= 0)) {
      std::cerr << "godwitd: " << key << " must be a number of days, 0 or more (0: kept for ever)\n";
      return exit_status(ExitCode::usage);
    }
  if (!(std::isfinite(cfg.retention_interval_h) && cfg.retention_interval_h > 0)) {
    std::cerr << "godwitd: retention.interval_h must be a number of hours over 0\n";
    return exit_status(ExitCode::usage);
  }
  std::string host;
  unsigned short port = 0;
  if (!split_host_port(cfg.listen, host, port)) {
    std::cerr << "godwitd: --listen must be HOST:PORT, got '" << cfg.listen << "'\n";
    return exit_status(ExitCode::usage);
  }
  boost::system::error_code ec;
  const auto address = boost::asio::ip::make_address(host, ec);
  if (ec) {
    std::cerr << "godwitd: not an IP address: " << host << "\n";
    return exit_status(ExitCode::usage);
  }
  std::string token_err;
  std::string token = read_token(cfg.token_file, token_err);
  if (!token_err.empty()) {
    std::cerr << "godwitd: " << token_err << "\n";
    return exit_status(ExitCode::usage);
  }
  if (!address.is_loopback() && token.empty()) {
    std::cerr << "godwitd: listening on " << host << " (beyond loopback) needs --token-file\n";
    return exit_status(ExitCode::usage);
  }
  // The configured library is read by jobs that name none, and by the drop
  // folder, so it is always a root (its files are checked like any other).
  if (!cfg.library.empty() && !PathGuard(cfg.roots).resolve(cfg.library)) cfg.roots.push_back(cfg.library);
  for (const auto& s : stations)  // so is each station's
    if (!PathGuard(cfg.roots).resolve(s.library)) cfg.roots.push_back(s.library);

  auto store_r = JobStore::open(cfg.state_dir, cfg.max_queued, cfg.max_finished_jobs,
                                cfg.retention_finished_jobs_days * 86400);
  if (!store_r) {
    std::cerr << "godwitd: " << store_r.error().describe() << "\n";
    return exit_status(ExitCode::io);
  }
  JobStore& store = *store_r.value();
  store.note_crashes();  // a crash notes the running jobs, so none is re-run forever
  FftCache cache(cfg.state_dir, [](std::string_view s) { spdlog::warn("{}", s); });
  PathGuard guard(cfg.roots);
  RunnerConfig rc;
  rc.default_library = cfg.library;
  rc.inline_dir = cfg.state_dir + "/inline";
  rc.max_templates = cfg.max_templates;
  rc.max_recordings = cfg.max_recordings;
  rc.max_recording_s = cfg.max_recording_h * 3600;
  rc.max_inline_bytes = cfg.max_inline_mb << 20;
  rc.time_zone = cfg.time_zone;
  for (const auto& s : stations)
    if (!s.name.empty()) rc.stations.push_back(s);
  rc.threads_per_job = cfg.threads_per_job;
  rc.job_nice = cfg.job_nice;
  rc.idle_class = cfg.idle_class;
  rc.planner = cfg.planner == "estimate" ? Planner::estimate : Planner::measure;
  rc.costs = cache.load();
  rc.excerpts = cfg.excerpts;
  // STATE/store.sqlite, the store of record. Without it (a full disk, a
  // store newer than this build) the daemon still runs jobs, unrecorded.
  auto record_r = RecordStore::open(cfg.state_dir);
  if (record_r) attach_record(*record_r.value(), rc);
  else spdlog::error("the store of record is unavailable; reconciliations are not recorded: {}", record_r.error().describe());
  JobRunner runner(rc, guard);
  remove_orphan_inline_spots(store, rc.inline_dir);
  Dispatcher dispatcher(store, runner, cfg.workers);
  dispatcher.set_token(token);
  if (record_r) attach_record(*record_r.value(), dispatcher);
  else attach_record_unavailable(record_r.error(), dispatcher);

  std::unique_ptr<DistributedJobs> distributed;
  std::unique_ptr<QueueWorker> queue_worker;
  JobExecutor executor;
  if (!cfg.queue_url.empty()) {
    auto url = parse_queue_url(cfg.queue_url);
    if (!url) {
      std::cerr << "godwitd: " << url.error().describe() << "\n";
      return exit_status(ExitCode::usage);
    }
    QueueOptions qo;
    qo.claim_idle_s = cfg.queue_claim_idle_s;
    qo.max_attempts = std::max(1, cfg.queue_max_attempts);
    if (cfg.queue_task_span_s < 120) {
      std::cerr << "godwitd: queue.task_span_s must be at least 120 s (a segment reads a margin of the longest "
                   "airing on either side)\n";
      return exit_status(ExitCode::usage);
    }
    distributed = std::make_unique<DistributedJobs>(
        url.value(), qo, PlanOptions{cfg.queue_templates_per_task, cfg.queue_task_span_s}, runner);
    DistributedJobs* d = distributed.get();
    executor = [d](const std::string& id, const nlohmann::json& spec, const std::function<void(double)>& progress,
                   const std::function<bool()>& should_stop, const std::function<void(std::string_view)>& warn,
                   const ReportFiles* report) { return d->run(id, spec, progress, should_stop, warn, report); };
    dispatcher.set_cluster_info([d] { return d->cluster(); });
    queue_worker = std::make_unique<QueueWorker>(url.value(), qo, runner, cfg.queue_workers, default_consumer_name());
    queue_worker->start();
    spdlog::info("queue mode: {} ({} task worker(s), {} masters and {} s per task)", cfg.queue_url, cfg.queue_workers,
                 cfg.queue_templates_per_task, cfg.queue_task_span_s);
  }

  boost::asio::io_context io;
  std::unique_ptr<Server> server;
  ServerLimits limits{cfg.max_line_bytes, cfg.max_connections, cfg.idle_timeout_s, cfg.read_timeout_s,
                      cfg.max_connections_per_address, cfg.max_reply_bytes, cfg.watch_heartbeat_s};
  limits.idle_class = cfg.idle_class;
  try {
    server = std::make_unique<Server>(io, boost::asio::ip::tcp::endpoint(address, port), dispatcher, store, limits);
  } catch (const std::exception& e) {
    std::cerr << "godwitd: cannot listen on " << cfg.listen << ": " << e.what() << "\n";
    return exit_status(ExitCode::io);
  }
  // With the store of record, every locate and reconcile job (a client's,
  // the drop folder's hours and days) searches each piece of a recording
  // once (stored_tasks.h). In queue mode this daemon, the one the job
  // belongs to, reads the store before it enqueues the pieces not kept and
  // keeps what the workers found; the workers only search (they open no
  // store, and may have none).
  if (record_r) {
    PlanOptions plan;  // here: 25 masters per task, a long file's body in hours
    TaskRunnerMaker searcher;
    if (distributed) {
      plan = PlanOptions{cfg.queue_templates_per_task, cfg.queue_task_span_s};
      searcher = [d = distributed.get()] { return d->task_runner(); };
    }
    executor = stored_executor(*record_r.value(), runner, plan, searcher, executor);
  }
  const JobExecutor& drop_executor = executor;
  WorkerPool pool(store, runner, cfg.workers, executor);
  std::vector<std::unique_ptr<DropFolder>> droppers;
  for (const auto& st : stations) {
    DropOptions o{st.drop, cfg.drop_poll_s, cfg.drop_stable_s, cfg.drop_inotify, st.schedules, st.name_pattern,
                  st.name, st.library, st.time_zone};
    droppers.push_back(std::make_unique<DropFolder>(o, runner, drop_executor));
    if (auto r = droppers.back()->start(); !r) {
      std::cerr << "godwitd: " << r.error().describe() << "\n";
      return exit_status(ExitCode::io);
    }
    spdlog::info("station {}: drop folder {}, schedules {}, library {}, time zone {}, names {}",
                 st.name.empty() ? "(named by its files)" : st.name, st.drop, st.schedules.empty() ? "none" : st.schedules,
                 st.library, st.time_zone.empty() ? "none" : st.time_zone, st.name_pattern);
  }
  // Retention: finished jobs past their age, and the record's old days.
  std::vector<Housekeeper::Task> upkeep;
  upkeep.push_back({"retention of finished jobs", [&store, days = cfg.retention_finished_jobs_days] {
                      const size_t before = store.journal_lines();
                      const size_t n = store.expire(static_cast<double>(std::time(nullptr)));
                      if (n)
                        spdlog::info("retention: {} finished job(s) older than {} days forgotten with their results "
                                     "(journal {} -> {} lines)",
                                     n, days, before, store.journal_lines());
                    }});
  if (record_r) {
    RetentionPolicy policy;
    policy.days = cfg.retention_detections_days;
    for (const auto& s : stations)
      if (s.retention_days && !s.name.empty()) policy.station_days[s.name] = *s.retention_days;
    upkeep.push_back({"retention of the record", [rec = record_r.value().get(), policy] {
                        auto counts = apply_retention(*rec, policy, static_cast<int64_t>(std::time(nullptr)));
                        if (!counts) {
                          spdlog::error("retention: the store of record was not pruned: {}", counts.error().describe());
                          return;
                        }
                        for (const auto& c : counts.value())
                          if (c.total())
                            spdlog::info("retention: station {}: deleted the days before {}: {} detection(s), {} "
                                         "placement(s), {} recording(s), {} search(es), {} job(s) in {:.2f} s",
                                         c.station, c.cut, c.detections, c.placements, c.recordings, c.searches,
                                         c.jobs, c.seconds);
                        auto kept = prune_kept_results(*rec, policy.unnamed_results_days,
                                                       static_cast<int64_t>(std::time(nullptr)));
                        if (!kept)
                          spdlog::error("retention: kept search results were not pruned: {}", kept.error().describe());
                        else if (kept.value().total())
                          spdlog::info("retention: deleted {} kept search result(s) of recordings the record no "
                                       "longer names ({} file link(s)) and {} digest(s) of files gone",
                                       kept.value().results, kept.value().result_files, kept.value().digests);
                      }});
  }
  Housekeeper housekeeper(std::move(upkeep), cfg.retention_interval_h * 3600);
  housekeeper.start();
  // Machine-readable first line for supervisors and tests.
  std::cout << json_text(nlohmann::json{{"listening", host}, {"port", server->port()}}) << std::endl;
  spdlog::info("godwitd listening on {}:{} (state {}, {} worker(s), {} root(s))", host, server->port(), cfg.state_dir,
               cfg.workers, cfg.roots.size());

  boost::asio::signal_set signals(io, SIGTERM, SIGINT, SIGHUP);
  std::function<void(const boost::system::error_code&, int)> on_signal = [&](const boost::system::error_code& e,
                                                                            int sig) {
    if (e) return;
    if (sig == SIGHUP) {
      DaemonConfig fresh;
      if (!config_path.empty()) {
        if (auto st = load_daemon_config(config_path, fresh); !st) {
          spdlog::error("reload failed, keeping the old config: {}", st.error().describe());
          signals.async_wait(on_signal);
          return;
        }
      }
      apply_overrides(fresh);
      std::string err;
      const std::string t = read_token(fresh.token_file, err);
      if (err.empty()) dispatcher.set_token(t);
      spdlog::set_level(spdlog::level::from_str(fresh.log_level));
      spdlog::info("configuration reloaded (token, log level; the library is read afresh for every job)");
      signals.async_wait(on_signal);
      return;
    }
    spdlog::info("draining: no new connections or jobs; running jobs finish");
    server->stop_accepting();
    io.stop();
  };
  signals.async_wait(on_signal);
  io.run();
  housekeeper.stop();
  for (auto& d : droppers) d->stop();
  pool.drain();
  if (queue_worker) queue_worker->stop();
  cache.save(runner.costs());
  spdlog::info("godwitd stopped");
  return 0;
}
