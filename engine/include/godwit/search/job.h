// Start here. A locate job: which masters to find in which recordings, and
// how. The same job runs from the command line, a TCP request or the drop
// folder; the caller supplies policy (progress display, cancellation,
// logging, where files come from) through LocateOptions.
//
// Data flow: masters -> TemplateBank; each recording -> AnalysisStream ->
// Correlator -> PeakPicker per template -> native-rate refinement -> Match.
// Beside the Correlator, the speed search (speed_search.h) finds airings
// played at another speed; they become Matches with `speed` != 1.
//
// Thread contract: run_locate may run several jobs concurrently (each has
// its own state); callbacks are invoked on the thread that called it.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/audio/master_library.h"
#include "godwit/search/correlator.h"
#include "godwit/core/error.h"
#include "godwit/search/peak_picker.h"
#include "godwit/search/recording_id.h"
#include "godwit/search/screen_options.h"
#include "godwit/speed/speed_search.h"
#include "godwit/search/template_bank.h"

namespace godwit {

struct LocateJob {
  std::vector<std::string> templates;   // master files; id = file stem
  std::vector<std::string> recordings;  // searched in this order
};

struct Progress {
  size_t recording_index = 0;               // 0-based, of recordings.size()
  size_t recordings = 0;
  double recording_done_s = 0;              // audio processed in this recording
  std::optional<double> recording_total_s;  // when the file states its length
  double fraction = 0;                      // whole job, 0..1 (estimate)
};

struct LocateOptions {
  double analysis_rate_hz = 8000;  // Default: 8000 Hz.
  ChannelChoice channel;           // of recordings; masters are always the channel mean
  PickerOptions picker;
  CorrelatorOptions correlator;
  BankOptions bank;
  SpeedOptions speed;
  ScreenOptions screen;  // a cheap first pass (screen_options.h); off: the full search
  bool refine = true;  // native-rate offset refinement (Default: on)
  SourceOpener opener = file_opener();
  // The job's masters, decoded once for every stage (master_library.h).
  // Empty: run_locate makes one that keeps nothing (each stage decodes).
  std::shared_ptr<MasterLibrary> masters;
  // Called about every few seconds of audio; keep it cheap.
  std::function<void(const Progress&)> on_progress;
  // Polled between blocks; returning true ends the job with `cancelled`.
  std::function<bool()> should_stop;
  // Warnings for people (a recording that broke, a refinement that failed).
  std::function<void(std::string_view)> on_diagnostic;
};

struct Match {
  std::string template_id;
  // Which recording of the job: the identity (recording_id.h). `recording`
  // is its path as given, for reports and for people.
  RecordingId recording_id;
  std::string recording;
  double offset_s = 0;    // time of the master's first sample in the recording
  double score = 0;       // analysis-rate peak score, in [-1, 1]
  int polarity = 1;       // -1: aired polarity-inverted
  // The airing plays `speed` times faster than the master (duration
  // master / speed, pitch * speed); 1 when unchanged.
  double speed = 1;
  // The airing lasts master / `tempo` at the master's pitch (a
  // time-stretcher; speed_search.h); 1 when unchanged. At most one of speed
  // and tempo differs from 1.
  double tempo = 1;
  bool refined = false;   // offset refined at the recording's native rate
  // Sibling versions also detected at this airing (version_choice.h), with
  // their scores; this match is the version whose distinguishing audio
  // matched best. `version_undetermined`: that audio did not air (or
  // matched alike), so the alternatives fit as well as this one.
  struct Alternative {
    std::string template_id;
    double score = 0;           // its detection score
    double distinguishing = 0;  // mean segment score over its distinguishing audio
  };
  std::vector<Alternative> alternatives;
  // From the confirmation (timeline_locate.h): the fraction of the master
  // that aired and was recorded, and the parts that did not ([from, to) in
  // master seconds: a cut, the edge of the recordings, a gap).
  std::optional<double> coverage;
  std::vector<std::pair<double, double>> missing_s;
  double distinguishing = 0;    // this version's, when alternatives exist
  bool version_undetermined = false;
};

struct RecordingReport {
  std::string path;
  std::string format;
  double duration_s = 0;  // audio actually decoded
  double native_rate_hz = 0;
  int channels = 0;
  // Set when the recording could not be read at all, or broke part way
  // (then `duration_s` says how far it got and matches found before the
  // break are kept).
  std::optional<Error> error;
  double decode_s = 0, resample_s = 0;  // wall time reading it (LocateResult::StepTimes)
};

struct TemplateReport {
  std::string id;
  std::string path;
  double duration_s = 0;
  size_t fft_size = 0;
};

struct LocateResult {
  double analysis_rate_hz = 0;
  std::vector<TemplateReport> templates;
  std::vector<RecordingReport> recordings;  // one per recording of the job, in its order
  std::vector<Match> matches;  // by recording (job order), then offset
  size_t unconfirmed = 0;      // detections that failed the confirmation (timeline_locate.h)
  // The screened search's work (screen_options.h), over all recordings:
  // peaks of the screen, spans then scored exactly, (span, master) pairs.
  size_t screen_candidates = 0, exact_spans = 0, exact_span_masters = 0;
  // Where the job's time went: wall seconds of each step on the thread
  // that ran it, summed over recordings. Decoding and resampling run on a
  // reader thread ahead of the search, so the steps overlap and their sum
  // may exceed the job's wall time.
  struct StepTimes {
    double masters_s = 0;           // decoding the masters, building the banks
    double decode_s = 0;            // reading recordings: decoding, downmix
    double resample_s = 0;          // to the analysis rate
    double search_s = 0;            // the plain search (full, or screened)
    double screen_decimate_s = 0, screen_correlate_s = 0, exact_spans_s = 0;  // within search_s
    double speed_scan_s = 0;        // the speed search's envelopes and coarse grid
    double speed_fit_s = 0;         // its fits (speed and tempo)
    double refine_s = 0;            // native-rate offset refinement
  } times;
  bool complete() const {
    for (const auto& r : recordings)
      if (r.error) return false;
    return true;
  }
};

// Errors for the whole job: usage (no templates, duplicate ids, bad rate),
// a master that cannot be read (its code), cancelled. Problems with one
// recording are reported in its RecordingReport and do not stop the job.
Result<LocateResult> run_locate(const LocateJob& job, const LocateOptions& options);

// File stem used as template id: "/lib/spot_a.v2.wav" -> "spot_a.v2".
std::string template_id_for(const std::string& path);

}  // namespace godwit
