// Version choice: one airing seen by several sibling versions of a spot.
//
// Siblings share most of their audio, so every version of a family scores
// at an airing of any one of them. Detections of siblings that overlap in
// time (closer than half the shorter master) are one airing; the version
// that aired is the one whose distinguishing segments (families.h: those
// the others lack) match best in its verification profile. When those
// segments did not air (a cut airing), or no version leads the next by
// `margin`, the version is undetermined among the leaders.
//
// Thread contract: plain function and values.
#pragma once

#include <vector>

#include "godwit/compliance/families.h"
#include "godwit/compliance/verifier.h"

namespace godwit {

struct VersionInput {
  size_t master = 0;       // index into the Families' masters
  double time_s = 0;       // when it aired, on any one clock shared by all inputs
  double length_s = 0;     // the master's length
  double score = 0;        // the detection's score (ties between versions)
  const Profile* profile = nullptr;  // its verification profile (required)
};

struct VersionChoice {
  std::vector<size_t> members;        // indices into the inputs, in input order
  size_t winner = 0;                  // index into the inputs
  std::vector<double> distinguishing; // per member: mean profile score over its distinguishing segments
  std::vector<size_t> undetermined;   // indices into the inputs; empty when the winner is clear
};

struct VersionOptions {
  double min_segment_score = 0.3;  // the best distinguishing score must reach this (VerifyOptions)
  double margin = 0.1;             // and lead the next by this much
};

// `inputs` sorted by time_s. Every input ends up in exactly one choice
// (alone when it has no sibling beside it).
std::vector<VersionChoice> choose_versions(const std::vector<VersionInput>& inputs, const Families& families,
                                           const VersionOptions& options = {});

}  // namespace godwit
