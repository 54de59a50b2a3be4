// Fuzz target: the daemon's request path, as a session runs it, without a
// socket: bytes -> LineFramer -> Dispatcher::handle -> the answer's text.
//
// The input is expanded first (byte_expansion.h), so a few bytes can stand
// for a 32 MiB line or an array nested 100 000 deep in any field. Each
// input meets a fresh state folder holding four jobs (done with a result
// and report files, failed, queued, cancelled) and roots holding a real
// library, recording and planned log, so submit, status, result, files,
// file, cancel, jobs and watch all reach their real work (paths resolved, audio opened, the journal
// appended and fsync'ed, inline spots written). Two dispatchers see every
// line (the second only those up to 1 MiB): one without a token, one
// requiring "fuzz-token-0123456789".
//
// Checked beyond crashes, leaks and sanitizer findings:
//   - framing in the session's 8 KiB reads gives the lines framing in 64
//     KiB pieces and in one piece (inputs up to 1 MiB) and in 1-7 byte
//     pieces (up to 64 KiB) gives;
//   - every answer is one line of JSON text that parses back to an object
//     with a boolean "ok", an error carrying a known code (never
//     `internal`), and an echoed "id" only of the documented kinds;
//   - no inline spots stay behind for a submit that was not journaled.
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "byte_expansion.h"
#include "dispatcher.h"
#include "fuzz_fixture.h"
#include "job_runner.h"
#include "job_store.h"
#include "json_text.h"
#include "line_framer.h"
#include "path_guard.h"
#include "wire_code.h"

namespace fs = std::filesystem;
using namespace godwit;

namespace {

constexpr size_t kMaxInputBytes = 32u << 20;  // a request line of 32 MiB, and a little more
constexpr size_t kMaxLineBytes = 24u << 20;   // ServerLimits' default
constexpr size_t kSessionReadBytes = 8192;    // the session's read buffer
// Lines dispatched per input (all are framed): a repeat mark can make a
// million small requests, which says no more than the first few dozen
// and would take minutes.
constexpr size_t kMaxDispatchedLines = 64;
constexpr size_t kMaxLockedLineBytes = 1u << 20;
constexpr size_t kMaxFramedLines = 200000;
const char* kToken = "fuzz-token-0123456789";

struct World {
  fs::path root;   // read-only fixture: library, recording, planned log
  fs::path state;  // this process's state folder, reset for every input
  std::unique_ptr<PathGuard> guard;
  std::unique_ptr<JobRunner> runner;
};

World& world() {
  static World w;
  return w;
}

// The four jobs every input starts with; ids are in the dictionary.
void seed_state(const World& w) {
  std::error_code ec;
  fs::remove_all(w.state, ec);
  fs::create_directories(w.state / "results", ec);
  const std::string rec = (w.root / "h-20260314T060000.wav").string();
  const std::string lib = (w.root / "lib").string();
  const nlohmann::json spec{{"kind", "locate"}, {"recordings", {rec}}, {"templates", {lib + "/spot-a.wav"}},
                            {"threshold", 0.3}, {"floor_k", 10.0}, {"fft_size", 0}, {"max_speed_change_pct", 4.5}};
  std::string journal;
  int n = 0;
  for (const char* end : {"done", "failed", "", "cancelled"}) {
    const std::string id = std::string("j00000000000000") + "dfqc"[n++];
    journal += json_text({{"event", "submit"}, {"job", id}, {"spec", spec}, {"submitted", "2026-12-01T00:00:0" +
                                                                                          std::to_string(n) + "Z"}}) +
               "\n";
    if (*end == 0) continue;
    nlohmann::json line{{"event", end}, {"job", id}};
    if (std::string(end) == "failed") line["error"] = {{"code", "corrupt"}, {"message", "decoding failed"}};
    journal += json_text(line) + "\n";
  }
  std::ofstream(w.state / "journal.jsonl", std::ios::binary) << journal;
  std::ofstream(w.state / "results" / "j00000000000000d.json", std::ios::binary)
      << R"({"analysis_rate_hz":8000.0,"complete":true,"matches":[],"recordings":[],"templates":[]})"
      << "\n";
  // The done job's report files, for `files` and `file`.
  fs::create_directories(w.state / "results" / "j00000000000000d" / "listen", ec);
  std::ofstream(w.state / "results" / "j00000000000000d" / "reconcile.html", std::ios::binary) << "<!doctype html>\n";
  std::ofstream(w.state / "results" / "j00000000000000d" / "listen" / "S1.opus", std::ios::binary) << "OggS";
}

// The events of framing `bytes` in pieces of `piece(k)` bytes (k counts the
// pieces): how many, a digest of them all (FNV-1a over kind, length and
// text), and the first `keep` of them. A repeat mark can make millions of
// lines; they are digested, not stored, and framing stops after
// kMaxFramedLines of them (more says nothing new, and three million empty
// lines take over 10 s to frame under the sanitizers on this machine,
// against well under one in the daemon's build).
struct Framed {
  size_t count = 0;
  uint64_t digest = 1469598103934665603ull;
  std::vector<LineFramer::Event> first;
  bool operator==(const Framed& o) const { return count == o.count && digest == o.digest; }
};

template <class Piece>
Framed frame(const std::string& bytes, Piece piece, size_t keep) {
  LineFramer framer(kMaxLineBytes);
  Framed out;
  auto mix = [&](const void* p, size_t n) {
    for (size_t i = 0; i < n; ++i) out.digest = (out.digest ^ static_cast<const unsigned char*>(p)[i]) * 1099511628211ull;
  };
  for (size_t at = 0, k = 0; at < bytes.size() && out.count < kMaxFramedLines; ++k) {
    const size_t n = piece(k);
    for (auto& e : framer.feed(std::string_view(bytes).substr(at, n))) {
      if (out.count == kMaxFramedLines) break;
      const unsigned char kind = e.kind;
      const size_t len = e.text.size();
      mix(&kind, 1);
      mix(&len, sizeof len);
      mix(e.text.data(), len);
      if (++out.count <= keep) out.first.push_back(std::move(e));
    }
    at += n;
  }
  return out;
}

[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "request_path_fuzz: %s\n", what.c_str());
  std::abort();
}

void check_answer(const Reply& reply) {
  const std::string text = json_text(reply.response);
  if (text.find('\n') != std::string::npos) fail("an answer spans lines");
  nlohmann::json back;
  try {
    back = nlohmann::json::parse(text);
  } catch (const std::exception& e) {
    fail(std::string("an answer is not JSON: ") + e.what());
  }
  if (!back.is_object() || !back.contains("ok") || !back["ok"].is_boolean()) fail("an answer lacks a boolean ok: " + text.substr(0, 500));
  if (!back["ok"].get<bool>()) {
    const auto& e = back["error"];
    if (!e.is_object() || !e.contains("code") || !e["code"].is_string() || !e.contains("message"))
      fail("an error answer lacks code or message: " + text.substr(0, 500));
    const std::string code = e["code"];
    if (code == "internal" || wire_code_from_name(code) == ErrorCode::internal)
      fail("an internal or unknown error code: " + text.substr(0, 500));
  }
  if (back.contains("id")) {
    const auto& id = back["id"];
    if (!(id.is_number() || (id.is_string() && id.get_ref<const std::string&>().size() <= Dispatcher::kMaxIdBytes)))
      fail("an echoed id of a kind the protocol does not allow: " + text.substr(0, 500));
  }
}

// Inline spot folders must belong to journaled jobs.
void check_no_stray_inline_spots(const World& w, const JobStore& store) {
  std::set<std::string> used;
  for (const auto& j : store.list(std::nullopt))
    for (const auto& t : j.spec.value("templates", nlohmann::json::array()))
      if (t.is_string()) used.insert(fs::path(t.get<std::string>()).parent_path().filename().string());
  std::error_code ec;
  for (fs::directory_iterator it(w.state / "inline", ec), end; !ec && it != end; it.increment(ec))
    if (!used.count(it->path().filename().string()))
      fail("inline spots left behind by a submit that was not journaled: " + it->path().string());
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int*, char***) {
  World& w = world();
  w.root = fuzz::fixture_root();
  w.state = fuzz::private_scratch_dir("request-state");
  w.guard = std::make_unique<PathGuard>(std::vector<std::string>{w.root.string()});
  RunnerConfig rc;  // the daemon's defaults, but a small inline limit and the fast planner
  rc.default_library = (w.root / "lib").string();
  rc.inline_dir = (w.state / "inline").string();
  rc.max_inline_bytes = 1u << 20;
  rc.planner = Planner::estimate;
  w.runner = std::make_unique<JobRunner>(rc, *w.guard);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  World& w = world();
  const std::string bytes = fuzz::expand_bytes(data, size, kMaxInputBytes);

  // As the session reads: 8 KiB at a time. The same events whatever the
  // pieces, for inputs up to 1 MiB (beyond, framing millions of lines
  // again would take most of the time limit): 64 KiB, one piece, and 1-7
  // bytes (up to 64 KiB).
  const Framed framed = frame(bytes, [](size_t) { return kSessionReadBytes; }, kMaxDispatchedLines);
  if (bytes.size() <= (1u << 20) && !(framed == frame(bytes, [](size_t) { return size_t{64} << 10; }, 0)))
    fail("framing in 64 KiB pieces differs");
  if (bytes.size() <= (1u << 20) && !(framed == frame(bytes, [&](size_t) { return bytes.size(); }, 0)))
    fail("framing in one piece differs");
  if (bytes.size() <= (64u << 10) && !(framed == frame(bytes, [](size_t k) { return 1 + k % 7; }, 0)))
    fail("framing in small pieces differs");

  seed_state(w);
  auto store = JobStore::open(w.state.string(), 2, 3);
  if (!store) fail("the seeded state does not open: " + store.error().describe());
  Dispatcher open_door(*store.value(), *w.runner, 1);
  Dispatcher locked(*store.value(), *w.runner, 2);
  locked.set_token(kToken);
  locked.set_cluster_info([]() -> Result<nlohmann::json> {
    return nlohmann::json{{"stream", "godwit"}, {"pending", 1}, {"lag", 0}, {"dead", 0},
                          {"workers", {{{"worker", "fuzz:1"}, {"threads", 1}}}}};
  });
  for (const auto& ev : framed.first) {
    if (ev.kind == LineFramer::Event::too_long) {
      check_answer({Dispatcher::error_response(ProtocolCode::too_large, "request line over the limit"), false, {}});
      continue;
    }
    if (ev.text.empty()) continue;  // the session skips empty lines
    check_answer(open_door.handle(ev.text));
    // The token check comes after parsing; long lines would only parse twice.
    if (ev.text.size() <= kMaxLockedLineBytes) check_answer(locked.handle(ev.text));
  }
  check_no_stray_inline_spots(w, *store.value());
  return 0;
}
