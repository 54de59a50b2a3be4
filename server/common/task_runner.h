// TaskRunner: where a planned job's tasks (task_plan.h) run, and how the
// evidence of their detections is gathered; InProcessTaskRunner runs them
// here with the job's own search options (the command line).
//
// A runner returns one locate document per task, exact numbers, in plan
// order. Whoever finishes the job (planned_reconcile.h, planned_job.h)
// asks it for the evidence of the merged detections when the tasks gave
// none (a runner that keeps results, stored_tasks.h, keeps evidence too).
//
// Thread contract: a TaskRunner is used by one job at a time.
#pragma once

#include <functional>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "godwit/compliance/reconcile_job.h"
#include "godwit/core/error.h"
#include "job_spec.h"
#include "task_plan.h"

namespace godwit {

// How many (piece x master) searches a job ran and how many it read back
// from the store of record instead (stored_tasks.h); evidence likewise;
// and whether its sibling discovery (families.h) ran or was read back.
struct SearchCounts {
  size_t searched = 0, reused = 0;
  size_t evidence_gathered = 0, evidence_reused = 0;
  size_t families_found = 0, families_reused = 0;
  nlohmann::json to_json() const {
    return {{"searched", searched},
            {"reused", reused},
            {"evidence_gathered", evidence_gathered},
            {"evidence_reused", evidence_reused},
            {"families_found", families_found},
            {"families_reused", families_reused}};
  }
};

class TaskRunner {
 public:
  virtual ~TaskRunner() = default;
  // The results of `tasks` in plan order. Errors: cancelled, a task that
  // failed (its error), the runner's own (internal).
  virtual Result<std::vector<nlohmann::json>> run(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                                  const std::function<void(double)>& progress,
                                                  const std::function<bool()>& should_stop,
                                                  const std::function<void(std::string_view)>& warn) = 0;
  // Called once the job's result exists: what the runner kept for it may go.
  virtual void finished(const std::string& /*job_id*/, const std::vector<PlannedTask>& /*tasks*/) {}
  // True: the tasks search only, and the finish asks evidence() for the
  // detections' evidence. False (the default): each task gathers the
  // evidence of its own detections beside the audio.
  virtual bool evidence_after() const { return false; }
  // The evidence of `matches` (offsets in the time of the run `parts`).
  virtual std::vector<std::optional<DetectionEvidence>> evidence(const std::vector<TemplateReport>& templates,
                                                                 const std::vector<ConcatPart>& parts,
                                                                 const std::vector<Match>& matches,
                                                                 const ReconcileOptions& options) {
    counts_.evidence_gathered += matches.size();
    return gather_evidence(templates, parts, matches, options);
  }
  // The job's families (ReconcileOptions::families_source): `find` runs
  // sibling discovery; a runner that keeps results may read them back.
  virtual Result<Families> families(const FamilyQuery& /*query*/, const std::function<Result<Families>()>& find) {
    ++counts_.families_found;
    return find();
  }
  // `options` with their families asked of this runner (which must outlive
  // every use of them).
  void ask_families(ReconcileOptions& options) {
    options.families_source = [this](const FamilyQuery& q, const std::function<Result<Families>()>& find) {
      return families(q, find);
    };
  }
  const SearchCounts& counts() const { return counts_; }

 protected:
  SearchCounts counts_;
};

// A segment task searched here with `options` (the job's; the spec's own
// search fields are not applied): the locate document JobRunner::run gives.
Result<nlohmann::json> run_segment_spec(const SegmentSpec& spec, LocateOptions options);

// Runs each task here, one after another, with the job's `options`.
class InProcessTaskRunner : public TaskRunner {
 public:
  explicit InProcessTaskRunner(LocateOptions options) : options_(std::move(options)) {}
  Result<std::vector<nlohmann::json>> run(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                          const std::function<void(double)>& progress,
                                          const std::function<bool()>& should_stop,
                                          const std::function<void(std::string_view)>& warn) override;
  bool evidence_after() const override { return true; }  // with the job's own options

 private:
  LocateOptions options_;
};

}  // namespace godwit
