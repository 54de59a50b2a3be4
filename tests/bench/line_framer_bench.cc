// How long one read can hold the daemon's I/O thread in LineFramer::feed.
//
// A hostile client sends a 32 MiB line (over the 24 MiB limit) in the
// session's 8 KiB reads and in 64 KiB ones; each round uses a fresh framer,
// as each connection has its own. Printed: the total time, the longest
// single feed() (every connection of the I/O thread waits that long), and
// beside them a bound measured in the same run: memcpy of the same bytes
// into a buffer allocated for the round.
//
//   line_framer_bench [--rounds N]
#include <chrono>
#include <cstdio>
#include <cstring>
#include <string>
#include <vector>

#include "line_framer.h"

namespace {

using Clock = std::chrono::steady_clock;

double since(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

}  // namespace

int main(int argc, char** argv) {
  int rounds = 3;
  if (argc == 3 && std::strcmp(argv[1], "--rounds") == 0) rounds = std::atoi(argv[2]);
  const size_t limit = 24u << 20;  // ServerLimits::max_line_bytes
  std::string line(32u << 20, 'a');
  line += "\n";
  for (size_t read_bytes : {size_t{8} << 10, size_t{64} << 10}) {
    for (int r = 0; r < rounds; ++r) {
      godwit::LineFramer framer(limit);
      double worst = 0;
      const auto t0 = Clock::now();
      for (size_t at = 0; at < line.size(); at += read_bytes) {
        const auto t = Clock::now();
        framer.feed(std::string_view(line).substr(at, read_bytes));
        worst = std::max(worst, since(t));
      }
      const double total = since(t0);
      const auto c0 = Clock::now();
      std::vector<char> copy(limit);
      std::memcpy(copy.data(), line.data(), limit);
      const double bound = since(c0);
      std::printf("32 MiB line in %3zu KiB reads: total %7.1f ms, longest read %6.2f ms   (bound: memcpy of 24 MiB into "
                  "fresh memory %6.1f ms)\n",
                  read_bytes >> 10, 1e3 * total, 1e3 * worst, 1e3 * bound);
    }
  }
}
