#include "report_files.h"

#include <ctime>
#include <filesystem>
#include <fstream>

#include "atomic_file.h"
#include "kept_excerpts.h"
#include "godwit/report/html_report.h"

namespace godwit {
namespace fs = std::filesystem;
namespace {

// "2026-12-03T05:50:22+01:00": now, on this machine's clock and zone.
std::string now_local() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  localtime_r(&t, &tm);
  char b[40];
  if (std::strftime(b, sizeof b, "%Y-%m-%dT%H:%M:%S%z", &tm) == 0) return "";
  std::string s = b;
  if (s.size() >= 5) s.insert(s.end() - 2, ':');  // +0100 -> +01:00
  return s;
}

// A folder of ours: only regular .opus files in it.
bool only_excerpts(const fs::path& dir) {
  std::error_code ec;
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec))
    if (!it->is_regular_file() || it->path().extension() != ".opus") return false;
  return !ec;
}

Error io_error(const std::string& what, const fs::path& path, const std::error_code& ec) {
  return Error{ErrorCode::io, what + ": " + ec.message(), path.string(), std::nullopt};
}

}  // namespace

Result<std::optional<Listening>> write_excerpts(const ReconcileResult& r, const SourceOpener& opener, const ReportFiles& f,
                                                const std::function<bool()>& should_stop,
                                                const std::function<void(std::string_view)>& warn) {
  if (!f.excerpts) return std::optional<Listening>();
  const fs::path target = fs::path(f.dir) / f.listen_folder;
  const fs::path fresh = fs::path(f.dir) / ("." + f.listen_folder + ".new");
  std::error_code ec;
  fs::remove_all(fresh, ec);
  fs::create_directories(fresh, ec);
  if (ec) return io_error("cannot create the excerpts folder", fresh, ec);
  // Excerpts of the report this one replaces, taken when unchanged.
  KeptExcerpts kept(fs::path(f.dir) / ("." + f.listen_folder + ".json"), only_excerpts(target) ? target : fs::path(),
                    fresh);
  ExcerptOptions eo;
  eo.folder = f.listen_folder;
  eo.should_stop = should_stop;
  eo.kept = [&kept](const std::string& name, const ExcerptOrigin& origin) { return kept.take(name, origin); };
  auto sink = [&](const std::string& name, const std::string& bytes) -> Status {
    const fs::path p = fresh / name;
    std::ofstream out(p, std::ios::binary | std::ios::trunc);
    out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    out.close();
    if (!out) return Error{ErrorCode::io, "cannot write an excerpt", p.string(), std::nullopt};
    return ok_status();
  };
  auto made = make_excerpts(r, opener, eo, sink);
  if (!made) {
    fs::remove_all(fresh, ec);
    if (made.error().code == ErrorCode::unsupported) {
      warn("no excerpts: " + made.error().describe());
      return std::optional<Listening>();
    }
    return made.error();
  }
  if (fs::exists(target, ec)) {
    if (!fs::is_directory(target, ec) || !only_excerpts(target)) {
      fs::remove_all(fresh, ec);
      return Error{ErrorCode::io, "holds other files than excerpts; not replaced (move it away)", target.string(),
                   std::nullopt};
    }
    fs::remove_all(target, ec);
    if (ec) return io_error("cannot replace the excerpts folder", target, ec);
  }
  fs::rename(fresh, target, ec);
  if (ec) return io_error("cannot put the excerpts folder in place", target, ec);
  if (auto st = kept.write(made.value()); !st) warn("excerpts will be made again next time: " + st.error().describe());
  for (const auto& p : made.value().problems) warn("no excerpt for " + p);
  return std::optional<Listening>(std::move(made.value()));
}

std::string report_html(const ReconcileResult& r, const ReportFiles& f, const LoudnessOptions& loudness,
                        const Listening* listening) {
  HtmlReportOptions ho;
  ho.title = f.log_name;
  ho.loudness = loudness;
  ho.made = now_local();
  ho.listening = listening;
  return reconcile_to_html(r, ho);
}

Result<std::optional<Listening>> write_report_files(const ReconcileResult& r, const ReconcileOptions& o, const ReportFiles& f,
                                                    const std::function<bool()>& should_stop,
                                                    const std::function<void(std::string_view)>& warn) {
  std::error_code ec;
  fs::create_directories(f.dir, ec);
  if (ec) return io_error("cannot create the report folder", f.dir, ec);
  auto listening = write_excerpts(r, o.locate.opener, f, should_stop, warn);
  if (!listening) return listening.error();
  const Listening* l = listening.value() ? &*listening.value() : nullptr;
  if (auto st = write_file_atomically((fs::path(f.dir) / f.html_name).string(), report_html(r, f, o.loudness, l)); !st)
    return st.error();
  return listening;
}

}  // namespace godwit
