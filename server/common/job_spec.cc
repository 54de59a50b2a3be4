#include "job_spec.h"

#include "wire_code.h"

namespace godwit {
namespace {

Error bad(const std::string& msg) { return Error{ProtocolCode::bad_request, msg, "", std::nullopt}; }

template <class... F>
struct Overload : F... {
  using F::operator()...;
};
template <class... F>
Overload(F...) -> Overload<F...>;

Result<std::vector<std::string>> strings(const nlohmann::json& j, const char* field) {
  if (!j.contains(field)) return bad(std::string("'") + field + "' is required");
  const auto& a = j[field];
  if (!a.is_array()) return bad(std::string("'") + field + "' must be an array of paths");
  std::vector<std::string> out;
  for (const auto& v : a) {
    if (!v.is_string()) return bad(std::string("'") + field + "' must be an array of paths");
    out.push_back(v.get<std::string>());
  }
  return out;
}

Result<std::string> string_field(const nlohmann::json& j, const char* field) {
  if (!j.contains(field) || !j[field].is_string()) return bad(std::string("'") + field + "' must be a string");
  return j[field].get<std::string>();
}

void search_to_json(const SearchFields& s, nlohmann::json& j) {
  j["max_speed_change_pct"] = s.max_speed_change_pct;
  j["max_tempo_change_pct"] = s.max_tempo_change_pct;
  if (s.threshold) j["threshold"] = *s.threshold;
  if (s.floor_k) j["floor_k"] = *s.floor_k;
  if (s.fft_size) j["fft_size"] = *s.fft_size;
  if (s.screen) j["screen"] = *s.screen;
}

}  // namespace

void SearchFields::apply(LocateOptions& lo) const {
  lo.speed.enabled = max_speed_change_pct > 0;
  lo.speed.max_deviation = max_speed_change_pct / 100;
  lo.speed.max_tempo_deviation = max_tempo_change_pct / 100;
  if (threshold) lo.picker.threshold = *threshold;
  if (floor_k) lo.picker.floor_k = *floor_k;
  lo.bank.fixed_fft_size = fft_size.value_or(0);
  if (screen) lo.screen.enabled = *screen;
}

Result<double> number_field(const nlohmann::json& j, const char* field, NumberRange range, double dflt) {
  if (!j.contains(field)) return dflt;
  if (!j[field].is_number()) return bad(std::string("'") + field + "' must be a number");
  const double v = j[field].get<double>();
  if (!(v >= range.lo && v <= range.hi))
    return bad(std::string("'") + field + "' must lie in " + std::to_string(range.lo) + ".." +
               std::to_string(range.hi));
  return v;
}

Result<SearchFields> search_fields_from_json(const nlohmann::json& j) {
  SearchFields s;
  auto speed = number_field(j, "max_speed_change_pct", kSpeedChangePctRange, kDefaultMaxSpeedChangePct);
  if (!speed) return speed.error();
  s.max_speed_change_pct = speed.value();
  auto tempo = number_field(j, "max_tempo_change_pct", kTempoChangePctRange, kDefaultMaxTempoChangePct);
  if (!tempo) return tempo.error();
  s.max_tempo_change_pct = tempo.value();
  if (j.contains("threshold")) {
    auto v = number_field(j, "threshold", kThresholdRange, 0);
    if (!v) return v.error();
    s.threshold = v.value();
  }
  if (j.contains("floor_k")) {
    auto v = number_field(j, "floor_k", kFloorKRange, 0);
    if (!v) return v.error();
    s.floor_k = v.value();
  }
  if (j.contains("fft_size")) {
    auto v = number_field(j, "fft_size", kFftSizeRange, 0);
    if (!v) return v.error();
    const auto n = static_cast<size_t>(v.value());
    if (n & (n - 1)) return bad("'fft_size' must be a power of two");
    s.fft_size = n;
  }
  if (j.contains("screen")) {
    if (!j["screen"].is_boolean()) return bad("'screen' must be true or false");
    s.screen = j["screen"].get<bool>();
  }
  return s;
}

std::string_view job_kind(const JobSpec& spec) {
  return std::visit(Overload{[](const LocateSpec&) { return std::string_view("locate"); },
                             [](const ReconcileSpec&) { return std::string_view("reconcile"); },
                             [](const SegmentSpec&) { return std::string_view("segment"); }},
                    spec);
}

Result<JobSpec> job_spec_from_json(const nlohmann::json& j) {
  if (!j.is_object()) return bad("a job must be an object");
  const std::string kind = j.contains("kind") && j["kind"].is_string() ? j["kind"].get<std::string>() : "";
  auto search = search_fields_from_json(j);
  if (!search) return search.error();
  if (kind == "locate") {
    LocateSpec s;
    auto t = strings(j, "templates");
    if (!t) return t.error();
    auto r = strings(j, "recordings");
    if (!r) return r.error();
    s.templates = std::move(t.value());
    s.recordings = std::move(r.value());
    s.search = search.value();
    return JobSpec(std::move(s));
  }
  if (kind == "reconcile") {
    ReconcileSpec s;
    auto lib = string_field(j, "library");
    if (!lib) return lib.error();
    auto sched = string_field(j, "schedule");
    if (!sched) return sched.error();
    auto r = strings(j, "recordings");
    if (!r) return r.error();
    auto w = number_field(j, "window_s", kWindowSRange, kDefaultWindowS);
    if (!w) return w.error();
    s.library = lib.value();
    s.schedule = sched.value();
    s.recordings = std::move(r.value());
    s.window_s = w.value();
    if (j.contains("time_zone")) {
      auto tz = string_field(j, "time_zone");
      if (!tz) return tz.error();
      s.time_zone = tz.value();
    }
    for (auto [field, out] : {std::pair{"station", &s.station}, std::pair{"name_pattern", &s.name_pattern}}) {
      if (!j.contains(field)) continue;
      auto v = string_field(j, field);
      if (!v) return v.error();
      *out = v.value();
    }
    if (j.contains("excerpts")) {
      if (!j["excerpts"].is_boolean()) return bad("'excerpts' must be true or false");
      s.excerpts = j["excerpts"].get<bool>();
    }
    s.search = search.value();
    return JobSpec(std::move(s));
  }
  if (kind == "segment") {
    SegmentSpec s;
    if (!j.contains("segment")) return bad("'segment' is required");
    auto seg = segment_from_json(j["segment"]);
    if (!seg) return seg.error();
    auto t = strings(j, "templates");
    if (!t) return t.error();
    s.segment = std::move(seg.value());
    s.templates = std::move(t.value());
    if (j.contains("evidence")) {
      if (!j["evidence"].is_boolean()) return bad("'evidence' must be true or false");
      s.evidence = j["evidence"].get<bool>();
    }
    s.search = search.value();
    return JobSpec(std::move(s));
  }
  return bad("'kind' must be \"locate\", \"reconcile\" or \"segment\"");
}

nlohmann::json job_spec_to_json(const JobSpec& spec) {
  nlohmann::json j{{"kind", std::string(job_kind(spec))}};
  std::visit(Overload{[&](const LocateSpec& s) {
                        j["templates"] = s.templates;
                        j["recordings"] = s.recordings;
                        search_to_json(s.search, j);
                      },
                      [&](const ReconcileSpec& s) {
                        j["library"] = s.library;
                        j["schedule"] = s.schedule;
                        j["recordings"] = s.recordings;
                        j["window_s"] = s.window_s;
                        if (!s.time_zone.empty()) j["time_zone"] = s.time_zone;
                        if (!s.station.empty()) j["station"] = s.station;
                        if (!s.name_pattern.empty()) j["name_pattern"] = s.name_pattern;
                        if (s.excerpts) j["excerpts"] = *s.excerpts;
                        search_to_json(s.search, j);
                      },
                      [&](const SegmentSpec& s) {
                        j["segment"] = segment_to_json(s.segment);
                        j["templates"] = s.templates;
                        if (s.evidence) j["evidence"] = true;
                        search_to_json(s.search, j);
                      }},
             spec);
  return j;
}

Status check_job_spec(const JobSpec& spec) {
  auto back = job_spec_from_json(job_spec_to_json(spec));  // every field's range, as from the journal
  if (!back) return back.error();
  if (const auto* l = std::get_if<LocateSpec>(&spec)) {
    if (l->templates.empty()) return bad("no templates: give 'templates', 'library' or 'inline'");
    if (l->recordings.empty()) return bad("'recordings' is empty");
  }
  return ok_status();
}

}  // namespace godwit
