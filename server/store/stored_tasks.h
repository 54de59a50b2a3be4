// StoredTaskRunner: each piece of a recording searched once. A TaskRunner
// (task_runner.h) that keeps what its inner runner found in the store of
// record and reads it back instead of searching again.
//
// Kept per (piece, master), kind "search": a piece is what a task read and
// owned (its files by SHA-256 with the frames read, the part it owns, the
// stream's rate), with the search options' fingerprint and the engine's
// version; the master by its SHA-256 and id. The matches are kept with
// offsets from the piece's first frame read, so a file's piece found in one
// run of files (the drop folder's hour alone, then its day) is the same
// piece in another. Plans split at files (PlanOptions::at_files) make a
// file's body one piece whatever run it is in; only the pieces around the
// points where a new file meets its neighbours are new.
//
// Kept per detection, kind "evidence": its verification and loudness,
// keyed by the files around it (the programme before it included), its
// numbers relative to them, the master, and the evidence options.
//
// Kept per job's masters, kind "families": its sibling discovery
// (stored_families.h).
//
// A task whose recording failed (a decoding error) is returned, not kept.
// counts() says how many (piece x master) searches ran and were reused,
// and whether the families were found or read back.
//
// Thread contract: one job at a time; the store is safe for concurrent use.
#pragma once

#include <map>
#include <string>

#include "record_store.h"
#include "task_runner.h"

namespace godwit {

// The options that change what a search finds, as canonical text.
std::string search_fingerprint(const LocateOptions& options);
// The options that change a detection's evidence, as canonical text.
std::string evidence_fingerprint(const ReconcileOptions& options);

class StoredTaskRunner : public TaskRunner {
 public:
  // `inner` (which must outlive it) searches what is not kept.
  // `search_options`: search_fingerprint of the options the tasks run with.
  StoredTaskRunner(RecordStore& store, TaskRunner& inner, std::string search_options);
  Result<std::vector<nlohmann::json>> run(const std::string& job_id, const std::vector<PlannedTask>& tasks,
                                          const std::function<void(double)>& progress,
                                          const std::function<bool()>& should_stop,
                                          const std::function<void(std::string_view)>& warn) override;
  void finished(const std::string& job_id, const std::vector<PlannedTask>& tasks) override {
    inner_.finished(job_id, tasks);
  }
  bool evidence_after() const override { return true; }
  std::vector<std::optional<DetectionEvidence>> evidence(const std::vector<TemplateReport>& templates,
                                                         const std::vector<ConcatPart>& parts,
                                                         const std::vector<Match>& matches,
                                                         const ReconcileOptions& options) override;
  // Families kept per masters and options (stored_families.h).
  Result<Families> families(const FamilyQuery& query, const std::function<Result<Families>()>& find) override;

 private:
  Result<std::string> digest(const std::string& path);
  RecordStore& store_;
  TaskRunner& inner_;
  std::string search_options_;
  std::map<std::string, std::string> digests_;  // path -> SHA-256, for this runner's jobs
};

}  // namespace godwit
