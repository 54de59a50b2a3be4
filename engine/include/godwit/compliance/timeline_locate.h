// A locate job as the `locate` command and the daemon run it: one
// detection per airing.
//
// Recordings whose names carry their start time (`name_pattern`, as for
// reconcile) and that follow each other form one timeline: each run of
// consecutive files is searched as one stream (concat_source.h; rates,
// channels and codecs may differ), so an airing that straddles two files is
// found once and reported in the file holding its first sample, at its
// offset there. When any name carries no time, every file is searched on
// its own. Every detection is then confirmed as reconcile confirms it
// (verification profile and foreground contrast: a music bed aired alone is
// not an airing), and sibling versions detected at one airing are resolved
// (version_choice.h): the version whose distinguishing audio matched best is
// the match, the others its `alternatives`. Files that cannot be read whole
// are searched alone, as far as they go.
//
// Thread contract: as run_locate.
#pragma once

#include <string>

#include "godwit/compliance/families.h"
#include "godwit/search/job.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/compliance/verifier.h"
#include "godwit/compliance/version_choice.h"

namespace godwit {

struct TimelineLocateOptions {
  // Default: 20260314T060000 anywhere in the name; empty: every file on its own.
  std::string name_pattern = "%Y%m%dT%H%M%S";
  double tolerance_s = 0.5;  // files closer than this are consecutive
  bool confirm = true;           // drop detections that fail the confirmation
  bool resolve_versions = true;
  double min_airing_score = ReconcileOptions{}.min_airing_score;
  double max_foreground_deficit = ReconcileOptions{}.max_foreground_deficit;
  double min_foreground_evidence = ReconcileOptions{}.min_foreground_evidence;
  FamilyOptions families;
  VerifyOptions verify;
  VersionOptions versions;
};

// Recordings are reported in the job's order, each with its own format,
// rate and length; matches by recording (job order), then offset, each
// with its place in the job (Match::recording_id): a file given twice is
// two recordings.
// run_locate_job = plan_locate + run_locate over the plan's streams (through
// plan.streams.opener) + finish_locate; a distributed job searches the streams in
// tasks and finishes the same way.
Result<LocateResult> run_locate_job(const LocateJob& job, const LocateOptions& options,
                                    const TimelineLocateOptions& timeline_options = {});

struct LocatePlan {
  ReconcilePlan plan;               // the recordings and their timeline
  std::vector<SearchStreams::Alone> alone;  // files searched on their own (not readable whole)
  std::vector<std::string> streams; // what to search: plan.streams.names() (the files alone, then the runs)
};
LocatePlan plan_locate(const LocateJob& job, const LocateOptions& options, const TimelineLocateOptions& timeline_options);
// `search`: the result of searching plan.streams in that order (its
// matches' recording_id a place in plan.streams.names()). `evidence`,
// when given, holds gather_evidence's answer for each of its matches in
// order (a task gathers it beside the audio); otherwise it is gathered here.
Result<LocateResult> finish_locate(const LocatePlan& plan, LocateResult search, const LocateOptions& options,
                                   const TimelineLocateOptions& timeline_options,
                                   std::vector<std::optional<DetectionEvidence>> evidence = {});

}  // namespace godwit
