// Rounding for documents: v rounded to `decimals` places, as the double
// nearest that decimal, so JSON prints it short (0.7182, not
// 0.7182000000000001).
#pragma once

#include <cmath>

namespace godwit::detail {

// A result of zero is +0: documents never show "-0" or "-0.000".
inline double round_decimals(double v, int decimals) {
  const double scale = std::pow(10.0, decimals);
  return std::round(v * scale) / scale + 0.0;
}

}  // namespace godwit::detail
