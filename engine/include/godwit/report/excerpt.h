// Excerpts to listen to: each airing of a reconciliation cut from its
// recordings with a little before and after, and each master heard, encoded
// compactly (Ogg Opus through libsndfile), with a level envelope of each for
// a picture of the aired part against the master.
//
// The engine makes the bytes and the names; where they are kept is the
// caller's (`ExcerptSink`: a folder beside a report, a job's result
// folder). An airing is cut from its run's stream (ConcatSource over the
// run's files, as its evidence was gathered: detection_evidence.cc), so an
// excerpt crosses file boundaries, at the native rate of the file where the
// airing starts; a run's other files at other rates are resampled to it.
//
// Encoding: mono (the channel mean, as the search hears it; stereo would
// double the size for little help in recognising a spot), resampled
// (libsoxr) to `encode_rate_hz` since Opus takes only 8/12/16/24/48 kHz, at
// about `bitrate_bps`. Default 8.5 kbit/s: about 37 KB for a 30 s airing
// with its 2 s either side (README: measured on the demo). That is speech
// quality, enough to tell one spot from another by ear, not a copy of the
// air sound; the recordings themselves remain the evidence.
//
// Thread contract: plain functions; each call has its own encoder.
#pragma once

#include <functional>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/audio/concat_source.h"
#include "godwit/core/error.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/core/types.h"

namespace godwit {

struct ExcerptRef;

// What an excerpt is cut from and how, for a caller that keeps excerpts
// between reports (ExcerptOptions::kept): `key`, canonical text of the
// files read (path, frames skipped and read, rate; for an airing every file
// of its run up to the last one its cut reaches, which fix where the cut
// falls), the span, and the encoding options; `files`, those paths. Equal
// keys give equal audio, hence equal excerpts, while the files named are
// unchanged: the caller knows how a file changes (size, modification time)
// and checks that.
struct ExcerptOrigin {
  std::string key;
  std::vector<std::string> files;
};

struct ExcerptOptions {
  // The folder the files are named under, relative to the report ("listen":
  // listen/S001_20260314T060037.250.opus). Plain name, no '/'.
  std::string folder = "listen";
  double pad_s = 2;               // recording kept before and after each airing. Default 2 s
  double bitrate_bps = 8500;      // Opus target, per channel (libsndfile maps 6 to 256 kbit/s)
  double encode_rate_hz = 24000;  // one of 8000, 12000, 16000, 24000, 48000
  double envelope_step_s = 0.2;   // one RMS level per step, for the picture
  std::function<bool()> should_stop;  // polled between excerpts; true: cancelled
  // Excerpts made for an earlier report (a day's page rebuilt as its hours
  // arrive): asked for each excerpt, by the name it gets here and its
  // origin, before it is cut. A ref returned means the sink's place already
  // holds that excerpt under that name (the caller put it there): it is
  // used as is, nothing read, cut or encoded. Empty: every excerpt made.
  std::function<std::optional<ExcerptRef>(const std::string& name, const ExcerptOrigin& origin)> kept;
};

// RMS level of mono audio, one value per step, in dBFS (floored at -120).
struct LevelEnvelope {
  double step_s = 0;
  std::vector<float> dbfs;
};

LevelEnvelope level_envelope(const float* samples, size_t frames, double rate_hz, double step_s);

// Encodes mono samples as Ogg Opus at `rate_hz` (resampled first when it is
// not options.encode_rate_hz). Errors: unsupported (the installed
// libsndfile cannot write Opus), io (the encoder failed).
Result<std::string> encode_excerpt(const Samples& mono, double rate_hz, const ExcerptOptions& options);

struct ExcerptRef {
  std::string file;      // relative to the report: "<folder>/<name>"
  double from_s = 0;     // its first sample, in seconds from the airing's start (-pad_s unless clipped); 0 for a master
  double duration_s = 0;
  double rate_hz = 0;    // the native rate it was cut at
  size_t bytes = 0;
  LevelEnvelope envelope;  // of what was cut, before encoding
};

struct Listening {
  std::string folder;                              // as ExcerptOptions::folder
  std::map<size_t, ExcerptRef> airings;            // by index into ReconcileResult::airings
  std::map<std::string, ExcerptRef> masters;       // by spot id
  std::vector<std::string> problems;               // excerpts that could not be made, for people
  std::map<std::string, ExcerptOrigin> origins;    // by file name (no folder), each excerpt's, made or kept
  size_t kept = 0;                                 // how many ExcerptOptions::kept gave
};

// Keeps one encoded file: `name` is a plain file name (no folder) made of
// [A-Za-z0-9._-]. An error stops make_excerpts and is returned by it.
using ExcerptSink = std::function<Status(const std::string& name, const std::string& bytes)>;

// Cuts and encodes the excerpt of every airing of `r` (assigned to a
// placement or unscheduled) and the master of every spot heard in them,
// handing each to `sink` as it is made. Names: "<slot>_<aired, basic ISO
// 8601 to ms>.opus" for an assigned airing, "unscheduled_<aired>.opus",
// "master_<spot>.opus"; characters outside [A-Za-z0-9._-] become '_', and
// names made equal by that get "-2", "-3"... An excerpt that cannot be cut
// (its recording or master unreadable) is left out and named in
// `problems`; the rest go on. Errors, which stop it (what the sink kept
// stays): the sink's, the encoder's (unsupported: this libsndfile cannot
// write Opus), cancelled.
Result<Listening> make_excerpts(const ReconcileResult& r, const SourceOpener& opener, const ExcerptOptions& options,
                                const ExcerptSink& sink);

// A name safe on every common file system: [A-Za-z0-9._-] kept, anything
// else '_', at most `max_chars`, never starting with '.'.
std::string safe_file_name(const std::string& text, size_t max_chars = 64);

}  // namespace godwit
