// godwit-synth: writes the project's own synthetic audio.
//
//   godwit-synth demo --out DIR
//     The demo scenario: masters of a fictional station's spots in
//     DIR/library, a few minutes of its aircheck in DIR/airchecks, and the
//     truth (where each spot was planted) in DIR/truth.json.
#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>

#include "synth.h"

namespace fs = std::filesystem;
using namespace godwit;

namespace {

struct DemoSpot {
  const char* id;
  double duration_s;
  uint64_t seed;
};

// Kestrel FM, a fictional community station, and its advertisers.
constexpr DemoSpot kSpots[] = {
    {"marlow-bakery", 20.0, 11},
    {"tidewater-tyres", 30.0, 12},
    {"pellham-garden-centre", 15.0, 13},
    {"kestrel-fm-id", 5.0, 14},
};

struct Plant {
  const char* id;
  double offset_s;
  double gain_db;
  int polarity;
};

constexpr Plant kPlants[] = {
    {"marlow-bakery", 37.25, 0.0, 1},
    {"tidewater-tyres", 92.5, -3.0, 1},
    {"pellham-garden-centre", 150.125, -1.5, 1},
    {"marlow-bakery", 201.0, -6.0, 1},
    {"kestrel-fm-id", 262.0, 0.0, -1},
};

int make_demo(const fs::path& out) {
  const double rate = 44100;
  fs::create_directories(out / "library");
  fs::create_directories(out / "airchecks");
  std::map<std::string, Samples> masters;
  for (const auto& s : kSpots) {
    Samples x = synth::spot(s.duration_s, rate, s.seed);
    synth::set_rms(x, 0.12);
    const auto path = (out / "library" / (std::string(s.id) + ".wav")).string();
    if (auto err = synth::write_audio(path, synth::to_stereo(x), 2, rate); !err.empty()) {
      std::cerr << "godwit-synth: " << err << "\n";
      return 1;
    }
    masters[s.id] = std::move(x);
  }
  const double length_s = 300;
  Samples air = synth::programme(length_s, rate, 2026);
  nlohmann::json truth = nlohmann::json::array();
  for (const auto& p : kPlants) {
    const Samples& m = masters[p.id];
    const size_t at = static_cast<size_t>(std::llround(p.offset_s * rate));
    // The spot replaces the programme for its duration, as on air.
    for (size_t i = 0; i < m.size() && at + i < air.size(); ++i) air[at + i] = 0;
    synth::mix_into(air, m, at, p.polarity * std::pow(10.0, p.gain_db / 20.0));
    truth.push_back({{"template", p.id}, {"offset_s", static_cast<double>(at) / rate}, {"polarity", p.polarity}});
  }
  Samples noise = synth::white_noise(air.size(), synth::rms(air) * std::pow(10.0, -30.0 / 20.0), 7);
  for (size_t i = 0; i < air.size(); ++i) air[i] += noise[i];
  const auto rec = (out / "airchecks" / "kestrel-fm-20260314T060000.flac").string();
  if (auto err = synth::write_audio(rec, synth::to_stereo(air, 0.95), 2, rate); !err.empty()) {
    std::cerr << "godwit-synth: " << err << "\n";
    return 1;
  }
  std::ofstream(out / "truth.json") << nlohmann::json{{"recording", rec}, {"plants", truth}}.dump(2) << "\n";
  std::cerr << "godwit-synth: demo written to " << out.string() << "\n";
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"godwit-synth: the project's own synthetic broadcast audio"};
  app.require_subcommand(1);
  std::string out;
  auto* demo = app.add_subcommand("demo", "write the demo scenario (masters, aircheck, truth)");
  demo->add_option("--out", out, "output folder")->required();
  CLI11_PARSE(app, argc, argv);
  if (*demo) return make_demo(out);
  return 0;
}
