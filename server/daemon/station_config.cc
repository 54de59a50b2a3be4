#include "station_config.h"

#include <cctype>
#include <cmath>
#include <filesystem>
#include <set>

#include "godwit/compliance/civil_time.h"

namespace godwit {
namespace fs = std::filesystem;

namespace {

Error usage(const std::string& message) { return Error{ErrorCode::usage, message, "", std::nullopt}; }

// "station 'kestrel-fm'" or "the station" (the top-level one, unnamed).
std::string who(const StationConfig& s) { return s.name.empty() ? "the station" : "station '" + s.name + "'"; }

// The folder as the kernel will see it (links and ".." resolved as far as
// it exists), for telling two stations' folders apart.
fs::path canonical_folder(const std::string& dir) {
  std::error_code ec;
  fs::path p = fs::weakly_canonical(fs::absolute(dir, ec), ec);
  return ec ? fs::path(dir).lexically_normal() : p;
}

bool inside(const fs::path& inner, const fs::path& outer) {
  auto i = inner.begin();
  for (auto o = outer.begin(); o != outer.end(); ++o, ++i) {
    if (o->empty()) continue;  // a trailing separator
    if (i == inner.end() || *i != *o) return false;
  }
  return true;
}

Status existing_folder(const StationConfig& s, const char* key, const std::string& dir) {
  std::error_code ec;
  if (!fs::exists(dir, ec))
    return usage(who(s) + ": " + key + " '" + dir + "' does not exist");
  if (!fs::is_directory(dir, ec)) return usage(who(s) + ": " + key + " '" + dir + "' is not a folder");
  return ok_status();
}

}  // namespace

Status check_station_name(const std::string& name) {
  if (name.empty() || name.size() > 64 || name[0] == '.')
    return usage("a station name must be 1 to 64 characters, not starting with '.': '" + name + "'");
  for (unsigned char c : name)
    if (!(std::isalnum(c) || c == '-' || c == '_' || c == '.'))
      return usage("station name '" + name + "' may hold only letters, digits, '-', '_' and '.'");
  return ok_status();
}

Status check_name_pattern(const std::string& pattern) {
  for (const char* field : {"%Y", "%m", "%d", "%H"})
    if (pattern.find(field) == std::string::npos)
      return usage("name_pattern '" + pattern + "' lacks " + field +
                   " (a recording's start is read from its name: %Y %m %d %H, and %M %S if the files do not start "
                   "on the hour)");
  return ok_status();
}

Status check_stations(const std::vector<StationConfig>& stations) {
  std::set<std::string> names;
  std::vector<std::pair<fs::path, const StationConfig*>> drops, schedules;
  for (const auto& s : stations) {
    if (!s.name.empty() || stations.size() > 1) {
      if (auto st = check_station_name(s.name); !st) return st;
      if (!names.insert(s.name).second)
        return usage("station '" + s.name + "' is named twice: each [[stations]] table needs a name of its own");
    }
    if (s.drop.empty()) return usage(who(s) + ": 'drop' (its drop folder) is required");
    const fs::path drop = canonical_folder(s.drop);
    for (const auto& [other, o] : drops)
      if (inside(drop, other) || inside(other, drop))
        return usage(who(s) + " and " + who(*o) + " share a drop folder ('" + s.drop + "', '" + o->drop +
                     "'): each station needs a folder of its own");
    drops.push_back({drop, &s});
    if (s.library.empty()) return usage(who(s) + ": no library (set 'library' for it, or at the top level)");
    if (auto st = existing_folder(s, "library", s.library); !st) return st;
    if (!s.schedules.empty()) {
      if (auto st = existing_folder(s, "schedules", s.schedules); !st) return st;
      // A day's log is found by its date alone: a shared folder would give
      // each station the other's.
      const fs::path folder = canonical_folder(s.schedules);
      for (const auto& [other, o] : schedules)
        if (folder == other)
          return usage(who(s) + " and " + who(*o) + " share a schedules folder ('" + s.schedules +
                       "'): a day's planned log is found by its date, so each station needs a folder of its own");
      schedules.push_back({folder, &s});
    }
    if (!s.time_zone.empty())
      if (auto tz = TimeZone::find(s.time_zone); !tz) return usage(who(s) + ": time_zone: " + tz.error().message);
    if (auto st = check_name_pattern(s.name_pattern); !st) return usage(who(s) + ": " + st.error().message);
    if (s.retention_days && !(std::isfinite(*s.retention_days) && *s.retention_days >= 0))
      return usage(who(s) + ": retention_days must be a number of days, 0 or more (0: kept for ever)");
  }
  return ok_status();
}

}  // namespace godwit
