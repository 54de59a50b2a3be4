// Families of sibling spots: versions that share most of their audio and
// differ in a tag (closing line, phone number, date).
//
// Found by scoring the library against itself: two masters are siblings
// when the best normalized cross-correlation of the shorter against the
// longer reaches `threshold`, or when metadata declares them one family.
// For each sibling pair, the segments of each that the other lacks (aligned
// segment score below `distinct_below`) are its distinguishing segments:
// the version of an airing is decided on those.
//
// Thread contract: plain functions and values.
#pragma once

#include <functional>
#include <map>
#include <string>
#include <vector>

#include "godwit/core/error.h"
#include "godwit/core/types.h"

namespace godwit {

struct FamilyOptions {
  double threshold = 0.5;       // Default 0.5: unrelated spots score ~0.05, siblings > 0.8
  double distinct_below = 0.8;  // a segment scoring under this against the sibling distinguishes
  double segment_s = 1.0;       // must equal VerifyOptions::segment_s
  // Screening: the library is first searched against itself at
  // screen_rate_hz, once, by a bank of all its masters, which scores every
  // pair there (0: off, every pair scored exactly); a pair is scored
  // exactly only when it reaches screen_below there. Declared pairs are
  // always scored exactly. Default 1 kHz and 0.25, half the threshold (the
  // same families with and without it: families_test.cc).
  double screen_rate_hz = 1000;
  double screen_below = 0.25;
};

struct SiblingLink {
  size_t a = 0, b = 0;    // master indices, a < b
  double score = 0;       // best correlation between them
  double lag_s = 0;       // b's first sample sits at a's time lag_s
  std::vector<bool> distinct_a, distinct_b;  // per segment
};

struct Families {
  std::vector<size_t> family_of;         // per master: family index
  std::vector<std::string> family_name;  // per family: declared name, or the first member's id
  std::vector<SiblingLink> links;
  bool siblings(size_t i, size_t j) const { return i != j && family_of[i] == family_of[j]; }
  // Segments of `i` that distinguish it from any of `others`.
  std::vector<bool> distinguishing(size_t i, const std::vector<size_t>& others) const;
};

// `masters` at `rate_hz`; `declared` maps a master index to a family name
// from metadata (masters sharing a name are siblings).
Families find_families(const std::vector<std::string>& ids, const std::vector<Samples>& masters, double rate_hz,
                       const std::map<size_t, std::string>& declared, const FamilyOptions& options = {});

// What a job asks sibling discovery, the audio aside: find_families'
// arguments with each master named by the file it is read from.
struct FamilyQuery {
  std::vector<std::string> ids, paths;  // per master, in the job's order
  std::map<size_t, std::string> declared;
  double rate_hz = 0;
  FamilyOptions options;
};

// Where a reconcile job's families come from (ReconcileOptions::
// families_source): `find` decodes the masters and runs find_families
// here; a source may instead return what it kept from an earlier job for
// the same query (the store of record: families of the same masters, by
// content, and options). Empty: always found here.
using FamiliesSource =
    std::function<Result<Families>(const FamilyQuery& query, const std::function<Result<Families>()>& find)>;

}  // namespace godwit
