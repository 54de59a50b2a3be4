// Synthetic days for the store of record's tests and benchmark: a station's
// day of recordings, masters, detections and placements with plausible
// shapes (no audio). Fictional stations and advertisers only.
#pragma once

#include <cstdio>
#include <string>

#include "file_digest.h"
#include "godwit/compliance/civil_time.h"
#include "record_store.h"

namespace godwit::test {

struct SyntheticDay {
  std::string station = "kestrel-fm";
  std::string day = "2026-03-14";  // YYYY-MM-DD
  size_t airings = 500;            // detections over the day
  size_t spots = 50;               // masters spot-00 ... (advertiser "Advertiser NN", spots % advertisers)
  size_t advertisers = 20;
  unsigned variant = 0;            // changes the job key (a re-run) and, when odd, every offset by 1 s
};

inline std::string spot_name(size_t i) {
  char b[32];
  std::snprintf(b, sizeof b, "spot-%02zu", i);
  return b;
}
inline std::string advertiser_name(size_t i) {
  char b[32];
  std::snprintf(b, sizeof b, "Advertiser %02zu", i);
  return b;
}

// Every 10th airing is unscheduled; the other placements aired, except
// every 13th late and every 17th partial; one placement in 20 is missing
// (no airing).
inline JobRecord synthetic_day(const SyntheticDay& d) {
  JobRecord job;
  job.station = d.station;
  job.key = d.station + "-" + d.day + "-" + std::to_string(d.variant);
  job.source = "test";
  job.schedule = "/logs/" + d.station + "-" + d.day + ".csv";
  job.software = "test";
  job.finished_utc = 1700000000;
  job.options_sha256 = sha256_hex("options");
  const LocalSeconds midnight = *parse_iso8601_local(d.day + "T00:00:00");
  std::string compact = d.day;
  compact.erase(4, 1);
  compact.erase(6, 1);
  for (int h = 0; h < 24; ++h) {
    RecordingRow r;
    char name[96];
    std::snprintf(name, sizeof name, "/air/%s-%sT%02d0000.flac", d.station.c_str(), compact.c_str(), h);
    r.path = name;
    r.sha256 = sha256_hex(r.path);
    r.start_local = midnight + 3600.0 * h;
    r.duration_s = 3600;
    r.rate_hz = 48000;
    r.codec = "FLAC";
    r.channels = 2;
    job.recordings.push_back(r);
  }
  for (size_t s = 0; s < d.spots; ++s) {
    MasterRow m;
    m.spot = spot_name(s);
    m.sha256 = sha256_hex(m.spot);
    m.path = "/library/" + m.spot + ".wav";
    m.title = "Title of " + m.spot;
    m.advertiser = advertiser_name(s % d.advertisers);
    m.length_s = 30;
    job.masters.push_back(m);
  }
  const double step_s = 86400.0 / static_cast<double>(d.airings);
  size_t slot = 0;
  for (size_t i = 0; i < d.airings; ++i) {
    DetectionRow x;
    x.aired_local = midnight + step_s * (static_cast<double>(i) + 0.25) + (d.variant % 2 ? 1.0 : 0.0);
    x.recording = static_cast<size_t>((x.aired_local - midnight) / 3600);
    x.offset_s = x.aired_local - *job.recordings[x.recording].start_local;
    x.spot = spot_name((i * 7) % d.spots);
    x.score = 0.9;
    x.coverage = i % 17 == 0 ? 0.5 : 1.0;
    x.length_s = 30;
    x.spot_lufs = -18.0;
    x.programme_lufs = -20.0;
    x.unscheduled = i % 10 == 9;
    job.detections.push_back(x);
    if (x.unscheduled) continue;
    PlacementRow p;
    char b[32];
    std::snprintf(b, sizeof b, "S%04zu", ++slot);
    p.slot = b;
    p.spot = x.spot;
    p.advertiser = advertiser_name(((i * 7) % d.spots) % d.advertisers);
    p.planned_local = x.aired_local - (i % 13 == 0 ? 120 : 5);
    p.planned = format_iso8601_local(p.planned_local, 0);
    p.window_s = 60;
    p.status = i % 17 == 0 ? "partial" : i % 13 == 0 ? "late" : "aired";
    p.deviation_s = x.aired_local - p.planned_local;
    p.detection = i;
    p.detected_spot = x.spot;
    job.placements.push_back(p);
    if (i % 20 == 0) {  // a booking that did not air, beside it
      PlacementRow m = p;
      std::snprintf(b, sizeof b, "S%04zu", ++slot);
      m.slot = b;
      m.status = "missing";
      m.deviation_s.reset();
      m.detection.reset();
      m.detected_spot.clear();
      m.planned_local += 30;
      m.planned = format_iso8601_local(m.planned_local, 0);
      job.placements.push_back(m);
    }
  }
  return job;
}

}  // namespace godwit::test
