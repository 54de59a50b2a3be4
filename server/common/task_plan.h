// Task plan: how a job splits into tasks for the queue, and how the tasks'
// results merge back into the job's search.
//
// Every task searches one segment (segment_task.h) of one stream for a
// batch of masters: a locate job's streams are its recordings, a reconcile
// job's are the runs of its timeline (plan_reconcile), so both split the
// same way, into (hour x batch of masters) tasks. The engine scores each
// (master, stream) pair on its own and a segment reads past what it owns,
// so the merged matches are those of one process; a detection seen by two
// segments near their boundary is kept once. A reconcile job's
// verification, versions and verdicts then run on the merged search
// (finish_reconcile).
//
// A task's id is a hash of its job id, its place in the plan and its spec
// (FNV-1a, 64 bits, hex): planning the same job twice gives the same ids,
// so enqueuing or storing a task twice is harmless.
//
// Thread contract: plain functions.
#pragma once

#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "godwit/core/error.h"
#include "godwit/search/job.h"
#include "job_spec.h"
#include "segment_task.h"

namespace godwit {

struct PlannedTask {
  std::string id;
  nlohmann::json spec;  // a SegmentSpec (job_spec.h), which JobRunner::run accepts
  size_t stream = 0;    // index into the plan's streams
};

struct PlanOptions {
  size_t templates_per_task = 25;
  double span_s = 3600;  // a stream over 1.5 spans is split into spans. Default: an hour
  // Instead of spans of the stream: a run of files splits at its files
  // (split_at_files; a long file's body still in spans of span_s), so that
  // a file's search is the same task whatever run it is part of, and can
  // be kept and reused (stored_tasks.h).
  bool at_files = false;
};

// What a segment reads beyond what it owns: the longest airing (the
// longest master at the lowest speed or tempo searched: pass the larger of
// the two ranges) plus the reach of the noise
// floor (about 4.4 s each side) and of peak suppression, with room.
double segment_margin_s(const std::vector<std::string>& templates, double max_speed_change_pct);

// A stream of files cut where its files meet: around each meeting point
// a piece owning `margin_s` before it and kPieceLeadS after it (and one at
// each end of the stream), and between them each file's body, owning the
// rest of the file and reading exactly that file. A piece reads
// kPieceLeadS before what it owns (the reach of the noise floor and of
// peak suppression; from the 64 s grid of the file it starts in) and
// `margin_s` after it (the longest airing), within the stream, so an airing
// across two files is owned by the piece around their meeting point and
// found once. Pieces that would overlap (short files) merge. A stream
// without parts is one segment. A body over 1.5 `span_s` splits into
// pieces owning `span_s` each from the body's start (a last one under a
// quarter span joins the one before), read as the others are: a long file
// is shared among workers, and its pieces are the same in every run.
constexpr double kPieceLeadS = 12;
std::vector<Segment> split_at_files(const Stream& stream, double margin_s,
                                    double span_s = std::numeric_limits<double>::infinity());

// `base`: what every task carries (its search fields, whether it gathers
// evidence); its segment and templates are set per task. `margin_s`: as
// split_stream's.
std::vector<PlannedTask> plan_tasks(const std::string& job_id, const SegmentSpec& base,
                                    const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                    double margin_s, const PlanOptions& options);

struct MergedSearch {
  LocateResult search;
  // One per match of `search`: the evidence its task gathered (reconcile
  // tasks, evidence_to_json), null where its task gave none.
  std::vector<nlohmann::json> evidence;
};

// The job's search from its tasks' results (in plan order): templates in
// `templates` order; one recording report per stream, keeping the
// earliest error and the furthest point decoded; matches by stream, then
// offset, then template, each with its task's stream as its recording_id
// (streams may share a name: a file listed twice). Errors: a result that
// is not a locate document or reports more than one recording, or a count
// that differs from the plan's.
Result<MergedSearch> merge_results(const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                   const std::vector<PlannedTask>& tasks, const std::vector<nlohmann::json>& results);

}  // namespace godwit
