#include "fuzz_fixture.h"

#include <sys/stat.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <vector>

#include "synth.h"

namespace fs = std::filesystem;

namespace godwit::fuzz {
namespace {

[[noreturn]] void die(const std::string& what) {
  std::fprintf(stderr, "fuzz fixture: %s\n", what.c_str());
  std::exit(1);
}

void write_or_die(const fs::path& p, const Samples& x, int channels, double rate_hz) {
  if (auto err = synth::write_audio(p.string(), x, channels, rate_hz); !err.empty()) die(err);
}

void make_fixture(const fs::path& root) {
  fs::create_directories(root / "lib");
  fs::create_directories(root / "sub");
  const double rate = 8000;
  const Samples a = synth::spot(1.0, rate, 11), b = synth::spot(0.6, rate, 12);
  write_or_die(root / "lib" / "spot-a.wav", a, 1, rate);
  write_or_die(root / "lib" / "spot-b.flac", b, 1, rate);
  std::ofstream(root / "lib" / "spot-a.meta.json") << R"({"title": "Spot A", "advertiser": "Fuzz", "family": "a"})"
                                                    << "\n";
  Samples programme = synth::programme(2.0, rate, 13);
  synth::mix_into(programme, a, 4000, 1.0);
  write_or_die(root / "h-20260314T060000.wav", programme, 1, rate);
  write_or_die(root / "h-20260314T060002.flac", synth::to_stereo(synth::programme(1.0, 16000, 14)), 2, 16000);
  std::ofstream(root / "log-2026-03-14.csv") << "slot,spot,planned,window_s\nS1,spot-a,2026-03-14T06:00:00.5,5\n"
                                                "S2,spot-b,2026-03-14T06:00:02,\n";
  std::ofstream noise(root / "noise.wav", std::ios::binary);
  synth::Rng rng(15);
  for (int i = 0; i < 4096; ++i) noise.put(static_cast<char>(rng.next() & 0xFF));
  noise.close();
  std::ofstream(root / "empty.wav").close();
  if (::mkfifo((root / "pipe.wav").c_str(), 0644) != 0) die("mkfifo failed");
  fs::create_symlink("/etc/hostname", root / "outside.wav");
}

}  // namespace

fs::path fixture_root() {
  const fs::path base = "/tmp/godwit-fuzz-v1";
  const fs::path root = base / "root";
  if (fs::exists(root / "log-2026-03-14.csv")) return root;  // the last file made
  fs::create_directories(base);
  const fs::path fresh = base / ("fresh." + std::to_string(::getpid()));
  std::error_code ec;
  fs::remove_all(fresh, ec);
  make_fixture(fresh / "root");
  // Files are made in `fresh`; its root is renamed into place whole. When
  // another process won the race, ours is dropped.
  fs::rename(fresh / "root", root, ec);
  fs::remove_all(fresh, ec);
  if (!fs::exists(root / "log-2026-03-14.csv")) die("cannot make " + root.string());
  return root;
}

fs::path private_scratch_dir(const std::string& name) {
  static std::vector<fs::path> made;
  const fs::path parent = fs::is_directory("/dev/shm") ? fs::path("/dev/shm") : fs::temp_directory_path();
  std::string templ = (parent / ("godwit-fuzz-" + name + "-XXXXXX")).string();
  if (!::mkdtemp(templ.data())) die("mkdtemp failed under " + parent.string());
  if (made.empty())
    std::atexit([] {
      std::error_code ec;
      for (const auto& d : made) fs::remove_all(d, ec);
    });
  made.emplace_back(templ);
  return templ;
}

}  // namespace godwit::fuzz
