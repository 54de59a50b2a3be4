// BankScreen: which pairs of a library's masters are worth scoring
// exactly, from one search of the whole library by a bank of all of it.
//
// The masters (at a low screen rate) are laid end to end into one stream,
// longest first, with a gap of zeros longer than the longest master before,
// between and after them, and the stream is searched by a bank of the
// masters (Correlator: each block of the stream is transformed once and
// multiplied with every master's spectrum). A pair's screen score is the
// best normalized score (Pearson over the template's span, correlator.h)
// of the shorter master (ties: the lower index) over the windows that
// overlap the longer one's region of the stream. That is the score of the
// two correlated alone with the longer zero-padded by the shorter's length
// on both sides (the gap is that padding), so an alignment where the
// shorter sticks out past an end of the longer is scored as it was pair by
// pair.
//
//   stream: | gap | longest | gap | next | gap | ... | shortest | gap |
//   region at place q for a template of M samples:
//       offsets [start_q - M, start_q + len_q]  (window x[k, k + M))
//
// Longest first, the masters a template is scored over are the places
// before its own: the bank is searched in batches of templates by place,
// each batch over the stream up to its last template's place (about half
// the work of every master over the whole stream, and the spectra of one
// batch held at a time).
//
// Work: one forward FFT per block of the stream and batch and, per block,
// one spectrum product and inverse FFT per master of the batch; no FFT
// set-up per pair. It still grows with the square of the library (the
// stream grows with it), at a much smaller cost a pair than correlating
// pairs one by one.
//
// Thread contract: a plain function; runs the correlator on one thread.
#pragma once

#include <cstddef>
#include <vector>

#include "godwit/core/types.h"

namespace godwit::detail {

struct ScreenedPair {
  size_t a = 0, b = 0;  // master indices, a < b
  float score = 0;      // the shorter's best over the longer's region
};

// `low`: the masters at the screen rate; `len_frames`: per master, the
// length that decides which of two is the shorter (the caller's exact
// score's rule: shorter against longer, at its own rate). Returns the pairs
// whose screen score reaches `below`, sorted by (a, b). A master the bank
// refuses (silent or almost empty, template_bank.h) pairs with none, as
// when scored alone.
std::vector<ScreenedPair> bank_screen_pairs(const std::vector<Samples>& low, const std::vector<size_t>& len_frames,
                                            double below);

}  // namespace godwit::detail
