#include "godwit/html_report.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "godwit/reconcile_report.h"
#include "json_number.h"

namespace godwit {
namespace {

std::string esc(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '&': o += "&amp;"; break;
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '"': o += "&quot;"; break;
      default: o += c;
    }
  }
  return o;
}

std::string fmt(const char* f, double v) {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

const char* colour(const std::string& status) {
  static const std::map<std::string, const char*> c = {
      {"aired", "#2e7d32"}, {"early", "#ef6c00"}, {"late", "#ef6c00"}, {"missing", "#c62828"},
      {"partial", "#8e24aa"}, {"wrong_version", "#ad1457"}, {"unscheduled", "#1565c0"},
      {"not_recorded", "#757575"}, {"unknown_spot", "#5d4037"}};
  auto it = c.find(status);
  return it == c.end() ? "#555" : it->second;
}

// A small line plot of a score profile (scores in [-1, 1] -> 0..1 shown).
std::string sparkline(const Profile& p) {
  const double w = 120, h = 24;
  std::string pts;
  const size_t n = p.scores.size();
  for (size_t i = 0; i < n; ++i) {
    const double x = n > 1 ? w * static_cast<double>(i) / static_cast<double>(n - 1) : w / 2;
    const double y = h - h * std::clamp(static_cast<double>(std::fabs(p.scores[i])), 0.0, 1.0);
    pts += fmt("%.1f", x) + "," + fmt("%.1f", y) + " ";
  }
  return "<svg class=\"profile\" width=\"120\" height=\"24\" viewBox=\"0 0 120 24\" role=\"img\" aria-label=\"score "
         "profile, one point per second\"><rect width=\"120\" height=\"24\" fill=\"#f4f4f4\"/><line x1=\"0\" y1=\"" +
         fmt("%.1f", h * 0.7) + "\" x2=\"120\" y2=\"" + fmt("%.1f", h * 0.7) +
         "\" stroke=\"#ccc\" stroke-dasharray=\"2,2\"/><polyline fill=\"none\" stroke=\"#333\" stroke-width=\"1\" "
         "points=\"" + pts + "\"/></svg>";
}

// "aired at 1.0417x (+4.17 %)" under the score, when the speed changed.
std::string speed_note(const AiringRecord& a) {
  if (std::fabs(a.speed - 1) < 1e-6) return "";
  return "<br><span class=\"small speed\">aired at " + fmt("%.4f", a.speed) + "&times; (" + fmt("%+.2f", (a.speed - 1) * 100) +
         " %)</span>";
}

std::string loudness_cell(const AiringRecord& a, const LoudnessOptions& o) {
  if (!a.spot_lufs) return "";
  std::string s = fmt("%.1f LUFS", *a.spot_lufs);
  if (a.programme_lufs) {
    const double d = *a.spot_lufs - *a.programme_lufs;
    s += " (" + fmt("%+.1f", d) + " LU vs programme" + (d > o.louder_margin_lu ? ", <b>louder</b>" : "") + ")";
  }
  return s;
}

// Why a placement has no airing, for people.
std::string no_airing_note(const Verdict& v) {
  auto spans = [](const std::vector<LocalSpan>& list) {
    std::string s;
    for (const auto& [from, to] : list)
      s += (s.empty() ? "" : ", ") + format_iso8601_local(from, 0).substr(11) + "-" + format_iso8601_local(to, 0).substr(11);
    return s;
  };
  switch (v.status) {
    case VerdictStatus::not_recorded:
      return "not recorded: " + spans(v.unrecorded) + (v.recorded.empty() ? "" : "; recorded without an airing: " + spans(v.recorded));
    case VerdictStatus::unknown_spot:
      return "this spot is not in the library" + (v.suggestion.empty() ? std::string() : " (did you mean " + v.suggestion + "?)");
    default:
      return "no airing found within the horizon";
  }
}

}  // namespace

std::string reconcile_to_html(const ReconcileResult& r, const HtmlReportOptions& o) {
  std::map<std::string, int> counts;
  for (const auto& v : r.verdicts) counts[verdict_name(v.status)]++;
  counts["unscheduled"] = static_cast<int>(r.unscheduled.size());

  // Time span of the day shown.
  double t0 = 1e300, t1 = -1e300;
  for (const auto& p : r.placements) t0 = std::min(t0, p.planned_s - p.window_s), t1 = std::max(t1, p.planned_s + p.window_s);
  for (const auto& a : r.airings) t0 = std::min(t0, a.aired_s), t1 = std::max(t1, a.aired_s + a.length_s);
  if (t0 > t1) t0 = 0, t1 = 3600;
  t0 = std::floor(t0 / 300) * 300;
  t1 = std::ceil(t1 / 300) * 300;
  if (t1 - t0 < 600) t1 = t0 + 600;
  const double W = 1200, left = 10;
  auto X = [&](double t) { return left + (W - 2 * left) * (t - t0) / (t1 - t0); };

  std::string h;
  h.reserve(64 * 1024 + r.placements.size() * 2048);
  h += "<!doctype html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>godwit report: " + esc(o.title) +
       "</title>\n<style>\n"
       "body{font:14px/1.4 system-ui,sans-serif;margin:24px;color:#222}h1{font-size:20px}h2{font-size:16px;margin-top:28px}"
       "#cautions{border:1px solid #e0a800;background:#fff8e1;padding:8px 12px}"
       ".count{display:inline-block;margin:0 14px 6px 0;padding:4px 10px;border-radius:4px;color:#fff}"
       "table{border-collapse:collapse;width:100%}th,td{border-bottom:1px solid #ddd;padding:3px 6px;text-align:left;vertical-align:middle}"
       "th{background:#fafafa;position:sticky;top:0}.status{font-weight:600}td.num{text-align:right;font-variant-numeric:tabular-nums}"
       "svg#timeline{border:1px solid #ddd;background:#fff}.small{color:#666;font-size:12px}\n"
       "</style></head><body>\n";
  h += "<h1>godwit report: " + esc(o.title) + "</h1>\n";
  h += "<div id=\"cautions\"><p>" + esc(kEvidenceCaution) + "</p><p>" + esc(kLoudnessCaution) + "</p></div>\n";
  h += "<h2>Summary</h2><div id=\"summary\">";
  std::vector<std::string> shown;
  for (VerdictStatus st : all_verdicts()) shown.push_back(verdict_name(st));
  shown.push_back("unscheduled");
  for (const std::string& s : shown)
    h += "<span class=\"count\" data-status=\"" + s + "\" style=\"background:" + colour(s) + "\">" + s +
         ": <b>" + std::to_string(counts[s]) + "</b></span>";
  h += "</div>\n";

  // Timeline: one lane of planned windows, one of detections; a line joins
  // a placement to the airing that served it.
  const double lane_plan = 40, lane_air = 90, H = 130;
  h += "<h2>Timeline</h2><svg id=\"timeline\" width=\"100%\" viewBox=\"0 0 " + fmt("%.0f", W) + " " + fmt("%.0f", H) +
       "\" role=\"img\" aria-label=\"planned windows against detections\">\n";
  const double step = (t1 - t0) > 6 * 3600 ? 3600 : (t1 - t0) > 3600 ? 900 : 300;
  for (double t = t0; t <= t1 + 1e-6; t += step) {
    h += "<line x1=\"" + fmt("%.1f", X(t)) + "\" y1=\"20\" x2=\"" + fmt("%.1f", X(t)) + "\" y2=\"" + fmt("%.0f", H - 10) +
         "\" stroke=\"#eee\"/><text x=\"" + fmt("%.1f", X(t) + 2) + "\" y=\"14\" font-size=\"10\" fill=\"#666\">" +
         format_iso8601_local(t, 0).substr(11, 5) + "</text>\n";
  }
  h += "<text x=\"12\" y=\"" + fmt("%.0f", lane_plan - 12) + "\" font-size=\"10\" fill=\"#444\">planned (window)</text>"
       "<text x=\"12\" y=\"" + fmt("%.0f", lane_air + 26) + "\" font-size=\"10\" fill=\"#444\">detected</text>\n";
  for (const auto& v : r.verdicts) {
    const auto& p = r.placements[v.placement];
    const std::string st = verdict_name(v.status);
    h += "<g class=\"slot\" data-slot=\"" + esc(p.slot) + "\"><title>" + esc(p.slot + " " + p.spot + " " + p.planned + " " + st) +
         "</title><rect x=\"" + fmt("%.1f", X(p.planned_s - p.window_s)) + "\" y=\"" + fmt("%.0f", lane_plan - 6) +
         "\" width=\"" + fmt("%.2f", std::max(1.0, X(p.planned_s + p.window_s) - X(p.planned_s - p.window_s))) +
         "\" height=\"12\" fill=\"" + colour(st) + "\" fill-opacity=\"0.25\"/><line x1=\"" + fmt("%.1f", X(p.planned_s)) +
         "\" y1=\"" + fmt("%.0f", lane_plan - 8) + "\" x2=\"" + fmt("%.1f", X(p.planned_s)) + "\" y2=\"" +
         fmt("%.0f", lane_plan + 8) + "\" stroke=\"" + colour(st) + "\"/>";
    if (v.airing) {
      const auto& a = r.airings[*v.airing];
      h += "<line x1=\"" + fmt("%.1f", X(p.planned_s)) + "\" y1=\"" + fmt("%.0f", lane_plan + 8) + "\" x2=\"" +
           fmt("%.1f", X(a.aired_s)) + "\" y2=\"" + fmt("%.0f", lane_air - 8) + "\" stroke=\"" + colour(st) +
           "\" stroke-opacity=\"0.6\"/>";
    }
    h += "</g>\n";
  }
  std::vector<std::string> airing_status(r.airings.size(), "unscheduled");
  for (const auto& v : r.verdicts)
    if (v.airing) airing_status[*v.airing] = verdict_name(v.status);
  for (size_t i = 0; i < r.airings.size(); ++i) {
    const auto& a = r.airings[i];
    h += "<rect class=\"detection\" x=\"" + fmt("%.1f", X(a.aired_s)) + "\" y=\"" + fmt("%.0f", lane_air - 8) +
         "\" width=\"" + fmt("%.2f", std::max(2.0, X(a.aired_s + a.length_s * a.coverage / a.speed) - X(a.aired_s))) +
         "\" height=\"16\" fill=\"" + colour(airing_status[i]) + "\"><title>" +
         esc(a.spot + " " + format_iso8601_local(a.aired_s, 3) + " score " + fmt("%.3f", a.score)) + "</title></rect>\n";
  }
  h += "</svg>\n";

  h += "<h2>Placements</h2><table id=\"placements\"><thead><tr><th>slot</th><th>spot</th><th>planned</th><th>window</th>"
       "<th>status</th><th>aired</th><th>deviation</th><th>score</th><th>coverage</th><th>detected</th>"
       "<th>recording @ offset</th><th>loudness</th><th>profile</th></tr></thead><tbody>\n";
  for (const auto& v : r.verdicts) {
    const auto& p = r.placements[v.placement];
    const std::string st = verdict_name(v.status);
    h += "<tr class=\"placement\" data-slot=\"" + esc(p.slot) + "\" data-status=\"" + st + "\"><td>" + esc(p.slot) +
         "</td><td>" + esc(p.spot) + "</td><td>" + esc(p.planned) + "</td><td class=\"num\">&plusmn;" +
         fmt("%.0f", p.window_s) + " s</td><td class=\"status\" style=\"color:" + colour(st) + "\">" + st + "</td>";
    if (v.airing) {
      const auto& a = r.airings[*v.airing];
      std::string missing;
      for (const auto& [f, t] : a.missing_s) missing += (missing.empty() ? "" : ", ") + fmt("%.2f", f) + "-" + fmt("%.2f", t) + " s";
      h += "<td>" + format_iso8601_local(a.aired_s, 3) + "</td><td class=\"num\">" + fmt("%+.3f s", detail::round_decimals(v.deviation_s, 3)) +
           "</td><td class=\"num\">" + fmt("%.3f", a.score) + (a.polarity < 0 ? " (inverted)" : "") + speed_note(a) +
           "</td><td class=\"num\">" + fmt("%.2f", a.coverage) + (missing.empty() ? "" : "<br><span class=\"small\">missing " + missing + "</span>") +
           "</td><td>" + esc(reported_spot(a, p)) + (a.undetermined_among.empty() ? "" : "<br><span class=\"small\">version undetermined</span>") +
           "</td><td class=\"small\">" + esc(a.recording) + " @ " + fmt("%.3f s", a.offset_s) + "</td><td class=\"small\">" +
           loudness_cell(a, o.loudness) + "</td><td>" + sparkline(a.profile) + "</td>";
    } else {
      h += "<td colspan=\"8\" class=\"small\">" + esc(no_airing_note(v)) + "</td>";
    }
    h += "</tr>\n";
  }
  h += "</tbody></table>\n";
  h += "<h2>Unscheduled airings</h2><table id=\"unscheduled\"><thead><tr><th>spot</th><th>aired</th><th>score</th>"
       "<th>coverage</th><th>recording @ offset</th><th>loudness</th><th>profile</th></tr></thead><tbody>\n";
  for (size_t i : r.unscheduled) {
    const auto& a = r.airings[i];
    h += "<tr class=\"airing\"><td>" + esc(a.spot) + "</td><td>" + format_iso8601_local(a.aired_s, 3) + "</td><td class=\"num\">" +
         fmt("%.3f", a.score) + speed_note(a) + "</td><td class=\"num\">" + fmt("%.2f", a.coverage) + "</td><td class=\"small\">" +
         esc(a.recording) + " @ " + fmt("%.3f s", a.offset_s) + "</td><td class=\"small\">" + loudness_cell(a, o.loudness) +
         "</td><td>" + sparkline(a.profile) + "</td></tr>\n";
  }
  h += "</tbody></table>\n";
  if (!r.timeline_issues.empty() || !r.log_problems.empty()) {
    h += "<h2>Problems</h2><ul id=\"problems\">";
    for (const auto& t : r.timeline_issues)
      h += "<li>" + std::string(timeline_issue_name(t.kind)) + " of " + fmt("%.3f", t.seconds) + " s between " + esc(t.before) +
           " and " + esc(t.after) + "</li>";
    for (const auto& p : r.log_problems) h += "<li>planned log line " + std::to_string(p.line) + ": " + esc(p.reason) + "</li>";
    h += "</ul>\n";
  }
  h += "<p class=\"small\">Made by godwit 0.1.0. Times are local to the station's clock; offsets are seconds from the start "
       "of each recording.</p>\n</body></html>\n";
  return h;
}

}  // namespace godwit
