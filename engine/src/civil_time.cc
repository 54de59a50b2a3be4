#include "godwit/civil_time.h"

#include <chrono>
#include <cmath>
#include <cstdio>

namespace godwit {
namespace {

bool digits(std::string_view s, size_t pos, size_t n, int& out) {
  if (pos + n > s.size()) return false;
  int v = 0;
  for (size_t i = pos; i < pos + n; ++i) {
    if (s[i] < '0' || s[i] > '9') return false;
    v = v * 10 + (s[i] - '0');
  }
  out = v;
  return true;
}

std::optional<LocalSeconds> compose(int y, int mo, int d, int h, int mi, int s, double frac) {
  using namespace std::chrono;
  const year_month_day ymd{year{y}, month{static_cast<unsigned>(mo)}, day{static_cast<unsigned>(d)}};
  if (!ymd.ok() || h > 23 || mi > 59 || s > 59) return std::nullopt;
  const auto days = sys_days{ymd}.time_since_epoch().count();
  return static_cast<double>(days) * 86400.0 + h * 3600.0 + mi * 60.0 + s + frac;
}

}  // namespace

std::optional<LocalSeconds> parse_iso8601_local(std::string_view t) {
  int y, mo, d, h, mi, s;
  size_t pos;
  if (t.size() >= 19 && t[4] == '-' && t[7] == '-' && t[10] == 'T' && t[13] == ':' && t[16] == ':') {
    if (!digits(t, 0, 4, y) || !digits(t, 5, 2, mo) || !digits(t, 8, 2, d) || !digits(t, 11, 2, h) ||
        !digits(t, 14, 2, mi) || !digits(t, 17, 2, s))
      return std::nullopt;
    pos = 19;
  } else if (t.size() >= 15 && t[8] == 'T') {
    if (!digits(t, 0, 4, y) || !digits(t, 4, 2, mo) || !digits(t, 6, 2, d) || !digits(t, 9, 2, h) ||
        !digits(t, 11, 2, mi) || !digits(t, 13, 2, s))
      return std::nullopt;
    pos = 15;
  } else {
    return std::nullopt;
  }
  double frac = 0;
  if (pos < t.size() && (t[pos] == '.' || t[pos] == ',')) {
    ++pos;
    double scale = 0.1;
    size_t n = 0;
    while (pos < t.size() && t[pos] >= '0' && t[pos] <= '9' && n < 9) {
      frac += (t[pos] - '0') * scale;
      scale /= 10;
      ++pos;
      ++n;
    }
    if (n == 0) return std::nullopt;
  }
  if (pos != t.size()) return std::nullopt;  // zone designators and trailing text
  return compose(y, mo, d, h, mi, s, frac);
}

std::string format_iso8601_local(LocalSeconds t, int decimals) {
  using namespace std::chrono;
  decimals = std::max(0, std::min(6, decimals));
  const double scale = std::pow(10.0, decimals);
  const double rounded = std::round(t * scale) / scale;
  const double whole = std::floor(rounded);
  const auto days = static_cast<long>(std::floor(whole / 86400.0));
  long secs = static_cast<long>(whole - static_cast<double>(days) * 86400.0);
  const year_month_day ymd{sys_days{std::chrono::days{days}}};
  char buf[64];
  std::snprintf(buf, sizeof buf, "%04d-%02u-%02uT%02ld:%02ld:%02ld", static_cast<int>(ymd.year()),
                static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()), secs / 3600, (secs / 60) % 60,
                secs % 60);
  std::string out = buf;
  if (decimals > 0) {
    const long frac = std::lround((rounded - whole) * scale);
    char f[16];
    std::snprintf(f, sizeof f, ".%0*ld", decimals, frac);
    out += f;
  }
  return out;
}

std::optional<LocalSeconds> time_from_name(std::string_view name, std::string_view pattern) {
  for (size_t start = 0; start < name.size(); ++start) {
    int f[6] = {1970, 1, 1, 0, 0, 0};  // Y m d H M S
    size_t p = start;
    bool ok = true;
    for (size_t i = 0; i < pattern.size() && ok; ++i) {
      if (pattern[i] == '%' && i + 1 < pattern.size()) {
        const char c = pattern[++i];
        const char* fields = "YmdHMS";
        const char* hit = c ? std::char_traits<char>::find(fields, 6, c) : nullptr;
        if (c == '%') {
          ok = p < name.size() && name[p] == '%';
          ++p;
        } else if (hit) {
          const size_t width = c == 'Y' ? 4 : 2;
          ok = digits(name, p, width, f[hit - fields]);
          p += width;
        } else {
          ok = false;  // unsupported conversion
        }
      } else {
        ok = p < name.size() && name[p] == pattern[i];
        ++p;
      }
    }
    if (!ok) continue;
    if (auto t = compose(f[0], f[1], f[2], f[3], f[4], f[5], 0.0)) return t;
  }
  return std::nullopt;
}

}  // namespace godwit
