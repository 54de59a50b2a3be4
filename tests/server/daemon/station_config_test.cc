// The daemon's stations as its TOML config names them: [[stations]] (an
// array of tables, TOML 1.0), keys inherited from the top level, the
// single-station config of before, and each mistake refused with a
// message naming the station and the key.
#include "station_config.h"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>

#include "daemon_config.h"
#include "test_util.h"

namespace godwit {
namespace {

using test::TempDir;

struct Fixture {
  TempDir dir;
  Fixture() {
    for (const char* d : {"lib", "lib-heron", "sched-kestrel", "sched-heron"})
      std::filesystem::create_directories(dir.path() / d);
  }
  std::string p(const std::string& name) const { return dir.file(name); }
  // Loads `toml` (with {D} replaced by the folder) and resolves the stations.
  Result<std::vector<StationConfig>> stations(std::string toml, DaemonConfig& cfg) const {
    for (size_t at; (at = toml.find("{D}")) != std::string::npos;) toml.replace(at, 3, dir.path().string());
    std::ofstream(p("godwitd.toml")) << toml;
    if (auto st = load_daemon_config(p("godwitd.toml"), cfg); !st) return st.error();
    return effective_stations(cfg);
  }
  Result<std::vector<StationConfig>> stations(const std::string& toml) const {
    DaemonConfig cfg;
    return stations(toml, cfg);
  }
};

const char* kTwo = R"(library = "{D}/lib"
time_zone = "Europe/Berlin"
[[stations]]
name = "kestrel-fm"
drop = "{D}/drop-kestrel"
schedules = "{D}/sched-kestrel"
[[stations]]
name = "heron-radio"
drop = "{D}/drop-heron"
schedules = "{D}/sched-heron"
library = "{D}/lib-heron"
name_pattern = "%d.%m.%Y_%H-%M"
time_zone = "America/New_York"
retention_days = 90
)";

TEST_CASE("stations are read from stations tables and take what they leave out from the top level") {
  Fixture f;
  auto s = f.stations(kTwo);
  REQUIRE_MESSAGE(s.ok(), (s.ok() ? "" : s.error().describe()));
  REQUIRE(s.value().size() == 2);
  const StationConfig& k = s.value()[0];
  CHECK(k.name == "kestrel-fm");
  CHECK(k.drop == f.p("drop-kestrel"));
  CHECK(k.schedules == f.p("sched-kestrel"));
  CHECK(k.library == f.p("lib"));           // the top level's
  CHECK(k.time_zone == "Europe/Berlin");    // the top level's
  CHECK(k.name_pattern == kDefaultNamePattern);
  CHECK(!k.retention_days);
  const StationConfig& h = s.value()[1];
  CHECK(h.library == f.p("lib-heron"));
  CHECK(h.time_zone == "America/New_York");
  CHECK(h.name_pattern == "%d.%m.%Y_%H-%M");
  CHECK(h.retention_days == doctest::Approx(90));
}

TEST_CASE("the single-station config of before is one station, unnamed unless station is set") {
  Fixture f;
  DaemonConfig cfg;
  auto s = f.stations("library = \"{D}/lib\"\ndrop = \"{D}/drop\"\nschedules = \"{D}/sched-kestrel\"\n", cfg);
  REQUIRE_MESSAGE(s.ok(), (s.ok() ? "" : s.error().describe()));
  REQUIRE(s.value().size() == 1);
  CHECK(s.value()[0].name.empty());  // named by its files in the store, as before
  CHECK(s.value()[0].drop == f.p("drop"));
  CHECK(s.value()[0].schedules == f.p("sched-kestrel"));
  CHECK(s.value()[0].library == f.p("lib"));
  s = f.stations("library = \"{D}/lib\"\ndrop = \"{D}/drop\"\nstation = \"kestrel-fm\"\n", cfg);
  REQUIRE(s.ok());
  CHECK(s.value()[0].name == "kestrel-fm");
  // No drop folder: no station.
  s = f.stations("library = \"{D}/lib\"\n");
  REQUIRE(s.ok());
  CHECK(s.value().empty());
}

// Each mistake: an error of the usage kind whose message holds `says`.
void refused(const Fixture& f, const std::string& toml, const std::string& says) {
  auto s = f.stations(toml);
  REQUIRE_MESSAGE(!s.ok(), toml);
  CHECK(s.error().code == ErrorCode::usage);
  CHECK_MESSAGE(s.error().message.find(says) != std::string::npos, s.error().message);
}

TEST_CASE("a station config with a mistake is refused, saying which station and what") {
  Fixture f;
  const std::string lib = "library = \"{D}/lib\"\n";
  const std::string kestrel = "[[stations]]\nname = \"kestrel-fm\"\ndrop = \"{D}/drop-kestrel\"\n";
  // A zone the IANA tz database does not have.
  refused(f, lib + kestrel + "time_zone = \"Europe/Atlantis\"\n", "station 'kestrel-fm': time_zone: unknown time zone");
  // Folders that are not there.
  refused(f, lib + kestrel + "schedules = \"{D}/no-such-folder\"\n", "station 'kestrel-fm': schedules");
  refused(f, lib + kestrel + "library = \"{D}/no-such-library\"\n", "does not exist");
  refused(f, kestrel, "no library");
  // Two stations of one name, or one folder.
  refused(f, lib + kestrel + kestrel, "'kestrel-fm' is named twice");
  refused(f, lib + kestrel + "[[stations]]\nname = \"heron-radio\"\ndrop = \"{D}/drop-kestrel/\"\n", "share a drop folder");
  refused(f, lib + kestrel + "[[stations]]\nname = \"heron-radio\"\ndrop = \"{D}/drop-kestrel/incoming\"\n",
          "share a drop folder");
  refused(f, lib + kestrel + "schedules = \"{D}/sched-kestrel\"\n" +
                 "[[stations]]\nname = \"heron-radio\"\ndrop = \"{D}/drop-heron\"\nschedules = \"{D}/sched-kestrel/\"\n",
          "share a schedules folder");
  // Names, keys, patterns, retention.
  refused(f, lib + "[[stations]]\ndrop = \"{D}/d\"\n", "'name' is required");
  refused(f, lib + "[[stations]]\nname = \"kestrel fm/1\"\ndrop = \"{D}/d\"\n", "may hold only");
  refused(f, lib + kestrel + "shedules = \"{D}/sched-kestrel\"\n", "unknown key 'shedules'");
  refused(f, lib + kestrel + "name_pattern = \"%Y%m%d\"\n", "lacks %H");
  refused(f, lib + kestrel + "retention_days = -1\n", "retention_days");
  refused(f, lib + "[[stations]]\nname = \"kestrel-fm\"\n", "'drop' (its drop folder) is required");
  // The old single-station keys beside stations tables: whose would they be?
  refused(f, lib + "drop = \"{D}/drop\"\n" + kestrel, "'drop' is set at the top level");
  refused(f, lib + "schedules = \"{D}/sched-kestrel\"\n" + kestrel, "'schedules' is set at the top level");
  refused(f, lib + "stations = 3\n", "[[stations]] tables");
}

TEST_CASE("the shipped config and the two-station sample read without error") {
  DaemonConfig shipped;
  const auto st = load_daemon_config(std::string(GODWIT_SOURCE_DIR) + "/config/godwitd.toml", shipped);
  REQUIRE_MESSAGE(st.ok(), (st.ok() ? "" : st.error().describe()));
  CHECK(shipped.retention_detections_days == doctest::Approx(400));
  CHECK(shipped.retention_finished_jobs_days == doctest::Approx(30));
  CHECK(shipped.name_pattern == kDefaultNamePattern);
  CHECK(shipped.stations.empty());  // its [[stations]] are an example in comments
  DaemonConfig sample;
  const auto ss = load_daemon_config(std::string(GODWIT_SOURCE_DIR) + "/samples/two-stations/godwitd.toml", sample);
  REQUIRE_MESSAGE(ss.ok(), (ss.ok() ? "" : ss.error().describe()));
  REQUIRE(sample.stations.size() == 2);
  CHECK(sample.stations[1].name == "heron-radio");
  CHECK(sample.stations[1].name_pattern == "heron_%d-%m-%Y_%H%M");
  CHECK(sample.stations[1].retention_days == doctest::Approx(90));
  // The defaults when nothing is said (the issue's: detections a long time, jobs a month).
  DaemonConfig none;
  CHECK(none.retention_detections_days == doctest::Approx(400));
  CHECK(none.retention_finished_jobs_days == doctest::Approx(30));
  CHECK(none.max_finished_jobs == 10000);
}

}  // namespace
}  // namespace godwit
