#include "client_command.h"

#include <utility>  // before Asio: Boost 1.74 awaitable.hpp uses std::exchange without it
#include <boost/asio.hpp>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "atomic_file.h"
#include "base64.h"
#include "exit_code.h"
#include "host_port.h"
#include "json_text.h"
#include "wire_code.h"

namespace godwit {
namespace {

using boost::asio::ip::tcp;

struct ClientArgs {
  std::string connect = "127.0.0.1:7878";
  std::string token_file;
  std::string job;          // job id
  std::string job_file;     // submit: a JSON job object
  std::vector<std::string> templates, recordings;
  std::string library, schedule, kind = "locate";
  std::string time_zone;    // submit, reconcile: the station's IANA zone
  std::string state;        // jobs filter
  std::string out;          // result to a file
  bool wait = false;        // submit: wait for the end and print the result
};

class Connection {
 public:
  Result<Done> open(const std::string& where) {
    std::string host;
    unsigned short port = 0;
    if (!split_host_port(where, host, port))
      return Error{ErrorCode::usage, "--connect must be HOST:PORT", "", std::nullopt};
    try {
      tcp::resolver r(io_);
      boost::asio::connect(socket_, r.resolve(host, std::to_string(port)));
    } catch (const std::exception& e) {
      return Error{ProtocolCode::unavailable, "cannot connect to godwitd at " + where + ": " + e.what(), "", std::nullopt};
    }
    return Done{};
  }
  Result<nlohmann::json> request(const nlohmann::json& req) {
    try {
      const std::string line = json_text(req) + "\n";
      boost::asio::write(socket_, boost::asio::buffer(line));
      return read();
    } catch (const std::exception& e) {
      return Error{ProtocolCode::unavailable, std::string("connection lost: ") + e.what(), "", std::nullopt};
    }
  }
  Result<nlohmann::json> read() {
    try {
      boost::asio::read_until(socket_, buf_, '\n');
      std::istream is(&buf_);
      std::string line;
      std::getline(is, line);
      return nlohmann::json::parse(line);
    } catch (const std::exception& e) {
      return Error{ProtocolCode::unavailable, std::string("connection lost: ") + e.what(), "", std::nullopt};
    }
  }

 private:
  boost::asio::io_context io_;
  tcp::socket socket_{io_};
  boost::asio::streambuf buf_;
};

// Prints the response, or only its "result" when `result_only`; to `out` when given.
int report(const Result<nlohmann::json>& r, const std::string& out = "", bool result_only = false) {
  if (!r) {
    std::cerr << "godwit: " << r.error().describe() << "\n";
    return exit_status(exit_code_for(r.error().code));
  }
  const auto& j = r.value();
  if (!j.value("ok", false)) {
    std::cerr << "godwit: " << json_text(j) << "\n";
    return exit_status(exit_code_for_reply(wire_code_from_name(j["error"].value("code", ""))));
  }
  const std::string text = json_text(result_only ? j["result"] : j, 2) + "\n";
  if (!out.empty()) {
    if (auto st = write_file_atomically(out, text); !st) {
      std::cerr << "godwit: " << st.error().describe() << "\n";
      return exit_status(ExitCode::io);
    }
  } else {
    std::cout << text;
  }
  return exit_status(ExitCode::done);
}

// A finished job's result and report files into `out`: reconcile.json (or
// result.json for a locate job), and each file `files` lists (a reconcile
// job's page and excerpts), so the page opens there as it would beside the
// command line's.
int fetch(Connection& c, nlohmann::json req, const std::string& out) {
  namespace fs = std::filesystem;
  auto refused = [](const Result<nlohmann::json>& r) { return !r || !r.value().value("ok", false); };
  req["op"] = "result";
  auto result = c.request(req);
  if (refused(result)) return report(result);
  std::error_code ec;
  fs::create_directories(out, ec);
  if (ec) {
    std::cerr << "godwit: cannot create " << out << ": " << ec.message() << "\n";
    return exit_status(ExitCode::io);
  }
  const nlohmann::json& doc = result.value()["result"];
  const std::string doc_name = doc.contains("placements") ? "reconcile.json" : "result.json";
  if (auto st = write_file_atomically((fs::path(out) / doc_name).string(), json_text(doc, 2) + "\n"); !st) {
    std::cerr << "godwit: " << st.error().describe() << "\n";
    return exit_status(ExitCode::io);
  }
  req["op"] = "files";
  auto list = c.request(req);
  if (refused(list)) return report(list);
  size_t written = 1;
  for (const auto& f : list.value().value("files", nlohmann::json::array())) {
    const std::string name = f.value("name", "");
    // Only plain relative names: a daemon cannot write outside `out`.
    const fs::path rel(name);
    bool plain = !name.empty() && rel.is_relative();
    for (const auto& part : rel) plain = plain && part != ".." && part != ".";
    if (!plain) {
      std::cerr << "godwit: the daemon listed a file named '" << name << "'; skipped\n";
      continue;
    }
    req["op"] = "file";
    req["name"] = name;
    auto got = c.request(req);
    if (refused(got)) return report(got);
    auto bytes = base64_decode(got.value().value("base64", ""));
    if (!bytes) {
      std::cerr << "godwit: " << name << ": not valid base64\n";
      return exit_status(ExitCode::refused);
    }
    const fs::path path = fs::path(out) / rel;
    fs::create_directories(path.parent_path(), ec);
    if (auto st = write_file_atomically(path.string(), *bytes); !st) {
      std::cerr << "godwit: " << st.error().describe() << "\n";
      return exit_status(ExitCode::io);
    }
    ++written;
  }
  std::cerr << "godwit: " << written << " files written to " << out << "\n";
  return exit_status(ExitCode::done);
}

int run(const std::string& op, const ClientArgs& a) {
  Connection c;
  if (auto st = c.open(a.connect); !st) return report(st.error());
  nlohmann::json req{{"op", op}};
  if (!a.token_file.empty()) {
    std::ifstream in(a.token_file);
    std::string t;
    std::getline(in, t);
    req["token"] = t;
  }
  if (op == "submit") {
    nlohmann::json job;
    if (!a.job_file.empty()) {
      std::ifstream in(a.job_file);
      try {
        job = nlohmann::json::parse(in);
      } catch (const std::exception& e) {
        std::cerr << "godwit: " << a.job_file << ": not JSON: " << e.what() << "\n";
        return exit_status(ExitCode::usage);
      }
    } else {
      auto abs = [](const std::string& p) { return std::filesystem::absolute(p).string(); };
      job = {{"kind", a.kind}, {"recordings", nlohmann::json::array()}};
      for (const auto& r : a.recordings) job["recordings"].push_back(abs(r));
      if (!a.templates.empty()) {
        job["templates"] = nlohmann::json::array();
        for (const auto& t : a.templates) job["templates"].push_back(abs(t));
      }
      if (!a.library.empty()) job["library"] = abs(a.library);
      if (!a.schedule.empty()) job["schedule"] = abs(a.schedule);
      if (!a.time_zone.empty()) job["time_zone"] = a.time_zone;
    }
    req["job"] = job;
    auto r = c.request(req);
    if (!a.wait || !r || !r.value().value("ok", false)) return report(r);
    const std::string id = r.value()["job"];
    auto w = c.request({{"op", "watch"}, {"job", id}, {"token", req.value("token", "")}});
    if (!w) return report(w);
    for (;;) {
      auto ev = c.read();
      if (!ev) return report(ev);
      const std::string state = ev.value().value("state", "");
      if (state == "done" || state == "failed" || state == "cancelled") break;
    }
    Connection c2;
    if (auto st = c2.open(a.connect); !st) return report(st.error());
    return report(c2.request({{"op", "result"}, {"job", id}, {"token", req.value("token", "")}}), a.out, true);
  }
  if (!a.job.empty()) req["job"] = a.job;
  if (op == "fetch") return fetch(c, req, a.out);
  if (op == "jobs" && !a.state.empty()) req["state"] = a.state;
  if (op == "watch") {
    auto r = c.request(req);
    if (!r || !r.value().value("ok", false)) return report(r);
    std::cout << json_text(r.value()) << std::endl;
    for (;;) {
      auto ev = c.read();
      if (!ev) return report(ev);
      if (ev.value().value("event", "") == "heartbeat") continue;
      std::cout << json_text(ev.value()) << std::endl;
      const std::string state = ev.value().value("state", "");
      if (!a.job.empty() && (state == "done" || state == "failed" || state == "cancelled")) return exit_status(ExitCode::done);
    }
  }
  if (op == "jobs") {  // every page
    auto r = c.request(req);
    while (r && r.value().value("ok", false) && r.value().contains("next")) {
      req["cursor"] = r.value()["next"];
      auto more = c.request(req);
      if (!more || !more.value().value("ok", false)) return report(more);
      for (auto& j : more.value()["jobs"]) r.value()["jobs"].push_back(std::move(j));
      if (more.value().contains("next")) r.value()["next"] = more.value()["next"];
      else r.value().erase("next");
    }
    return report(r);
  }
  return report(c.request(req), op == "result" ? a.out : "", op == "result" && !a.out.empty());
}

}  // namespace

std::function<int()> add_client_commands(CLI::App& app) {
  auto a = std::make_shared<ClientArgs>();
  auto common = [&](CLI::App* cmd) {
    cmd->add_option("--connect", a->connect, "godwitd address HOST:PORT (default 127.0.0.1:7878)");
    cmd->add_option("--token-file", a->token_file, "file holding the daemon's shared token");
    cmd->footer("Exit codes: 0 ok; 2 usage; 5 output not written; 6 the daemon refused the request; 7 busy or unreachable.");
  };
  auto* submit = app.add_subcommand("submit", "submit a job to godwitd; prints its id (or, with --wait, its result)");
  common(submit);
  submit->add_option("--job-file", a->job_file, "the job object as JSON (see server/PROTOCOL.md)");
  submit->add_option("--kind", a->kind, "locate (default) or reconcile")->check(CLI::IsMember({"locate", "reconcile"}));
  submit->add_option("--template,-t", a->templates, "master files (paths as the daemon sees them)");
  submit->add_option("--library,-l", a->library, "library folder");
  submit->add_option("--schedule,-s", a->schedule, "planned log (reconcile)");
  submit->add_option("--time-zone", a->time_zone,
                     "reconcile: the station's IANA time zone, for planned times written with a UTC offset "
                     "(default: the daemon's)");
  submit->add_option("--recording,-r", a->recordings, "recordings");
  submit->add_flag("--wait", a->wait, "wait for the job and print its result");
  submit->add_option("--out,-o", a->out, "with --wait: write the result to FILE");
  for (const char* op : {"status", "result", "cancel"}) {
    auto* c = app.add_subcommand(op, std::string(op) + " of a godwitd job");
    common(c);
    c->add_option("job", a->job, "job id")->required();
    if (std::string(op) == "result") c->add_option("--out,-o", a->out, "write the result document to FILE");
  }
  auto* fetch_cmd = app.add_subcommand(
      "fetch", "a finished job's result and report files (a reconcile job's page and excerpts) into a folder");
  common(fetch_cmd);
  fetch_cmd->add_option("job", a->job, "job id")->required();
  fetch_cmd->add_option("--out,-o", a->out, "folder to write them to (created if needed)")->required();
  auto* jobs = app.add_subcommand("jobs", "list godwitd's jobs");
  common(jobs);
  jobs->add_option("--state", a->state, "only jobs in this state");
  auto* watch = app.add_subcommand("watch", "stream progress events (one job, or all)");
  common(watch);
  watch->add_option("job", a->job, "job id (default: all jobs)");
  auto* health = app.add_subcommand("health", "godwitd's version, uptime, queue depth and workers");
  common(health);
  auto* cluster = app.add_subcommand("cluster", "queue mode: the workers on the daemon's Redis stream, pending, lag, dead letters");
  common(cluster);
  return [&app, a]() -> int {
    for (const char* op : {"submit", "status", "result", "cancel", "fetch", "jobs", "watch", "health", "cluster"})
      if (app.got_subcommand(op)) return run(op, *a);
    return exit_status(ExitCode::usage);
  };
}

}  // namespace godwit
