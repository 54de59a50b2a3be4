#include "segment_task.h"

#include <algorithm>
#include <cmath>

#include "wire_code.h"

namespace godwit {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

nlohmann::json finite_or_null(double v) { return std::isfinite(v) ? nlohmann::json(v) : nlohmann::json(nullptr); }

double finite_or(const nlohmann::json& j, const char* field, double unbounded) {
  if (!j.contains(field) || j[field].is_null()) return unbounded;
  return j[field].get<double>();
}

}  // namespace

std::vector<Segment> split_stream(const Stream& stream, double span_s, double margin_s) {
  std::vector<Segment> out;
  if (stream.parts.empty() || !(span_s > 0) || stream.duration_s <= 1.5 * span_s) {
    out.push_back(Segment{stream});
    return out;
  }
  size_t pieces = static_cast<size_t>(std::ceil(stream.duration_s / span_s));
  if (pieces > 1 && stream.duration_s - static_cast<double>(pieces - 1) * span_s < 0.25 * span_s) --pieces;
  for (size_t k = 0; k < pieces; ++k) {
    Segment s{stream};
    s.own_from_s = k == 0 ? -kInf : static_cast<double>(k) * span_s;
    s.own_to_s = k + 1 == pieces ? kInf : static_cast<double>(k + 1) * span_s;
    s.read_from_s = k == 0 ? 0 : std::max(0.0, std::floor((s.own_from_s - margin_s) / kSegmentAlignS) * kSegmentAlignS);
    s.read_to_s = k + 1 == pieces ? kInf : std::min(stream.duration_s, s.own_to_s + margin_s);
    out.push_back(std::move(s));
  }
  return out;
}

std::vector<ConcatPart> window_parts(const std::vector<ConcatPart>& parts, double stream_rate_hz, int64_t from_frame,
                                     int64_t to_frame) {
  // Stream frames run at stream_rate_hz; a part logged at another rate
  // counts its own frames (as ConcatSource does).
  std::vector<ConcatPart> out;
  int64_t start = 0;  // stream frame where the part begins
  for (const auto& p : parts) {
    const double rate = p.rate_hz > 0 ? p.rate_hz : stream_rate_hz;
    const double own_per_stream = rate / stream_rate_hz;
    const int64_t len = std::max<int64_t>(0, std::llround(static_cast<double>(p.frames - p.skip_frames) / own_per_stream));
    const int64_t lo = std::max(start, from_frame), hi = std::min(start + len, to_frame);
    if (hi > lo) {
      const auto own = [&](int64_t stream_frames) {
        return p.skip_frames + std::min(p.frames - p.skip_frames,
                                        static_cast<int64_t>(std::llround(static_cast<double>(stream_frames) * own_per_stream)));
      };
      out.push_back({p.path, own(hi - start), own(lo - start), p.rate_hz});
    }
    start += len;
  }
  return out;
}

nlohmann::json segment_to_json(const Segment& s) {
  nlohmann::json parts = nlohmann::json::array();
  for (const auto& p : s.stream.parts)
    parts.push_back({{"path", p.path}, {"frames", p.frames}, {"skip", p.skip_frames}, {"rate_hz", p.rate_hz}});
  return {{"name", s.stream.name},
          {"parts", parts},
          {"rate_hz", s.stream.rate_hz},
          {"duration_s", s.stream.duration_s},
          {"read_from_s", s.read_from_s},
          {"read_to_s", finite_or_null(s.read_to_s)},
          {"own_from_s", finite_or_null(s.own_from_s)},
          {"own_to_s", finite_or_null(s.own_to_s)}};
}

Result<Segment> segment_from_json(const nlohmann::json& j) {
  try {
    Segment s;
    s.stream.name = j.at("name").get<std::string>();
    for (const auto& p : j.at("parts"))
      s.stream.parts.push_back({p.at("path").get<std::string>(), p.at("frames").get<int64_t>(), p.at("skip").get<int64_t>(),
                                p.value("rate_hz", 0.0)});
    s.stream.rate_hz = j.value("rate_hz", 0.0);
    s.stream.duration_s = j.value("duration_s", 0.0);
    s.read_from_s = j.value("read_from_s", 0.0);
    s.read_to_s = finite_or(j, "read_to_s", kInf);
    s.own_from_s = finite_or(j, "own_from_s", -kInf);
    s.own_to_s = finite_or(j, "own_to_s", kInf);
    if (!s.stream.parts.empty() && !(s.stream.rate_hz > 0))
      return Error{ProtocolCode::bad_request, "segment: a stream of parts needs its rate", "", std::nullopt};
    return s;
  } catch (const nlohmann::json::exception& e) {
    return Error{ProtocolCode::bad_request, std::string("segment: ") + e.what(), "", std::nullopt};
  }
}

Result<LocateResult> search_segment(const Segment& seg, const std::vector<std::string>& templates,
                                    LocateOptions options) {
  const Stream& st = seg.stream;
  std::vector<ConcatPart> parts;
  if (!st.parts.empty()) {
    const int64_t from = std::llround(seg.read_from_s * st.rate_hz);
    const int64_t to = std::isfinite(seg.read_to_s) ? std::llround(seg.read_to_s * st.rate_hz)
                                                     : std::numeric_limits<int64_t>::max();
    parts = window_parts(st.parts, st.rate_hz, from, to);
    if (parts.empty())
      return Error{ProtocolCode::bad_request, "segment lies beyond its stream's end", st.name, std::nullopt};
  }
  const SourceOpener base = options.opener;
  options.opener = [&parts, &st, base](const std::string& path, ChannelChoice choice) -> Result<SourcePtr> {
    if (path != st.name || parts.empty()) return base(path, choice);
    auto c = ConcatSource::open(path, parts, base, choice, st.rate_hz);  // at the whole stream's rate
    if (!c) return c.error();
    return SourcePtr(std::move(c.value()));
  };
  auto r = run_locate(LocateJob{templates, {st.name}}, options);
  if (!r) return r.error();
  LocateResult& res = r.value();
  const double shift_s = seg.read_from_s;
  for (auto& rec : res.recordings) {
    rec.duration_s += shift_s;
    if (rec.error && rec.error->offset_s) *rec.error->offset_s += shift_s;
  }
  std::vector<Match> owned;
  for (auto& m : res.matches) {
    m.offset_s += shift_s;
    if (m.offset_s >= seg.own_from_s && m.offset_s < seg.own_to_s) owned.push_back(std::move(m));
  }
  res.matches = std::move(owned);
  return std::move(res);
}

nlohmann::json evidence_to_json(const std::optional<DetectionEvidence>& e) {
  if (!e) return {{"unverified", true}};
  const Profile& p = e->profile;
  nlohmann::json missing = nlohmann::json::array();
  for (const auto& [from, to] : p.missing_s) missing.push_back({from, to});
  nlohmann::json j{{"segment_s", p.segment_s}, {"scores", p.scores}, {"aired", p.aired},
                   {"coverage", p.coverage}, {"missing_s", missing}, {"weak", e->weak},
                   {"aired_part", {p.aired_from_s, p.aired_to_s, p.aired_from_range_s.first, p.aired_from_range_s.second,
                                   p.aired_to_range_s.first, p.aired_to_range_s.second, p.coverage_range.first,
                                   p.coverage_range.second, p.aired_level}},
                   {"aired_score", e->aired_score}};
  if (e->foreground_contrast) j["foreground_contrast"] = *e->foreground_contrast;
  if (e->shape_match) j["shape_match"] = *e->shape_match;
  if (e->spot_lufs) j["spot_lufs"] = *e->spot_lufs;
  if (e->programme_lufs) j["programme_lufs"] = *e->programme_lufs;
  return j;
}

Result<std::optional<DetectionEvidence>> evidence_from_json(const nlohmann::json& j) {
  try {
    if (j.value("unverified", false)) return std::optional<DetectionEvidence>{};
    DetectionEvidence e;
    e.profile.segment_s = j.at("segment_s").get<double>();
    e.profile.scores = j.at("scores").get<std::vector<float>>();
    e.profile.aired = j.at("aired").get<std::vector<bool>>();
    e.profile.coverage = j.at("coverage").get<double>();
    for (const auto& r : j.at("missing_s")) e.profile.missing_s.emplace_back(r.at(0).get<double>(), r.at(1).get<double>());
    e.weak = j.at("weak").get<bool>();
    const auto part = j.at("aired_part").get<std::vector<double>>();
    if (part.size() != 9) return Error{ErrorCode::internal, "evidence: aired_part needs 9 numbers", "", std::nullopt};
    e.profile.aired_from_s = part[0], e.profile.aired_to_s = part[1];
    e.profile.aired_from_range_s = {part[2], part[3]};
    e.profile.aired_to_range_s = {part[4], part[5]};
    e.profile.coverage_range = {part[6], part[7]};
    e.profile.aired_level = part[8];
    e.aired_score = j.at("aired_score").get<double>();
    if (j.contains("foreground_contrast")) e.foreground_contrast = j["foreground_contrast"].get<double>();
    if (j.contains("shape_match")) e.shape_match = j["shape_match"].get<double>();
    if (j.contains("spot_lufs")) e.spot_lufs = j["spot_lufs"].get<double>();
    if (j.contains("programme_lufs")) e.programme_lufs = j["programme_lufs"].get<double>();
    return std::optional<DetectionEvidence>{std::move(e)};
  } catch (const nlohmann::json::exception& ex) {
    return Error{ErrorCode::internal, std::string("evidence: ") + ex.what(), "", std::nullopt};
  }
}

}  // namespace godwit
