#include "godwit/report/excerpt.h"

#include <sndfile.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <set>

#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/resampler.h"
#include "godwit/core/version.h"
#include "audio/sndfile_lock.h"

namespace godwit {
namespace {

// libsndfile's virtual I/O over a growing string (Ogg pages are written
// once, in order; the seeks are there for the API).
struct MemoryFile {
  std::string bytes;
  sf_count_t pos = 0;
};

sf_count_t mem_length(void* user) { return static_cast<sf_count_t>(static_cast<MemoryFile*>(user)->bytes.size()); }

sf_count_t mem_seek(sf_count_t offset, int whence, void* user) {
  auto* m = static_cast<MemoryFile*>(user);
  const sf_count_t base = whence == SEEK_SET ? 0 : whence == SEEK_CUR ? m->pos : static_cast<sf_count_t>(m->bytes.size());
  if (base + offset < 0) return -1;
  m->pos = base + offset;
  return m->pos;
}

sf_count_t mem_read(void* ptr, sf_count_t count, void* user) {
  auto* m = static_cast<MemoryFile*>(user);
  const sf_count_t left = static_cast<sf_count_t>(m->bytes.size()) - m->pos;
  const sf_count_t n = std::max<sf_count_t>(0, std::min(count, left));
  if (n > 0) std::memcpy(ptr, m->bytes.data() + m->pos, static_cast<size_t>(n));
  m->pos += n;
  return n;
}

sf_count_t mem_write(const void* ptr, sf_count_t count, void* user) {
  auto* m = static_cast<MemoryFile*>(user);
  const size_t end = static_cast<size_t>(m->pos + count);
  if (end > m->bytes.size()) m->bytes.resize(end);
  std::memcpy(m->bytes.data() + m->pos, ptr, static_cast<size_t>(count));
  m->pos += count;
  return count;
}

sf_count_t mem_tell(void* user) { return static_cast<MemoryFile*>(user)->pos; }

struct SndfileCloser {
  void operator()(SNDFILE* f) const { sf_close(f); }
};

// "20260314T060037.250": basic ISO 8601, to the millisecond, no colons.
std::string compact_time(LocalSeconds t) {
  std::string s = format_iso8601_local(t, 3);
  s.erase(std::remove(s.begin(), s.end(), '-'), s.end());
  s.erase(std::remove(s.begin(), s.end(), ':'), s.end());
  return s;
}

// Names made unique within one folder: "x.opus", "x-2.opus", ...
class NameBook {
 public:
  std::string take(const std::string& stem, const std::string& ext) {
    std::string name = stem + ext;
    for (int k = 2; used_.count(name); ++k) name = stem + "-" + std::to_string(k) + ext;
    used_.insert(name);
    return name;
  }

 private:
  std::set<std::string> used_;
};

// A run's stream, opened at each rate an airing needs (the native rate of
// the file where it starts), as detection_evidence.cc does.
class RunReader {
 public:
  RunReader(const std::vector<ConcatPart>& parts, const SourceOpener& opener) : parts_(parts), opener_(opener) {}

  // Mono [from_s, to_s) of the run's time (clipped to the run) at the rate
  // of the file holding `at_s`; `from_s` is moved to where the cut begins.
  Result<Samples> cut(double at_s, double& from_s, double to_s, double& rate_hz) {
    if (parts_.empty()) return Error{ErrorCode::usage, "the airing's run has no files", "", std::nullopt};
    if (streams_.empty()) {
      auto first = ConcatSource::open("run", parts_, opener_, ChannelChoice{});
      if (!first) return first.error();
      first_rate_ = first.value()->info().native_rate_hz;
      streams_[first_rate_] = std::move(first.value());
    }
    rate_hz = streams_[first_rate_]->part_rate_at(std::max(0.0, at_s) * first_rate_);
    if (!streams_.count(rate_hz)) {
      auto s = ConcatSource::open("run", parts_, opener_, ChannelChoice{}, rate_hz);
      if (!s) return s.error();
      streams_[rate_hz] = std::move(s.value());
    }
    ConcatSource& src = *streams_[rate_hz];
    const int64_t total = src.info().native_frames.value_or(0);
    const int64_t first = std::clamp<int64_t>(std::llround(from_s * rate_hz), 0, total);
    const int64_t last = std::clamp<int64_t>(std::llround(to_s * rate_hz), first, total);
    from_s = static_cast<double>(first) / rate_hz;
    return read_native_span(src, first, static_cast<size_t>(last - first));
  }

 private:
  const std::vector<ConcatPart>& parts_;
  const SourceOpener& opener_;
  double first_rate_ = 0;
  std::map<double, std::unique_ptr<ConcatSource>> streams_;
};

// An airing's excerpt origin: the run's files from its first up to the
// last one [at_s - pad, to_s) reaches (where the cut falls in the run's
// time depends on every file before it; the files after it do not
// matter), the span, the encoding.
ExcerptOrigin airing_origin(const std::vector<ConcatPart>& parts, double at_s, double to_s,
                            const nlohmann::json& encoding) {
  ExcerptOrigin origin;
  nlohmann::json files = nlohmann::json::array();
  double start_s = 0;
  for (const auto& p : parts) {
    files.push_back({p.path, p.skip_frames, p.frames, p.rate_hz});
    origin.files.push_back(p.path);
    if (!(p.rate_hz > 0)) {  // its length is not known here: every file counts
      start_s = std::numeric_limits<double>::infinity();
      continue;
    }
    start_s += static_cast<double>(p.frames - p.skip_frames) / p.rate_hz;  // at least what it adds
    if (start_s >= to_s) break;
  }
  nlohmann::json key = encoding;
  key["run"] = files;
  key["at_s"] = at_s;
  key["to_s"] = to_s;
  origin.key = key.dump();
  return origin;
}

}  // namespace

std::string safe_file_name(const std::string& text, size_t max_chars) {
  std::string out;
  for (unsigned char c : text) {
    if (out.size() >= max_chars) break;
    const bool keep = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '.' ||
                      c == '-' || c == '_';
    out += keep ? static_cast<char>(c) : '_';
  }
  if (out.empty() || out[0] == '.') out.insert(out.begin(), '_');
  return out.substr(0, std::max<size_t>(1, max_chars));
}

LevelEnvelope level_envelope(const float* samples, size_t frames, double rate_hz, double step_s) {
  LevelEnvelope e;
  e.step_s = step_s;
  const size_t step = std::max<size_t>(1, static_cast<size_t>(std::llround(step_s * rate_hz)));
  for (size_t at = 0; at < frames; at += step) {
    const size_t n = std::min(step, frames - at);
    double sum = 0;
    for (size_t i = at; i < at + n; ++i) sum += static_cast<double>(samples[i]) * samples[i];
    const double rms = std::sqrt(sum / static_cast<double>(n));
    e.dbfs.push_back(static_cast<float>(std::max(-120.0, 20 * std::log10(std::max(rms, 1e-7)))));
  }
  return e;
}

Result<std::string> encode_excerpt(const Samples& mono, double rate_hz, const ExcerptOptions& o) {
  const double out_rate = o.encode_rate_hz;
  if (out_rate != 8000 && out_rate != 12000 && out_rate != 16000 && out_rate != 24000 && out_rate != 48000)
    return Error{ErrorCode::usage, "Opus takes 8, 12, 16, 24 or 48 kHz", "", std::nullopt};
  const Samples pcm = rate_hz == out_rate ? mono : resample_all(mono, rate_hz, out_rate);
  MemoryFile file;
  SF_VIRTUAL_IO io{mem_length, mem_seek, mem_read, mem_write, mem_tell};
  SF_INFO info{};
  info.samplerate = static_cast<int>(out_rate);
  info.channels = 1;
  info.format = SF_FORMAT_OGG | SF_FORMAT_OPUS;
  std::unique_ptr<SNDFILE, SndfileCloser> sf;
  {
    std::lock_guard lock(detail::sndfile_open_mutex());
    sf.reset(sf_open_virtual(&io, SFM_WRITE, &info, &file));
    if (!sf)
      return Error{ErrorCode::unsupported, std::string("cannot write Ogg Opus: ") + sf_strerror(nullptr), "", std::nullopt};
  }
  // libsndfile 1.2 (ogg_opus.c): level 0..1 maps linearly to 256 down to 6
  // kbit/s per channel.
  double level = std::clamp(1.0 - (o.bitrate_bps - 6000.0) / 250000.0, 0.0, 1.0);
  if (!sf_command(sf.get(), SFC_SET_COMPRESSION_LEVEL, &level, sizeof level))
    return Error{ErrorCode::io, std::string("Opus encoder refused its bitrate: ") + sf_strerror(sf.get()), "", std::nullopt};
  const sf_count_t n = static_cast<sf_count_t>(pcm.size());
  if (n > 0 && sf_writef_float(sf.get(), pcm.data(), n) != n)
    return Error{ErrorCode::io, std::string("Opus encoding failed: ") + sf_strerror(sf.get()), "", std::nullopt};
  sf.reset();  // flushes the last page
  return std::move(file.bytes);
}

Result<Listening> make_excerpts(const ReconcileResult& r, const SourceOpener& opener, const ExcerptOptions& o,
                                const ExcerptSink& sink) {
  Listening out;
  out.folder = o.folder;
  NameBook names;
  // Which airings, and the name stem each gets.
  std::vector<std::pair<size_t, std::string>> wanted;
  for (const auto& v : r.verdicts)
    if (v.airing) wanted.emplace_back(*v.airing, safe_file_name(r.placements[v.placement].slot, 48));
  for (size_t i : r.unscheduled) wanted.emplace_back(i, "unscheduled");
  std::sort(wanted.begin(), wanted.end());
  wanted.erase(std::unique(wanted.begin(), wanted.end(),
                           [](const auto& a, const auto& b) { return a.first == b.first; }),
               wanted.end());
  auto stopped = [&] { return o.should_stop && o.should_stop(); };
  const nlohmann::json encoding{{"version", godwit_version()},
                                {"pad_s", o.pad_s},
                                {"bitrate_bps", o.bitrate_bps},
                                {"encode_rate_hz", o.encode_rate_hz},
                                {"envelope_step_s", o.envelope_step_s}};
  // An excerpt kept from before, under `name`, when the caller has it.
  auto reuse = [&](const std::string& name, ExcerptOrigin origin) -> std::optional<ExcerptRef> {
    std::optional<ExcerptRef> ref;
    if (o.kept) ref = o.kept(name, origin);
    out.origins[name] = std::move(origin);
    if (ref) {
      ref->file = o.folder + "/" + name;
      ++out.kept;
    }
    return ref;
  };
  auto keep = [&](const std::string& name, const Samples& mono, double rate_hz, ExcerptRef& ref) -> Status {
    auto bytes = encode_excerpt(mono, rate_hz, o);
    if (!bytes) return bytes.error();
    if (auto st = sink(name, bytes.value()); !st) return st.error();
    ref.file = o.folder + "/" + name;
    ref.bytes = bytes.value().size();
    ref.rate_hz = rate_hz;
    ref.duration_s = static_cast<double>(mono.size()) / rate_hz;
    ref.envelope = level_envelope(mono.data(), mono.size(), rate_hz, o.envelope_step_s);
    return ok_status();
  };

  // Airings, run by run, so that each run's files are opened once.
  std::map<size_t, std::vector<std::pair<size_t, std::string>>> by_run;
  for (const auto& w : wanted)
    if (w.first < r.airings.size()) by_run[r.airings[w.first].run.index].push_back(w);
  std::set<std::string> heard;
  for (const auto& [run, list] : by_run) {
    if (run >= r.runs.size()) {
      for (const auto& [i, stem] : list) out.problems.push_back(stem + ": its recordings are not known to the report");
      continue;
    }
    RunReader reader(r.runs[run], opener);
    for (const auto& [i, stem] : list) {
      if (stopped()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
      const AiringRecord& a = r.airings[i];
      const double air_length_s = a.length_s / (a.time_scale() > 0 ? a.time_scale() : 1.0);
      const double to_s = a.run_offset_s + air_length_s + o.pad_s;
      const std::string name = names.take(stem + "_" + compact_time(a.aired_s), ".opus");
      if (auto ref = reuse(name, airing_origin(r.runs[run], a.run_offset_s, to_s, encoding))) {
        out.airings[i] = std::move(*ref);
        heard.insert(a.spot);
        for (const auto& u : a.undetermined_among) heard.insert(u);
        continue;
      }
      double from_s = a.run_offset_s - o.pad_s, rate = 0;
      auto mono = reader.cut(a.run_offset_s, from_s, to_s, rate);
      const std::string label = stem + " (" + a.spot + " at " + format_iso8601_local(a.aired_s, 3) + ")";
      if (!mono || mono.value().empty()) {
        out.origins.erase(name);
        out.problems.push_back(label + ": " + (mono ? std::string("nothing recorded there") : mono.error().describe()));
        continue;
      }
      ExcerptRef ref;
      ref.from_s = from_s - a.run_offset_s;
      if (auto st = keep(name, mono.value(), rate, ref); !st) return st.error();
      out.airings[i] = std::move(ref);
      heard.insert(a.spot);
      for (const auto& u : a.undetermined_among) heard.insert(u);
    }
  }
  // Each master heard, once, and the planned spots of wrong versions (to
  // hear the difference).
  for (const auto& v : r.verdicts)
    if (v.airing && out.airings.count(*v.airing)) heard.insert(r.placements[v.placement].spot);
  for (const std::string& spot : heard) {
    if (stopped()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    auto it = r.spots.find(spot);
    if (it == r.spots.end()) continue;
    const std::string name = names.take("master_" + safe_file_name(spot, 80), ".opus");
    nlohmann::json key = encoding;
    key["master"] = it->second.path;
    if (auto ref = reuse(name, {key.dump(), {it->second.path}})) {
      out.masters[spot] = std::move(*ref);
      continue;
    }
    auto src = opener(it->second.path, ChannelChoice{});
    Result<Samples> mono = src ? decode_all(*src.value(), 0) : Result<Samples>(src.error());
    if (!mono || mono.value().empty()) {
      out.origins.erase(name);
      out.problems.push_back("master " + spot + ": " + (mono ? std::string("empty") : mono.error().describe()));
      continue;
    }
    ExcerptRef ref;
    if (auto st = keep(name, mono.value(), src.value()->info().native_rate_hz, ref); !st) return st.error();
    out.masters[spot] = std::move(ref);
  }
  return out;
}

}  // namespace godwit
