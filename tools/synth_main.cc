// godwit-synth: writes the project's own synthetic audio.
//
//   godwit-synth demo --out DIR
//     The demo scenario: masters of a fictional station's spots (with
//     sidecar metadata and two sibling versions) in DIR/library, 14 minutes
//     of its morning in three aircheck files in DIR/airchecks, the planned
//     log with deliberate discrepancies in DIR/schedules, and the truth
//     (what aired, the verdicts expected) in DIR/truth.json.
#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>

#include "air_day.h"
#include "godwit/audio/analysis_stream.h"
#include "godwit/compliance/civil_time.h"
#include "godwit/report/html_report.h"
#include "synth.h"

namespace fs = std::filesystem;
using namespace godwit;

namespace {

constexpr double kRate = 44100;

// Speech from espeak-ng when it is installed (a clearer demo for a person
// listening), else the project's own formant voice.
Samples speech(const std::string& text, double duration_s, uint64_t seed, const fs::path& tmp) {
  const std::string wav = (tmp / ("speech-" + std::to_string(seed) + ".wav")).string();
  const std::string cmd = "espeak-ng -v en -s 165 -w '" + wav + "' \"" + text + "\" >/dev/null 2>&1";
  Samples out;
  if (std::system(cmd.c_str()) == 0) {
    if (auto src = open_audio_file(wav); src) {
      if (auto all = decode_all(*src.value(), kRate); all) out = std::move(all.value());
    }
    fs::remove(wav);
  }
  if (out.empty()) out = synth::voice(duration_s, kRate, seed);
  out.resize(static_cast<size_t>(duration_s * kRate), 0.0f);
  synth::set_rms(out, 0.1);
  return out;
}

struct SpotDef {
  const char* id;
  double duration_s;
  uint64_t bed_seed;
  const char* line;      // main voice
  const char* tag;       // closing tag (siblings differ here), may be empty
  double tag_at_s;
  const char* title;
  const char* advertiser;
  const char* family;
};

// Kestrel FM, a fictional community station, and its (fictional) advertisers.
const SpotDef kSpots[] = {
    {"marlow-bakery", 20, 11, "Fresh bread every morning at Marlow Bakery on Quay Street. Try the seeded rye.", "", 0,
     "Morning loaves", "Marlow Bakery", ""},
    {"tidewater-tyres-spring", 30, 12,
     "Tidewater Tyres. Four new tyres fitted and balanced while you wait, at the roundabout on Ferry Road.",
     "Spring offer ends this Sunday.", 24, "Spring offer", "Tidewater Tyres", "tidewater-tyres"},
    {"tidewater-tyres-summer", 30, 12,
     "Tidewater Tyres. Four new tyres fitted and balanced while you wait, at the roundabout on Ferry Road.",
     "Summer prices start in June.", 24, "Summer offer", "Tidewater Tyres", "tidewater-tyres"},
    {"pellham-garden-centre", 15, 13, "Pellham Garden Centre. Seedlings, compost and good advice, open daily.", "", 0,
     "Seedlings", "Pellham Garden Centre", ""},
    {"kestrel-fm-id", 5, 14, "Kestrel F M. Your harbour, your music.", "", 0, "Station ID", "Kestrel FM", ""},
    {"harbour-lights-cinema", 30, 15, "This week at the Harbour Lights Cinema: three premieres and a silent film night.",
     "", 0, "Weekly listings", "Harbour Lights Cinema", ""},
};

struct Airing {
  const char* id;
  double at_s;        // seconds after 06:00:00
  double gain_db;
  int polarity;
  double cut_after_s; // 0: complete
};

// What went to air. Each line's comment says what the planned log expects.
const Airing kAired[] = {
    {"marlow-bakery", 37.25, 0, 1, 0},            // S001 aired (+7.25 s)
    {"tidewater-tyres-summer", 92.5, -3, 1, 0},   // S002 wrong_version (spring was ordered)
    {"pellham-garden-centre", 150.125, -1.5, 1, 0},  // S003 late (+30.125 s, window 30 s)
    {"marlow-bakery", 292.0, -2, 1, 0},           // S004 aired, across the 06:05 file boundary
    {"kestrel-fm-id", 422.0, 0, -1, 0},           // S006 aired, polarity inverted
    {"tidewater-tyres-spring", 480.5, 0, 1, 15},  // S007 partial (cut after 15 of 30 s)
    {"pellham-garden-centre", 550.0, 0, 1, 0},    // unscheduled
    {"marlow-bakery", 640.0, 0, 1, 0},            // S009 early (-80 s)
};

const char* kPlannedLog =
    "slot,spot,planned,window_s\n"
    "S001,marlow-bakery,2026-03-14T06:00:30,60\n"
    "S002,tidewater-tyres-spring,2026-03-14T06:01:30,60\n"
    "S003,pellham-garden-centre,2026-03-14T06:02:00,30\n"
    "S004,marlow-bakery,2026-03-14T06:04:50,60\n"
    "S005,harbour-lights-cinema,2026-03-14T06:06:00,60\n"
    "S006,kestrel-fm-id,2026-03-14T06:07:00,120\n"
    "S007,tidewater-tyres-spring,2026-03-14T06:08:00,60\n"
    "S008,marlow-bakery,2026-03-14T25:00:00,60\n"
    "S009,marlow-bakery,2026-03-14T06:12:00,60\n";

const char* kExpected[][2] = {{"S001", "aired"}, {"S002", "wrong_version"}, {"S003", "late"}, {"S004", "aired"},
                              {"S005", "missing"}, {"S006", "aired"}, {"S007", "partial"}, {"S009", "early"}};

int make_demo(const fs::path& out) {
  fs::create_directories(out / "library");
  fs::create_directories(out / "airchecks");
  fs::create_directories(out / "schedules");
  std::map<std::string, Samples> masters;
  for (const auto& s : kSpots) {
    Samples bed = synth::music(s.duration_s, kRate, s.bed_seed);
    synth::set_rms(bed, 0.06);
    Samples v = speech(s.line, s.tag[0] ? s.tag_at_s : s.duration_s, s.bed_seed * 10, out);
    synth::mix_into(bed, v, static_cast<size_t>(0.3 * kRate), 1.0);
    if (s.tag[0]) {
      Samples t = speech(s.tag, s.duration_s - s.tag_at_s, std::hash<std::string>{}(s.tag), out);
      synth::mix_into(bed, t, static_cast<size_t>(s.tag_at_s * kRate), 1.0);
    }
    bed.resize(static_cast<size_t>(s.duration_s * kRate));
    synth::set_rms(bed, 0.12);
    const auto path = (out / "library" / (std::string(s.id) + ".wav")).string();
    if (auto err = synth::write_audio(path, synth::to_stereo(bed), 2, kRate); !err.empty()) {
      std::cerr << "godwit-synth: " << err << "\n";
      return 1;
    }
    nlohmann::json meta{{"title", s.title}, {"advertiser", s.advertiser}};
    if (s.family[0]) meta["family"] = s.family;
    std::ofstream(out / "library" / (std::string(s.id) + ".meta.json")) << meta.dump(2) << "\n";
    masters[s.id] = std::move(bed);
  }
  // 14 minutes of programme from 06:00:00, cut into three files.
  const double length_s = 840;
  Samples air = synth::programme(length_s, kRate, 2026);
  nlohmann::json truth = nlohmann::json::array();
  for (const auto& a : kAired) {
    const Samples& m = masters[a.id];
    const size_t at = static_cast<size_t>(std::llround(a.at_s * kRate));
    const size_t len = a.cut_after_s > 0 ? static_cast<size_t>(a.cut_after_s * kRate) : m.size();
    for (size_t i = 0; i < len && at + i < air.size(); ++i)
      air[at + i] = static_cast<float>(a.polarity * std::pow(10.0, a.gain_db / 20.0) * m[i]);
    truth.push_back({{"spot", a.id},
                     {"aired", format_iso8601_local(parse_iso8601_local("2026-03-14T06:00:00").value() +
                                                        static_cast<double>(at) / kRate, 6)},
                     {"polarity", a.polarity},
                     {"coverage", static_cast<double>(len) / static_cast<double>(m.size())}});
  }
  Samples noise = synth::white_noise(air.size(), synth::rms(air) * std::pow(10.0, -30.0 / 20.0), 7);
  for (size_t i = 0; i < air.size(); ++i) air[i] += noise[i];
  nlohmann::json files = nlohmann::json::array();
  const struct { const char* name; double from_s, to_s; } kFiles[] = {
      {"kestrel-fm-20260314T060000.flac", 0, 300},
      {"kestrel-fm-20260314T060500.flac", 300, 600},
      {"kestrel-fm-20260314T061000.flac", 600, 840}};
  for (const auto& f : kFiles) {
    Samples part(air.begin() + static_cast<long>(f.from_s * kRate), air.begin() + static_cast<long>(f.to_s * kRate));
    const auto rec = (out / "airchecks" / f.name).string();
    if (auto err = synth::write_audio(rec, synth::to_stereo(part, 0.95), 2, kRate); !err.empty()) {
      std::cerr << "godwit-synth: " << err << "\n";
      return 1;
    }
    files.push_back(rec);
  }
  std::ofstream(out / "schedules" / "kestrel-fm-2026-03-14.csv") << kPlannedLog;
  nlohmann::json expected = nlohmann::json::object();
  for (const auto& e : kExpected) expected[e[0]] = e[1];
  std::ofstream(out / "truth.json") << nlohmann::json{{"recordings", files},
                                                      {"airings", truth},
                                                      {"expected_verdicts", expected},
                                                      {"expected_unscheduled", {"pellham-garden-centre"}},
                                                      {"expected_bad_log_lines", {9}}}
                                           .dump(2)
                                    << "\n";
  std::cerr << "godwit-synth: demo written to " << out.string() << "\n";
  return 0;
}

// A day of reconciliation results for rendering tests: `placements` slots
// over 24 h with most verdicts represented, recorded in hour files but for
// a gap at 14:00. The evidence is made up (a
// rendering fixture, not a detection); it never leaves the test.
int make_report_fixture(const std::string& out, int placements) {
  ReconcileResult r;
  const LocalSeconds day = *parse_iso8601_local("2026-03-14T00:00:00");
  synth::Rng rng(42);
  const VerdictStatus statuses[] = {VerdictStatus::aired, VerdictStatus::aired, VerdictStatus::aired, VerdictStatus::early,
                                    VerdictStatus::late, VerdictStatus::partial, VerdictStatus::wrong_version,
                                    VerdictStatus::missing};
  for (int i = 0; i < placements; ++i) {
    Placement p;
    p.slot = "L" + std::to_string(i + 1);
    p.spot = kSpots[static_cast<size_t>(i) % 6].id;
    p.planned_s = day + 86400.0 * (i + 0.5) / placements;
    p.planned = format_iso8601_local(p.planned_s, 0);
    p.window_s = 60;
    p.line = static_cast<size_t>(i + 2);
    Verdict v;
    v.placement = static_cast<size_t>(i);
    v.status = statuses[rng.next() % 8];
    if (p.planned_s >= day + 14 * 3600.0 && p.planned_s < day + 15 * 3600.0) v.status = VerdictStatus::not_recorded;
    if (v.status != VerdictStatus::missing && v.status != VerdictStatus::not_recorded) {
      AiringRecord a;
      a.spot = p.spot;
      v.deviation_s = v.status == VerdictStatus::early ? -120 : v.status == VerdictStatus::late ? 150 : rng.uniform(-30, 30);
      a.aired_s = p.planned_s + v.deviation_s;
      a.recording = "kestrel-fm-" + format_iso8601_local(a.aired_s, 0).substr(0, 13) + ".flac";
      a.offset_s = std::fmod(a.aired_s - day, 3600.0);
      a.score = rng.uniform(0.7, 1.0);
      a.coverage = v.status == VerdictStatus::partial ? 0.6 : 1.0;
      a.length_s = 30;
      a.profile.segment_s = 1;
      for (int k = 0; k < 30; ++k) a.profile.scores.push_back(static_cast<float>(k < 30 * a.coverage ? a.score : 0.02));
      a.spot_lufs = rng.uniform(-20, -14);
      a.programme_lufs = rng.uniform(-20, -16);
      v.airing = r.airings.size();
      r.airings.push_back(std::move(a));
    }
    r.placements.push_back(p);
    r.verdicts.push_back(v);
  }
  // The day recorded in hour files, one hour (14:00) lost to a gap.
  for (int hour = 0; hour < 24; ++hour) {
    if (hour == 14) continue;
    RecordingStatus rec;
    rec.path = "kestrel-fm-" + format_iso8601_local(day + hour * 3600.0, 0).substr(0, 13) + ".flac";
    rec.start_s = day + hour * 3600.0;
    rec.duration_s = 3600;
    rec.native_rate_hz = 44100;
    rec.format = "flac";
    rec.channels = 2;
    r.recordings.push_back(rec);
  }
  r.recorded = {{day, day + 14 * 3600.0}, {day + 15 * 3600.0, day + 86400.0}};
  TimelineIssue gap;
  gap.before = r.recordings[13].path;
  gap.after = r.recordings[14].path;
  gap.at_s = day + 14 * 3600.0;
  gap.seconds = 3600;
  r.timeline_issues.push_back(gap);
  for (const auto& s : kSpots) r.spots[s.id] = {std::string(s.id) + ".wav", s.duration_s, {s.title, s.advertiser, s.family}};
  HtmlReportOptions ho;
  ho.title = "kestrel-fm-2026-03-14";
  std::ofstream(out) << reconcile_to_html(r, ho);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"godwit-synth: the project's own synthetic broadcast audio"};
  app.require_subcommand(1);
  std::string out;
  auto* demo = app.add_subcommand("demo", "write the demo scenario (masters, aircheck, truth)");
  demo->add_option("--out", out, "output folder")->required();
  int placements = 300;
  std::string fixture_out;
  auto* fixture = app.add_subcommand("report-fixture", "an HTML report of a made-up 24 h day, for rendering tests");
  fixture->add_option("--placements", placements, "placements over the day (default 300)");
  fixture->add_option("--out", fixture_out, "output HTML file")->required();
  synth::AirDayOptions day_options;
  double file_min = 60;
  auto* day = app.add_subcommand("day", "a broadcast day with its library and planned log (air_day.h)");
  day->add_option("--out", day_options.dir, "output folder (library/, air/, planned.csv)")->required();
  day->add_option("--hours", day_options.hours, "length of the day in hours (default 6)");
  day->add_option("--file-min", file_min, "length of each recording in minutes (default 60)");
  day->add_option("--seed", day_options.seed, "scenario seed (default 1)");
  day->add_option("--start", day_options.start, "the first recording's start, local (default 2026-05-20T06:00:00)");
  day->add_flag("--reuse", day_options.reuse, "keep audio a previous run with the same options wrote there");
  CLI11_PARSE(app, argc, argv);
  if (*demo) return make_demo(out);
  if (*day) {
    day_options.file_s = file_min * 60;
    day_options.log = [](const std::string& s) { std::cerr << "godwit-synth: " << s << "\n"; };
    std::string err;
    if (!synth::make_air_day(day_options, &err)) {
      std::cerr << "godwit-synth: " << err << "\n";
      return 1;
    }
    return 0;
  }
  if (*fixture) return make_report_fixture(fixture_out, placements);
  return 0;
}
