#include "record_commands.h"

#include <ctime>
#include <iostream>
#include <memory>
#include <optional>

#include "airings_query.h"
#include "exit_code.h"
#include "json_text.h"
#include "proof_files.h"
#include "proof_report.h"
#include "record_client.h"
#include "record_requests.h"
#include "record_store.h"
#include "wire_code.h"

namespace godwit {
namespace {

struct RecordArgs {
  std::string state_dir, connect, token_file;
  std::string station, spot, advertiser;
  std::string from, to;
  std::string format = "json";
  std::string out;
  size_t page = 1000;
};

int fail(const Error& e) {
  std::cerr << "godwit: " << e.describe() << "\n";
  if (e.code == ProtocolCode::bad_request) return exit_status(ExitCode::usage);  // our own request, from the options
  if (e.code == ProtocolCode::unavailable) return exit_status(ExitCode::daemon_unavailable);
  return exit_status(exit_code_for(e.code));
}

// The request both ways share: the daemon's op takes it as is; locally
// the same functions answer it.
nlohmann::json request_of(const std::string& op, const RecordArgs& a) {
  nlohmann::json r{{"op", op}, {"from", a.from}, {"to", a.to}};
  if (!a.station.empty()) r["station"] = a.station;
  if (!a.spot.empty()) r["spot"] = a.spot;
  if (!a.advertiser.empty()) r["advertiser"] = a.advertiser;
  return r;
}

// Asks the store or the daemon, whichever the arguments name.
class Source {
 public:
  Status open(const RecordArgs& a) {
    if (a.state_dir.empty() == a.connect.empty())
      return Error{ErrorCode::usage, "give --state-dir DIR (read the store there) or --connect HOST:PORT (ask godwitd)",
                   "", std::nullopt};
    if (!a.state_dir.empty()) {
      auto s = RecordStore::open(a.state_dir, /*create=*/false);
      if (!s) return s.error();
      store_ = std::move(s.value());
      return ok_status();
    }
    auto t = read_token_file(a.token_file);
    if (!t) return t.error();
    token_ = t.value();
    client_ = std::make_unique<RecordClient>();
    return client_->open(a.connect);
  }
  Result<nlohmann::json> ask(const nlohmann::json& req) {
    const std::string op = req.at("op");
    if (store_) return op == "airings" ? airings_op(*store_, req) : proof_op(*store_, req);
    auto r = client_->request(req, token_);
    if (!r) return r.error();
    if (!r.value().value("ok", false)) {
      const auto& e = r.value().contains("error") ? r.value()["error"] : nlohmann::json::object();
      return Error{wire_code_from_name(e.value("code", "internal")), "godwitd: " + e.value("message", json_text(r.value())),
                   "", std::nullopt};
    }
    return r;
  }

 private:
  std::unique_ptr<RecordStore> store_;
  std::unique_ptr<RecordClient> client_;
  std::string token_;
};

// --from and --to checked here, so the messages name the options.
std::optional<Error> bad_range(const RecordArgs& a) {
  if (!parse_range_start(a.from))
    return Error{ErrorCode::usage, "--from must be a date (2026-03-14) or a local date-time (2026-03-14T06:00:00)", "", {}};
  if (!parse_range_end(a.to))
    return Error{ErrorCode::usage, "--to must be a date (2026-03-14, through its end) or a local date-time", "", {}};
  if (*parse_range_end(a.to) < *parse_range_start(a.from))
    return Error{ErrorCode::usage, "--to is before --from", "", {}};
  return std::nullopt;
}

int run_airings(const RecordArgs& a) {
  if (!a.spot.empty() && !a.advertiser.empty()) return fail({ErrorCode::usage, "give --spot or --advertiser, not both", "", {}});
  if (auto e = bad_range(a)) return fail(*e);
  Source src;
  if (auto st = src.open(a); !st) return fail(st.error());
  nlohmann::json req = request_of("airings", a);
  req["limit"] = a.page;
  const bool csv = a.format == "csv";
  std::string cursor;
  size_t n = 0;
  for (bool first = true;; first = false) {
    if (!cursor.empty()) req["cursor"] = cursor;
    auto page = src.ask(req);
    if (!page) {
      if (!first && !csv) std::cout << "\n]\n";  // what was printed stays a valid document
      std::cout.flush();
      return fail(page.error());
    }
    if (first) std::cout << (csv ? airings_csv_header() : std::string("["));
    for (const auto& j : page.value()["airings"]) {
      if (csv) {
        // The CSV from the JSON, so both sources print alike.
        AiringRow r;
        r.station = j.value("station", "");
        r.aired_local = parse_iso8601_local(j.value("aired", "")).value_or(0);
        r.spot = j.value("spot", "");
        r.advertiser = j.value("advertiser", "");
        r.status = j.value("status", "");
        r.slot = j.value("slot", "");
        r.planned = j.value("planned", "");
        if (j.contains("deviation_s")) r.deviation_s = j["deviation_s"].get<double>();
        r.score = j.value("score", 0.0);
        r.coverage = j.value("coverage", 0.0);
        r.polarity = j.value("polarity", 1);
        r.speed = j.value("speed", 1.0);
        r.tempo = j.value("tempo", 1.0);
        const auto l = j.value("loudness", nlohmann::json::object());
        if (l.contains("spot_lufs")) r.spot_lufs = l["spot_lufs"].get<double>();
        if (l.contains("programme_lufs")) r.programme_lufs = l["programme_lufs"].get<double>();
        r.recording = j.value("recording", "");
        r.recording_sha256 = j.value("recording_sha256", "");
        r.offset_s = j.value("offset_s", 0.0);
        std::cout << airing_to_csv(r);
      } else {
        std::cout << (n ? ",\n" : "\n") << json_text(j);
      }
      ++n;
    }
    if (!page.value().contains("next")) break;
    cursor = page.value()["next"].get<std::string>();
  }
  if (!csv) std::cout << (n ? "\n]\n" : "]\n");
  std::cout.flush();
  std::cerr << "godwit: " << n << " airing" << (n == 1 ? "" : "s") << "\n";
  return exit_status(ExitCode::done);
}

int run_proof(const RecordArgs& a) {
  if (a.spot.empty() == a.advertiser.empty()) return fail({ErrorCode::usage, "give --advertiser NAME or --spot ID (one of them)", "", {}});
  if (auto e = bad_range(a)) return fail(*e);
  Source src;
  if (auto st = src.open(a); !st) return fail(st.error());
  auto r = src.ask(request_of("proof", a));
  if (!r) return fail(r.error());
  const nlohmann::json& doc = r.value()["proof"];
  auto written = write_proof_files(doc, a.out);
  if (!written) {
    std::cerr << "godwit: " << written.error().describe() << "\n";
    return exit_status(ExitCode::io);
  }
  const auto& t = doc.value("totals", nlohmann::json::object());
  std::cerr << "godwit: " << t.value("ordered", 0) << " placements (" << t.value("owed", 0) << " owed), "
            << t.value("unscheduled", 0) << " unscheduled airings, " << doc.value("stations", nlohmann::json::array()).size()
            << " station(s); written to " << a.out << "/proof.json, proof.csv, proof.html\n";
  for (const auto& c : doc.value("cautions", nlohmann::json::array()))
    if (c.is_string()) std::cerr << c.get<std::string>() << "\n";
  return exit_status(ExitCode::done);
}

void common(CLI::App* cmd, RecordArgs& a) {
  cmd->add_option("--from", a.from, "first day (2026-03-14) or local date-time (2026-03-14T06:00:00)")->required();
  cmd->add_option("--to", a.to, "last day, through its end (2026-03-20), or a local date-time (exclusive)")->required();
  cmd->add_option("--state-dir", a.state_dir, "read the store of record in DIR (DIR/store.sqlite)");
  cmd->add_option("--connect", a.connect, "ask godwitd at HOST:PORT instead");
  cmd->add_option("--token-file", a.token_file, "with --connect: file holding the daemon's shared token");
}

}  // namespace

std::function<int()> add_record_commands(CLI::App& app) {
  auto a = std::make_shared<RecordArgs>();
  auto* airings = app.add_subcommand("airings", "list the stored airings of a date range, in time order");
  airings->description(
      "List the airings the store of record holds (every reconcile run with --state-dir, and every\n"
      "reconciliation of godwitd, writes there), in time order, with their evidence (score, coverage,\n"
      "polarity, speed, loudness, recording, SHA-256 and offset) and the verdict of the placement each\n"
      "served (or unscheduled). Times are each station's local time. Detections are evidence to verify\n"
      "by listening.");
  common(airings, *a);
  airings->add_option("--station", a->station, "only this station");
  airings->add_option("--spot", a->spot, "only this spot (the version detected)");
  airings->add_option("--advertiser", a->advertiser, "only this advertiser's spots (from the masters' sidecars)");
  airings->add_option("--format", a->format, "json (an array, default) or csv")->check(CLI::IsMember({"json", "csv"}));
  airings->add_option("--page", a->page, "airings asked for at a time (default 1000)")->check(CLI::Range(1, 10000));
  airings->footer("Exit codes: 0 done; 2 usage (also an unknown station); 3 no store in --state-dir; 5 the store\n"
                  "cannot be read; 6 the daemon refused the request; 7 the daemon is unreachable.");
  auto* proof = app.add_subcommand("proof", "proof of performance: an advertiser's or spot's placements, ordered vs aired");
  proof->description(
      "Write OUT/proof.json, OUT/proof.csv and OUT/proof.html (a page that opens offline and prints on A4):\n"
      "per station, the placements of the advertiser (or spot) in the range, ordered against aired, each\n"
      "airing with its time, version, deviation, coverage, loudness and score; the placements still owed\n"
      "(missing, partial, wrong_version, not_recorded); the airings nobody ordered; totals per spot and\n"
      "day; the recordings searched with their SHA-256; the godwit version; and the cautions: detections\n"
      "are evidence to verify by listening, loudness figures are indicative (local regulation and\n"
      "certified measurement decide).");
  common(proof, *a);
  proof->add_option("--advertiser", a->advertiser, "the advertiser (as the masters' sidecars name it)");
  proof->add_option("--spot", a->spot, "a spot id (as planned)");
  proof->add_option("--out,-o", a->out, "output folder (created if needed)")->required();
  proof->footer("Exit codes: 0 done; 2 usage; 3 no store in --state-dir; 5 the files or the store could not be\n"
                "written or read; 6 the daemon refused the request; 7 the daemon is unreachable.");
  return [&app, a]() -> int {
    if (app.got_subcommand("airings")) return run_airings(*a);
    return run_proof(*a);
  };
}

}  // namespace godwit
