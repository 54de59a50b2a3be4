// The proof of performance as one self-contained HTML page (no scripts, no
// external files; prints on A4), made from the document of build_proof()
// (proof_report.h):
//
//   heading      advertiser or spot, the range, when made, godwit version
//   cautions     evidence to verify by listening; loudness indicative
//   at a glance  counts over the range, in the verdict colours
//   by spot and day  ordered, aired as ordered, early, late, owed, unscheduled
//   per station  the placements (planned vs aired, with the evidence), the
//                owed ones listed again, the unscheduled airings, and the
//                recordings searched with their SHA-256
//
// Ids tests rely on: #cautions, #glance (.count[data-status]), #by-spot-day
// (tr.spot-day), section.station[data-station] with tr.placement[data-slot]
// [data-status], ul.owed li[data-slot], tr.airing[data-status=unscheduled],
// tr.recording[data-sha256].
//
// Thread contract: plain function.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

namespace godwit {

// A document of another shape (from an older daemon) is shown as far as
// it goes: missing fields are left empty, never a crash.
std::string proof_to_html(const nlohmann::json& proof);

}  // namespace godwit
