// Links the installed engine and runs a little of it: its version, an error
// code's wire name and a planned log read from memory.
#include <cstdio>
#include <cstring>

#include "godwit/compliance/planned_log.h"
#include "godwit/core/error.h"
#include "godwit/core/version.h"

int main() {
  if (std::strlen(godwit::godwit_version()) == 0) return 1;
  if (godwit::wire_name(godwit::ErrorCode::corrupt) != "corrupt") return 2;
  // Uses ICU through the engine: the package must bring the engine's own dependencies.
  auto log = godwit::parse_planned_log("slot,spot,planned,window_s\nS1,a,2026-03-14T06:00:30,60\n", 60.0);
  if (!log || log.value().placements.size() != 1) return 3;
  std::printf("godwit %s\n", godwit::godwit_version());
  return 0;
}
