// A broadcast day as hostile as real air, with its ground truth: the
// benchmark's scenario (tests/bench/accuracy_bench.cc) and the air-chain
// test's.
//
// A library of fictional spots (independent ones of 10-60 s, and two
// families of siblings that share all audio but a closing tag of 3-6 s)
// airs in breaks of 2-4 spots over consecutive recordings of `file_s`
// each, whose rate (22.05/32/44.1/48 kHz), channels (mono/stereo) and
// codec (FLAC, WAV, MP3 at 64/96/128 kbps) vary within the day. Every
// airing passes its own random chain (air_chain.h), is crossfaded into what
// surrounds it and buried in noise of some colour; the file is soft-limited
// and encoded. Breaks are placed across file boundaries, one airing is cut
// by the start of the first recording, one by the end of the last, one by
// a gap in the timeline. Hard negatives sit in the programme: a spot's
// music bed alone, a family's closing tag alone, a presenter talking over a
// spot's bed. A planned log places most airings (some off their window,
// some naming a sibling version) and some placements never aired.
//
// Deterministic for a seed. Thread contract: plain functions.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "air_chain.h"
#include "godwit/compliance/civil_time.h"

namespace godwit::synth {

struct AirDayOptions {
  double hours = 6;
  double file_s = 1200;  // length of each recording. Default: 20 minutes
  uint64_t seed = 1;
  std::string dir;       // library/, air/ and planned.csv are written here
  std::string start = "2026-05-20T06:00:00";  // the first recording's start (local)
  bool gap = true;       // a gap of 60-150 s in the timeline, mid-day
  bool reuse = false;    // keep audio files already in dir (made by the same seed and options)
  ChainOdds odds;
  double negative_odds = 0.4;  // share of programme stretches holding a hard negative
  std::function<void(const std::string&)> log;  // progress lines (optional)
};

struct AirMaster {
  std::string id, family, path;  // family empty for an independent spot
  double duration_s = 0, rate_hz = 0, tag_s = 0;
  Samples audio, bed, tag;       // mono at rate_hz; tag: the closing tag alone (families)
};

enum class PlantKind { airing, bed_only, tag_only, dj_over_bed };
const char* plant_kind_name(PlantKind k);

struct Planted {
  PlantKind kind = PlantKind::airing;
  size_t master = 0;         // index into AirDay::masters: what aired (or whose bed / tag)
  LocalSeconds aired_s = 0;  // wall time of the master's first sample (may be before the recordings)
  double on_air_s = 0;       // its length on air (after speed change and truncation)
  AirChain chain;
  // How late the chain's filters deliver the audio (minimum-phase EQ, a
  // telephone band: up to 1.5 ms), measured on the noiseless chain output
  // at its first file's rate by a direct cross-correlation with the master
  // (parabolic peak); the airing is heard at aired_s + chain_delay_s.
  double chain_delay_s = 0;
  double coverage = 1;       // fraction of the master that aired and was recorded
  std::string cut;           // "", "truncated", "recording_start", "recording_end", "gap"
  bool straddle = false;     // crosses the boundary between two recordings
  int first_file = -1;       // file holding its first recorded sample
  std::vector<std::string> conditions;
  // Its placement in the planned log, if any.
  std::string slot, planned_spot;
  LocalSeconds planned_s = 0;
  double window_s = 60;
};

struct AirFile {
  std::string path, codec;
  LocalSeconds start_s = 0;
  double duration_s = 0, rate_hz = 0;
  int channels = 1;
};

struct AirDay {
  LocalSeconds day0 = 0;
  std::vector<AirMaster> masters;
  std::vector<AirFile> files;
  std::vector<Planted> planted;  // in time order
  std::string planned_log;       // CSV, also written to dir/planned.csv
  std::vector<std::string> never_aired_slots;
};

// Writes the library, the recordings and the planned log under
// options.dir. Returns an error message on failure.
std::optional<AirDay> make_air_day(const AirDayOptions& options, std::string* error);

}  // namespace godwit::synth
