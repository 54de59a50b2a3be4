// Task plan: how a prepared job (JobRunner::prepare) splits into tasks for
// the queue, and how the tasks' results merge back into the job's result.
//
// A locate job splits into (recording file x batch of templates) tasks: the
// engine scores each (master, recording) pair on its own, so the merged
// matches are those of the whole job. A reconcile job is one task: its
// verification, sibling versions and verdicts need the whole day and every
// master at once; a network spreads its station-days over the workers.
//
// A task's id is a hash of its job id, its place in the plan and its spec
// (FNV-1a, 64 bits, hex):
// planning the same job twice gives the same ids, so enqueuing or storing a
// task twice is harmless.
//
// Thread contract: plain functions.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "godwit/error.h"

namespace godwit {

struct PlannedTask {
  std::string id;
  nlohmann::json spec;  // a job spec JobRunner::run accepts
};

std::vector<PlannedTask> plan_tasks(const std::string& job_id, const nlohmann::json& spec, size_t templates_per_task);

// The job's result from its tasks' results, in plan order. Errors: a task
// result that is not a document of the job's kind.
Result<nlohmann::json> merge_results(const nlohmann::json& spec, const std::vector<PlannedTask>& tasks,
                                     const std::vector<nlohmann::json>& results);

}  // namespace godwit
