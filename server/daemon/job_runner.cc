#include "job_runner.h"

#include "godwit/compliance/timeline_locate.h"

#include <filesystem>
#include <set>
#include <random>

#include "atomic_file.h"
#include "json_text.h"
#include "base64.h"
#include "godwit/report/html_report.h"
#include "godwit/search/job.h"
#include "godwit/report/locate_report.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/report/reconcile_report.h"
#include "library_scan.h"
#include "repair_report.h"
#include "reconcile_inputs.h"
#include "job_spec.h"
#include "segment_task.h"
#include "wire_code.h"

namespace godwit {
namespace {

Error bad(const std::string& msg) { return Error{ProtocolCode::bad_request, msg, "", std::nullopt}; }

Result<std::string> guarded(const PathGuard& g, const nlohmann::json& v, const char* field) {
  if (!v.is_string()) return bad(std::string("'") + field + "' must be a string path");
  auto r = g.resolve(v.get<std::string>());
  if (!r) return Error{ProtocolCode::forbidden, "path outside the allowed roots: " + v.get<std::string>(), "", std::nullopt};
  return *r;
}

// Over `max_count` paths the list is refused before any is resolved: each
// costs system calls (and a recording an open), and a 24 MiB request line
// holds hundreds of thousands.
Result<std::vector<std::string>> guarded_list(const PathGuard& g, const nlohmann::json& job, const char* field,
                                              bool required, size_t max_count) {
  std::vector<std::string> out;
  if (!job.contains(field)) {
    if (required) return bad(std::string("'") + field + "' is required");
    return out;
  }
  const auto& a = job[field];
  if (!a.is_array()) return bad(std::string("'") + field + "' must be an array of paths");
  if (a.size() > max_count)
    return Error{ProtocolCode::too_large,
                 std::to_string(a.size()) + " " + field + ", over the limit of " + std::to_string(max_count) + " per job",
                 "", std::nullopt};
  for (const auto& v : a) {
    auto p = guarded(g, v, field);
    if (!p) return p.error();
    out.push_back(p.value());
  }
  if (required && out.empty()) return bad(std::string("'") + field + "' is empty");
  return out;
}

std::string random_name() {
  std::random_device rd;
  char buf[24];
  std::snprintf(buf, sizeof buf, "%08x%08x", rd(), rd());
  return buf;
}

// Every file must resolve under a root, as the paths a request names do:
// a symlink in a permitted library may lead anywhere.
Status all_under_roots(const PathGuard& g, const std::vector<std::string>& files) {
  for (const auto& f : files)
    if (!g.resolve(f))
      return Error{ProtocolCode::forbidden, "library file leads outside the allowed roots: " + f, "", std::nullopt};
  return ok_status();
}

}  // namespace

Result<nlohmann::json> JobRunner::prepare(const nlohmann::json& job) const {
  std::string inline_dir;
  auto r = [&]() -> Result<nlohmann::json> {
    try {
      return prepare_job(job, inline_dir);
    } catch (const std::exception& e) {  // a field of the wrong JSON type
      return bad(std::string("bad request: ") + e.what());
    }
  }();
  if (!r && !inline_dir.empty()) {  // refused: its inline spots are not kept
    std::error_code ec;
    std::filesystem::remove_all(inline_dir, ec);
  }
  return r;
}

void JobRunner::discard(const nlohmann::json& prepared) const {
  if (config_.inline_dir.empty()) return;
  const std::string prefix = config_.inline_dir + "/";
  for (const auto& t : prepared.value("templates", nlohmann::json::array())) {
    if (!t.is_string() || t.get_ref<const std::string&>().compare(0, prefix.size(), prefix) != 0) continue;
    std::error_code ec;
    std::filesystem::remove_all(std::filesystem::path(t.get<std::string>()).parent_path(), ec);
  }
}

Result<nlohmann::json> JobRunner::prepare_job(const nlohmann::json& job, std::string& inline_dir) const {
  if (!job.is_object()) return bad("'job' must be an object");
  const std::string kind = job.value("kind", "");
  auto recs = guarded_list(guard_, job, "recordings", true, config_.max_recordings);
  if (!recs) return recs.error();
  double total_s = 0;
  for (const auto& r : recs.value()) {
    auto src = open_audio_file(r);
    if (!src) return src.error();
    if (auto d = src.value()->info().duration_s()) total_s += *d;
  }
  if (total_s > config_.max_recording_s)
    return Error{ProtocolCode::too_large,
                 "recordings total " + std::to_string(total_s) + " s, over the limit of " +
                     std::to_string(config_.max_recording_s) + " s per job",
                 "", std::nullopt};
  // 0 turns the speed search off.
  auto speed = number_field(job, "max_speed_change_pct", kSpeedChangePctRange, kDefaultMaxSpeedChangePct);
  if (!speed) return speed.error();
  auto tempo = number_field(job, "max_tempo_change_pct", kTempoChangePctRange, kDefaultMaxTempoChangePct);  // 0: no tempo fit
  if (!tempo) return tempo.error();

  if (kind == "reconcile") {
    // A configured station's library, zone and file-name pattern serve a
    // job that names it and not them; the store files the job under it.
    const StationConfig* station = nullptr;
    if (job.contains("station")) {
      if (!job["station"].is_string()) return bad("'station' must be a string (a station's name)");
      const std::string name = job["station"].get<std::string>();
      std::set<std::string> names;
      for (const auto& s : config_.stations) {
        if (s.name == name) station = &s;
        names.insert(s.name);
      }
      std::string known;
      for (const auto& n : names) known += (known.empty() ? "" : ", ") + n;
      if (!station)
        return bad("no station '" + name + "' is configured" + (known.empty() ? std::string() : " (" + known + ")"));
    }
    if ((!job.contains("library") && !station) || !job.contains("schedule"))
      return bad("a reconcile job needs 'library' (or a 'station') and 'schedule'");
    auto lib = guarded(guard_, job.contains("library") ? job["library"] : nlohmann::json(station->library), "library");
    if (!lib) return lib.error();
    auto sched = guarded(guard_, job["schedule"], "schedule");
    if (!sched) return sched.error();
    auto w = number_field(job, "window_s", kWindowSRange, kDefaultWindowS);
    if (!w) return w.error();
    auto files = library_files(lib.value());
    if (!files) return files.error();
    std::error_code ec;
    if (!std::filesystem::is_regular_file(sched.value(), ec))  // a FIFO would hold a worker forever
      return Error{ErrorCode::unreadable, "the planned log is not a regular file", sched.value(), std::nullopt};
    // The station's time zone: the job's, else the daemon's; a name the tz
    // database lacks refuses the job before it is queued.
    std::string zone = station ? station->time_zone : config_.time_zone;
    if (job.contains("time_zone")) {
      if (!job["time_zone"].is_string()) return bad("'time_zone' must be a string (an IANA zone name)");
      zone = job["time_zone"].get<std::string>();
    }
    if (!zone.empty()) {
      auto tz = TimeZone::find(zone);
      if (!tz) return bad(tz.error().message);
    }
    ReconcileSpec out;
    out.library = lib.value();
    out.schedule = sched.value();
    out.recordings = recs.value();
    out.window_s = w.value();
    out.time_zone = zone;
    if (station) {
      out.station = station->name;
      out.name_pattern = station->name_pattern;
    }
    if (job.contains("excerpts")) {
      if (!job["excerpts"].is_boolean()) return bad("'excerpts' must be true or false");
      out.excerpts = job["excerpts"].get<bool>();
    }
    out.search.max_speed_change_pct = speed.value();
    out.search.max_tempo_change_pct = tempo.value();
    return job_spec_to_json(out);
  }
  if (kind != "locate") return bad("'kind' must be \"locate\" or \"reconcile\"");

  auto tmpl = guarded_list(guard_, job, "templates", false, config_.max_templates);
  if (!tmpl) return tmpl.error();
  std::vector<std::string> templates = tmpl.value();
  std::string library;
  if (job.contains("library")) {
    auto lib = guarded(guard_, job["library"], "library");
    if (!lib) return lib.error();
    library = lib.value();
  }
  if (job.contains("inline")) {
    if (!job["inline"].is_array()) return bad("'inline' must be an array");
    if (job["inline"].size() > config_.max_templates)  // before any is decoded and written
      return Error{ProtocolCode::too_large,
                   std::to_string(job["inline"].size()) + " inline spots, over the limit of " +
                       std::to_string(config_.max_templates) + " templates per job",
                   "", std::nullopt};
    const std::string dir = config_.inline_dir + "/" + random_name();
    std::error_code ec;
    inline_dir = dir;
    std::filesystem::create_directories(dir, ec);
    if (ec) return Error{ErrorCode::io, "cannot store inline spots: " + ec.message(), dir, std::nullopt};
    for (const auto& s : job["inline"]) {
      if (!s.is_object() || !s.contains("id") || !s["id"].is_string() || !s.contains("audio_base64") ||
          !s["audio_base64"].is_string())
        return bad("each inline spot needs 'id' and 'audio_base64' strings");
      const std::string id = s["id"].get<std::string>();
      if (id.empty() || id.find_first_of("/\\.") != std::string::npos || id.size() > 128)
        return bad("inline spot id must be a plain name (no '/', '\\\\' or '.')");
      const std::string fmt = s.value("format", "wav");
      if (!has_audio_extension("x." + fmt)) return bad("inline spot format must be wav, flac, ogg, opus or mp3");
      const auto& b64 = s["audio_base64"].get_ref<const std::string&>();
      if (b64.size() / 4 * 3 > config_.max_inline_bytes)
        return Error{ProtocolCode::too_large, "inline spot '" + id + "' is over " +
                                               std::to_string(config_.max_inline_bytes >> 20) + " MiB", "", std::nullopt};
      auto bytes = base64_decode(b64);
      if (!bytes) return bad("inline spot '" + id + "' is not valid base64");
      const std::string path = dir + "/" + id + "." + fmt;
      if (auto st = write_file_atomically(path, *bytes); !st) return st.error();
      auto probe = open_audio_file(path);
      if (!probe) return probe.error();
      templates.push_back(path);
    }
  }
  if (templates.empty() && library.empty()) library = config_.default_library;
  if (!library.empty()) {
    auto files = library_files(library);
    if (!files) return files.error();
    templates.insert(templates.end(), files.value().begin(), files.value().end());
  }
  if (templates.empty()) return bad("no templates: give 'templates', 'library' or 'inline'");
  if (templates.size() > config_.max_templates)
    return Error{ProtocolCode::too_large, std::to_string(templates.size()) + " templates, over the limit of " +
                                           std::to_string(config_.max_templates) + " per job", "", std::nullopt};
  // The journal and the queue carry paths as JSON text, which holds only
  // UTF-8: such a file could not be found again after a restart.
  for (const auto& t : templates)
    if (!is_valid_utf8(t))
      return Error{ErrorCode::unsupported,
                   "file name is not valid UTF-8 (rename the file): " + escape_invalid_utf8(t), "", std::nullopt};
  LocateSpec out;
  out.templates = templates;
  out.recordings = recs.value();
  // Every search field stated, the defaults included (the journal keeps
  // what the job ran with).
  auto search = search_fields_from_json(job);
  if (!search) return search.error();
  out.search = search.value();
  out.search.threshold = out.search.threshold.value_or(PickerOptions{}.threshold);
  out.search.floor_k = out.search.floor_k.value_or(PickerOptions{}.floor_k);
  out.search.fft_size = out.search.fft_size.value_or(0);
  return job_spec_to_json(out);
}

LocateOptions JobRunner::locate_options(const SearchFields& search,
                                        const std::function<void(std::string_view)>& warn) const {
  LocateOptions lo;
  lo.correlator.threads = config_.threads_per_job;
  lo.correlator.planner = config_.planner;
  lo.on_diagnostic = warn;
  lo.opener = reporting_opener(lo.opener, warn);
  search.apply(lo);
  return lo;
}

Result<JobRunner::Reconcile> JobRunner::load_reconcile(const ReconcileSpec& spec,
                                                       const std::function<void(std::string_view)>& warn) const {
  std::vector<std::string> warnings;
  auto job = load_reconcile_job({spec.library, spec.schedule, spec.recordings, spec.window_s, "", spec.time_zone,
                                 "the job's time_zone (or the daemon's time_zone setting)"},
                                warnings);
  for (const auto& w : warnings) warn(w);
  if (!job) return job.error();
  if (auto st = all_under_roots(guard_, job.value().masters); !st) return st.error();
  Reconcile r;
  r.job = std::move(job.value());
  r.options.locate = locate_options(spec.search, warn);
  if (!spec.name_pattern.empty()) r.options.name_pattern = spec.name_pattern;
  r.title = std::filesystem::path(spec.schedule).stem().string();
  return r;
}

Result<nlohmann::json> JobRunner::run(const nlohmann::json& prepared, const std::function<void(double)>& progress,
                                      const std::function<bool()>& should_stop,
                                      const std::function<void(std::string_view)>& warn, const ReportFiles* report,
                                      const std::string& job_id) const {
  auto spec = job_spec_from_json(prepared);
  if (!spec) return spec.error();
  return run(spec.value(), progress, should_stop, warn, report, job_id);
}

Result<nlohmann::json> JobRunner::run(const JobSpec& spec, const std::function<void(double)>& progress,
                                      const std::function<bool()>& should_stop,
                                      const std::function<void(std::string_view)>& warn, const ReportFiles* report,
                                      const std::string& job_id) const {
  FftCostTable costs = this->costs();
  struct KeepCosts {  // whatever the job measured, kept for the next ones
    const JobRunner& runner;
    FftCostTable& costs;
    ~KeepCosts() {
      std::lock_guard lock(runner.costs_mu_);
      runner.costs_.insert(costs.begin(), costs.end());
    }
  } keep{*this, costs};
  if (const auto* rs = std::get_if<ReconcileSpec>(&spec)) {
    auto rec = load_reconcile(*rs, warn);
    if (!rec) return rec.error();
    ReconcileOptions& ro = rec.value().options;
    ro.locate.bank.costs = &costs;
    ro.locate.on_progress = [&](const Progress& p) { progress(p.fraction); };
    ro.locate.should_stop = should_stop;
    auto r = run_reconcile(rec.value().job, ro);
    if (!r) return r.error();
    return reconcile_documents(r.value(), *rs, ro, rec.value().title, report, should_stop, warn, job_id);
  }
  if (const auto* ss = std::get_if<SegmentSpec>(&spec)) {
    LocateOptions lo = locate_options(ss->search, warn);
    lo.bank.costs = &costs;
    lo.on_progress = [&](const Progress& p) { progress(p.fraction); };
    lo.should_stop = should_stop;
    // The task's masters, decoded once for its search and its evidence.
    lo.masters = std::make_shared<MasterLibrary>(lo.opener, lo.analysis_rate_hz);
    auto r = search_segment(ss->segment, ss->templates, lo);
    if (!r) return r.error();
    nlohmann::json out = locate_to_json(r.value(), true);
    if (ss->evidence) {  // a reconcile job's: steps 4 and 6 here, beside the audio
      ReconcileOptions ro;
      ro.locate = lo;
      const auto ev = gather_evidence(r.value().templates, ss->segment.stream.parts, r.value().matches, ro);
      out["evidence"] = nlohmann::json::array();
      for (const auto& e : ev) out["evidence"].push_back(evidence_to_json(e));
    }
    return out;
  }
  const auto& ls = std::get<LocateSpec>(spec);
  LocateOptions lo = locate_options(ls.search, warn);
  lo.bank.costs = &costs;
  lo.on_progress = [&](const Progress& p) { progress(p.fraction); };
  lo.should_stop = should_stop;
  auto r = run_locate_job(LocateJob{ls.templates, ls.recordings}, lo);
  if (!r) return r.error();
  return locate_to_json(r.value());
}

Result<nlohmann::json> JobRunner::reconcile_documents(const ReconcileResult& result, const ReconcileSpec& spec,
                                                     const ReconcileOptions& options, const std::string& title,
                                                     const ReportFiles* report, const std::function<bool()>& should_stop,
                                                     const std::function<void(std::string_view)>& warn,
                                                     const std::string& job_id) const {
  std::optional<Listening> heard;
  if (report) {
    ReportFiles f = *report;
    f.log_name = title;
    f.excerpts = f.excerpts && spec.excerpts.value_or(true);
    auto w = write_report_files(result, options, f, should_stop, warn);
    if (!w) return w.error();
    heard = std::move(w.value());
  }
  if (config_.on_reconciled)
    if (auto st = config_.on_reconciled(result, options, job_spec_to_json(spec), job_id); !st)
      return Error{st.error().code, "the store of record was not written: " + st.error().message, st.error().path,
                   std::nullopt};
  return reconcile_to_json(result, options.loudness, heard ? &*heard : nullptr);
}

Result<std::vector<std::string>> JobRunner::library_files(const std::string& dir) const {
  auto files = scan_library(dir);
  if (!files) return files;
  if (auto st = all_under_roots(guard_, files.value()); !st) return st.error();
  return files;
}

FftCostTable JobRunner::costs() const {
  std::lock_guard lock(costs_mu_);
  return costs_;
}

JobExecutor local_executor(const JobRunner& runner) {
  return [&runner](const std::string& id, const nlohmann::json& spec, const std::function<void(double)>& progress,
                   const std::function<bool()>& should_stop, const std::function<void(std::string_view)>& warn,
                   const ReportFiles* report) { return runner.run(spec, progress, should_stop, warn, report, id); };
}

}  // namespace godwit
