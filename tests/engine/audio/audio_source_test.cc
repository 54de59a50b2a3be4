#include "godwit/audio/audio_source.h"

#include <doctest/doctest.h>

#include <cmath>
#include <fstream>

#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/memory_source.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

Samples decode(const std::string& path, ChannelChoice c = {}) {
  auto src = open_audio_file(path, c);
  REQUIRE_MESSAGE(src.ok(), (src.ok() ? "" : src.error().describe()));
  auto all = decode_all(*src.value(), 0);
  REQUIRE(all.ok());
  return all.value();
}

// Correlation of a decoded file with the original at the best lag within
// +-3000 frames (lossy codecs add delay or padding).
double best_similarity(const Samples& a, const Samples& b) {
  const size_t m = std::min<size_t>(20000, std::min(a.size(), b.size()) / 2);
  double best = 0;
  for (int lag = -3000; lag <= 3000; lag += 1) {
    double dot = 0, ea = 0, eb = 0;
    for (size_t i = 5000; i < 5000 + m; ++i) {
      const long j = static_cast<long>(i) + lag;
      if (j < 0 || static_cast<size_t>(j) >= b.size()) continue;
      dot += a[i] * b[static_cast<size_t>(j)];
      ea += a[i] * a[i];
      eb += b[static_cast<size_t>(j)] * b[static_cast<size_t>(j)];
    }
    if (ea > 0 && eb > 0) best = std::max(best, dot / std::sqrt(ea * eb));
  }
  return best;
}

}  // namespace

TEST_CASE("every supported format decodes to the same audio, downmixed to mono") {
  test::TempDir dir;
  const double rate = 44100;
  Samples mono = synth::spot(2.0, rate, 9);
  Samples stereo = synth::to_stereo(mono, 0.5);  // right = half of left -> mean = 0.75 left
  for (const char* ext : {"wav", "flac", "ogg", "opus", "mp3"}) {
    CAPTURE(ext);
    const double file_rate = std::string(ext) == "opus" ? 48000 : rate;
    const Samples src = file_rate == rate ? stereo : synth::to_stereo(resample_all(mono, rate, file_rate), 0.5);
    const std::string path = dir.file(std::string("clip.") + ext);
    REQUIRE(synth::write_audio(path, src, 2, file_rate).empty());
    auto opened = open_audio_file(path);
    REQUIRE(opened.ok());
    CHECK(opened.value()->info().channels == 2);
    CHECK(opened.value()->info().native_rate_hz == file_rate);
    const Samples got = decode(path);
    const Samples ref = file_rate == rate ? mono : resample_all(mono, rate, file_rate);
    Samples mean(ref.size());
    for (size_t i = 0; i < ref.size(); ++i) mean[i] = 0.75f * ref[i];
    CHECK(best_similarity(mean, got) > 0.95);
    if (std::string(ext) == "wav" || std::string(ext) == "flac") {
      // Lossless: sample for sample, within 16-bit quantization.
      REQUIRE(got.size() == mean.size());
      double err = 0;
      for (size_t i = 0; i < got.size(); ++i) err = std::max(err, std::fabs(double(got[i]) - mean[i]));
      CHECK(err < 1.0 / 16384);
    }
  }
}

TEST_CASE("a channel can be chosen instead of the mean") {
  test::TempDir dir;
  Samples mono = synth::spot(1.0, 8000, 4);
  REQUIRE(synth::write_audio(dir.file("s.wav"), synth::to_stereo(mono, 0.25), 2, 8000).empty());
  const Samples right = decode(dir.file("s.wav"), ChannelChoice{1});
  double err = 0;
  for (size_t i = 0; i < right.size(); ++i) err = std::max(err, std::fabs(double(right[i]) - 0.25 * mono[i]));
  CHECK(err < 1e-3);
  auto bad = open_audio_file(dir.file("s.wav"), ChannelChoice{2});
  REQUIRE(!bad.ok());
  CHECK(bad.error().code == ErrorCode::usage);
}

TEST_CASE("bad files get an error naming the file") {
  test::TempDir dir;
  auto code_of = [](const std::string& p) {
    auto r = open_audio_file(p);
    REQUIRE(!r.ok());
    CHECK(r.error().path == p);
    return r.error().code;
  };
  CHECK(code_of(dir.file("missing.wav")) == ErrorCode::not_found);
  CHECK(code_of(dir.path().string()) == ErrorCode::unreadable);
  { std::ofstream(dir.file("empty.wav")); }
  CHECK(code_of(dir.file("empty.wav")) == ErrorCode::empty);
  { std::ofstream(dir.file("notes.wav")) << "this is not audio, just text that ends in .wav\n"; }
  const auto c = code_of(dir.file("notes.wav"));
  CHECK((c == ErrorCode::unsupported || c == ErrorCode::corrupt));
  // A WAV header with no frames.
  REQUIRE(synth::write_audio(dir.file("zero.wav"), {}, 1, 8000).empty());
  CHECK(code_of(dir.file("zero.wav")) == ErrorCode::empty);
}

TEST_CASE("a truncated FLAC breaks mid-stream with its position, keeping what came before") {
  test::TempDir dir;
  Samples mono = synth::programme(20.0, 16000, 3);
  REQUIRE(synth::write_audio(dir.file("full.flac"), mono, 1, 16000).empty());
  std::ifstream in(dir.file("full.flac"), std::ios::binary);
  std::string bytes((std::istreambuf_iterator<char>(in)), {});
  std::ofstream(dir.file("cut.flac"), std::ios::binary).write(bytes.data(), static_cast<long>(bytes.size() / 2));
  auto src = open_audio_file(dir.file("cut.flac"));
  REQUIRE(src.ok());
  AnalysisStream stream(*src.value(), 8000);
  Samples block;
  size_t total = 0;
  std::optional<Error> err;
  for (;;) {
    auto more = stream.next(block);
    total += block.size();
    if (!more) {
      err = more.error();
      break;
    }
    if (!more.value()) break;
  }
  REQUIRE(err.has_value());
  CHECK(err->code == ErrorCode::corrupt);
  CHECK(err->path == dir.file("cut.flac"));
  REQUIRE(err->offset_s.has_value());
  CHECK(*err->offset_s > 5.0);   // about half of 20 s decoded
  CHECK(*err->offset_s < 15.0);
  CHECK(total > 5 * 8000);
}

TEST_CASE("an MP3 decodes whether or not its length is known up front") {
  test::TempDir dir;
  Samples mono = synth::spot(3.0, 22050, 5);
  REQUIRE(synth::write_audio(dir.file("a.mp3"), mono, 1, 22050, 64).empty());
  const Samples got = decode(dir.file("a.mp3"));
  CHECK(got.size() > 2.8 * 22050);
  CHECK(best_similarity(mono, got) > 0.9);
}

TEST_CASE("MemorySource injects a failure at a chosen frame") {
  MemorySource src("mem", Samples(1000, 0.1f), 1, 8000);
  src.fail_at(600);
  Samples buf(400);
  CHECK(src.read(buf.data(), 400).value() == 400);
  CHECK(src.read(buf.data(), 400).value() == 200);
  auto r = src.read(buf.data(), 400);
  REQUIRE(!r.ok());
  CHECK(r.error().code == ErrorCode::corrupt);
  CHECK(*r.error().offset_s == doctest::Approx(600.0 / 8000));
}
