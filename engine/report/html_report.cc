// Over 400 lines: one self-contained page (markup, styles, script, SVG) written top to bottom as it reads.
#include "godwit/report/html_report.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <set>

#include "godwit/report/reconcile_report.h"
#include "godwit/core/version.h"
#include "json_number.h"

namespace godwit {

std::string html_escape(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '&': o += "&amp;"; break;
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '"': o += "&quot;"; break;
      case '\'': o += "&#39;"; break;
      default: o += c;
    }
  }
  return o;
}

// Text on a verdict colour: dark on the light ones (CIELAB L* over 60).
static bool light(const std::string& status) { return status == "early" || status == "partial" || status == "not_recorded"; }

// Each verdict's colour as a CSS variable on whatever carries its
// data-status (rows, marks, chips, legend), and what wears it.
std::string verdict_palette_css(const std::vector<std::string>& statuses) {
  std::string c;
  for (const auto& s : statuses)
    c += "[data-status=" + s + "]{--c:" + verdict_colour(s) + (light(s) ? ";--ink:#111" : "") + "}";
  return c + ".chip{display:inline-block;width:10px;height:10px;border-radius:2px;margin-right:4px;background:var(--c)}"
             ".count{background:var(--c);color:var(--ink,#fff)}.swatch{background:var(--c)}"
             ".swatch.recorded{background:#eef2f7;outline:1px solid #ccd}"
             "g.slot rect{fill:var(--c);fill-opacity:.3;stroke:var(--c);stroke-width:.8}g.slot line{stroke:var(--c);"
             "stroke-width:2}g.slot line.link{stroke-width:1;stroke-opacity:.6}rect.detection{fill:var(--c)}\n";
}

namespace {

std::string esc(const std::string& s) { return html_escape(s); }

std::string fmt(const char* f, double v) {
  char b[64];
  std::snprintf(b, sizeof b, f, v + 0.0);
  return b;
}

// "06:01:30" and "06:01:32.500".
std::string clock(LocalSeconds t) { return format_iso8601_local(t, 0).substr(11); }
std::string clock_ms(LocalSeconds t) { return format_iso8601_local(t, 3).substr(11); }

// Where long words may wrap: after the 'T' of a date-time, after '_' and
// '.' in ids (a hyphen already allows it before a letter).
std::string wrappable(const std::string& text) {
  auto digit = [&](size_t i) { return i < text.size() && text[i] >= '0' && text[i] <= '9'; };
  std::string o;
  for (size_t i = 0; i < text.size(); ++i) {
    o += esc(std::string(1, text[i]));
    const bool date_time = text[i] == 'T' && i > 0 && digit(i - 1) && digit(i + 1);
    if (date_time || ((text[i] == '_' || text[i] == '.') && i + 1 < text.size())) o += "<wbr>";
  }
  return o;
}

std::string palette_css(const std::vector<std::string>& statuses) { return verdict_palette_css(statuses); }

const std::string kNoAdvertiser = "(no advertiser)";

const SpotMeta* meta_of(const ReconcileResult& r, const std::string& spot) {
  auto it = r.spots.find(spot);
  return it == r.spots.end() ? nullptr : &it->second.meta;
}

std::string advertiser_of(const ReconcileResult& r, const std::string& spot) {
  const SpotMeta* m = meta_of(r, spot);
  return m && !m->advertiser.empty() ? m->advertiser : kNoAdvertiser;
}

// The spot id with its advertiser and title beneath.
std::string spot_cell(const ReconcileResult& r, const std::string& spot) {
  std::string s = "<span class=\"spot-id\">" + wrappable(spot) + "</span>";
  if (const SpotMeta* m = meta_of(r, spot); m && (!m->advertiser.empty() || !m->title.empty())) {
    s += "<br><span class=\"small meta\">" + esc(m->advertiser) + (!m->advertiser.empty() && !m->title.empty() ? ": " : "") +
         esc(m->title) + "</span>";
  }
  return s;
}

// A small line plot of a score profile (scores in [-1, 1] -> 0..1 shown).
std::string sparkline(const Profile& p) {
  const double w = 120, h = 24;
  std::string pts;
  const size_t n = p.scores.size();
  for (size_t i = 0; i < n; ++i) {
    const double x = n > 1 ? w * static_cast<double>(i) / static_cast<double>(n - 1) : w / 2;
    const double y = h - h * std::clamp(static_cast<double>(std::fabs(p.scores[i])), 0.0, 1.0);
    if (i) pts += ' ';
    pts += fmt("%.1f", x);
    pts += ',';
    pts += fmt("%.1f", y);
  }
  // Drawn by the stylesheet (svg.profile): background, the 0.3 line, the trace.
  return "<svg class=\"profile\" width=\"120\" height=\"24\" viewBox=\"0 0 120 24\" role=\"img\" aria-label=\"score "
         "profile\"><path d=\"M0 16.8H120\"/><polyline points=\"" + pts + "\"/></svg>";
}

// "aired at 1.0417x (+4.17 %)" under the score, when the speed changed;
// "tempo 0.9600x (-4.00 %), pitch kept" when a time-stretcher changed it.
std::string speed_note(const AiringRecord& a) {
  if (std::fabs(a.tempo - 1) >= 1e-6)
    return "<br><span class=\"small speed\">tempo " + fmt("%.4f", a.tempo) + "&times; (" + fmt("%+.2f", (a.tempo - 1) * 100) +
           " %), pitch kept</span>";
  if (std::fabs(a.speed - 1) < 1e-6) return "";
  return "<br><span class=\"small speed\">aired at " + fmt("%.4f", a.speed) + "&times; (" + fmt("%+.2f", (a.speed - 1) * 100) +
         " %)</span>";
}

std::string loudness_cell(const AiringRecord& a, const LoudnessOptions& o) {
  if (!a.spot_lufs) return "";
  std::string s = fmt("%.1f LUFS", detail::round_decimals(*a.spot_lufs, 1));
  if (a.programme_lufs) {
    const double d = detail::round_decimals(*a.spot_lufs - *a.programme_lufs, 1);
    s += " (" + fmt("%+.1f", d) + " LU vs programme" + (d > o.louder_margin_lu ? ", <b>louder</b>" : "") + ")";
  }
  return s;
}

// "15.0-30.0 s" ranges of the master; empty ranges are left out.
std::string ranges(const std::vector<std::pair<double, double>>& list) {
  std::string s;
  for (const auto& [f, t] : list) {
    if (t - f < 0.005) continue;
    s += (s.empty() ? "" : ", ") + fmt("%.2f", f) + "-" + fmt("%.2f", t) + " s";
  }
  return s;
}

// Why a placement has no airing, for people.
std::string no_airing_note(const Verdict& v) {
  auto spans = [](const std::vector<LocalSpan>& list) {
    std::string s;
    for (const auto& [from, to] : list) s += (s.empty() ? "" : ", ") + clock(from) + "-" + clock(to);
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

std::string file_name(const std::string& path) {
  const size_t slash = path.find_last_of('/');
  return slash == std::string::npos ? path : path.substr(slash + 1);
}

std::string recording_cell(const AiringRecord& a) {
  const std::string name = file_name(a.recording);
  return "<span class=\"rec-path\"" + (name == a.recording ? std::string() : " title=\"" + esc(a.recording) + "\"") + ">" +
         esc(name) + "</span> @ " +
         fmt("%.3f s", detail::round_decimals(a.offset_s, 3));
}

// The picture of an airing against its master, in the excerpt's time (0 to
// its length, as the player counts): the master's level envelope above the
// line, where it should have aired; the recording's below; missing and
// not-recorded parts of the master marked over the recording's.
std::string listen_picture(const AiringRecord& a, const ExcerptRef& aired, const ExcerptRef* master) {
  const double W = 320, H = 52, mid = 26, half = 23;
  const double D = std::max(aired.duration_s, 0.1);
  const double speed = a.time_scale() > 0 ? a.time_scale() : 1.0;
  const double lead_s = -aired.from_s;  // the airing's start in the excerpt
  auto X = [&](double t) { return std::clamp(W * t / D, 0.0, W); };
  auto area = [&](const LevelEnvelope& e, double t0, double t_scale, bool up) {
    if (e.dbfs.empty()) return std::string();
    const float peak = *std::max_element(e.dbfs.begin(), e.dbfs.end());
    const double base = up ? mid - 1 : mid + 1;
    std::string d = "M" + fmt("%.1f", X(t0)) + " " + fmt("%.1f", base);
    for (size_t k = 0; k < e.dbfs.size(); ++k) {
      const double level = std::clamp((e.dbfs[k] - peak + 36.0) / 36.0, 0.0, 1.0);  // the top 36 dB
      const double y = up ? base - half * level : base + half * level;
      const double t = t0 + (static_cast<double>(k) + 0.5) * e.step_s * t_scale;
      d += 'L';
      d += fmt("%.1f", X(t));
      d += ' ';
      d += fmt("%.1f", y);
    }
    d += "L" + fmt("%.1f", X(t0 + static_cast<double>(e.dbfs.size()) * e.step_s * t_scale)) + " " + fmt("%.1f", base) + "Z";
    return d;
  };
  std::string s = "<svg class=\"listen\" width=\"320\" height=\"52\" viewBox=\"0 0 320 52\" role=\"img\" aria-label=\"level "
                  "of the master (above) and of the recording (below) over the excerpt\">"
                  "<rect width=\"320\" height=\"52\" fill=\"#f7f7f7\"/>";
  const double air_from = X(lead_s), air_to = X(lead_s + a.length_s / speed);
  s += "<rect class=\"airing-span\" x=\"" + fmt("%.1f", air_from) + "\" y=\"0\" width=\"" + fmt("%.1f", air_to - air_from) +
       "\" height=\"52\" fill=\"#e6eefa\"><title>where the master would air: " + fmt("%.2f", a.length_s / speed) +
       " s from " + fmt("%.2f", lead_s) + " s into the excerpt</title></rect>";
  if (master) s += "<path class=\"master-level\" d=\"" + area(master->envelope, lead_s, 1 / speed, true) + "\" fill=\"#7d8ca3\"/>";
  s += "<path class=\"aired-level\" d=\"" + area(aired.envelope, 0, 1, false) + "\" fill=\"#4a4a4a\"/>";
  auto marks = [&](const std::vector<std::pair<double, double>>& list, const char* cls, const char* pattern,
                   const char* what) {
    for (const auto& [f, t] : list) {
      if (t - f < 0.005) continue;
      const double x0 = X(lead_s + f / speed), x1 = X(lead_s + t / speed);
      s += std::string("<rect class=\"") + cls + "\" x=\"" + fmt("%.1f", x0) + "\" y=\"" + fmt("%.0f", mid) + "\" width=\"" +
           fmt("%.1f", std::max(1.0, x1 - x0)) + "\" height=\"" + fmt("%.0f", H - mid) + "\" fill=\"url(#" + pattern +
           ")\"><title>" + what + fmt("%.2f", f) + "-" + fmt("%.2f", t) + " s of the master</title></rect>";
    }
  };
  // A part outside the recorded time is in missing_s too: marked as not
  // recorded only.
  std::vector<std::pair<double, double>> missing;
  for (const auto& [f, t] : a.missing_s) {
    double at = f;
    for (const auto& [uf, ut] : a.unrecorded_s) {  // sorted, disjoint
      if (ut <= at || uf >= t) continue;
      if (uf > at) missing.emplace_back(at, uf);
      at = std::max(at, ut);
    }
    if (at < t) missing.emplace_back(at, t);
  }
  marks(missing, "missing-range", "hatch-missing", "missing on air: ");
  marks(a.unrecorded_s, "unrecorded-range", "hatch-unrecorded", "not recorded: ");
  s += "<line x1=\"0\" y1=\"26\" x2=\"320\" y2=\"26\" stroke=\"#bbb\" stroke-width=\"0.5\"/>";
  s += "<g font-size=\"8\" fill=\"#222\" stroke=\"#fff\" stroke-width=\"2\" paint-order=\"stroke\"><text x=\"2\" y=\"9\">"
       "master</text><text x=\"2\" y=\"49\">recording</text></g></svg>";
  return s;
}

// The players and the picture of one airing; empty without excerpts.
std::string listen_cell(const ReconcileResult& r, const HtmlReportOptions& o, size_t airing, const std::string& heard_spot,
                        const std::string& planned_spot) {
  if (!o.listening) return "";
  const Listening& l = *o.listening;
  auto it = l.airings.find(airing);
  if (it == l.airings.end()) return "<span class=\"small\">no excerpt</span>";
  const AiringRecord& a = r.airings[airing];
  const ExcerptRef& ex = it->second;
  auto master = l.masters.find(heard_spot);
  const ExcerptRef* m = master == l.masters.end() ? nullptr : &master->second;
  auto player = [](const char* cls, const ExcerptRef& ref, const std::string& label) {
    return std::string("<div class=\"player\"><span class=\"small\">") + label + "</span><audio class=\"" + cls +
           "\" controls preload=\"none\" src=\"" + esc(ref.file) + "\" data-duration-s=\"" + fmt("%.3f", ref.duration_s) +
           "\"></audio><a class=\"print-only small\" href=\"" + esc(ref.file) + "\">" + esc(ref.file) + "</a></div>";
  };
  std::string s = listen_picture(a, ex, m);
  s += player("aired", ex, "recording, " + fmt("%.0f", -ex.from_s) + " s before the airing to " +
                               fmt("%.0f", ex.from_s + ex.duration_s - a.length_s / (a.time_scale() > 0 ? a.time_scale() : 1)) +
                               " s after");
  if (m) s += player("master", *m, "master: " + esc(heard_spot));
  if (planned_spot != heard_spot)
    if (auto pm = l.masters.find(planned_spot); pm != l.masters.end())
      s += player("master planned", pm->second, "planned: " + esc(planned_spot));
  return s;
}

struct Span {
  double t0, t1;
};

// Ticks at a round step, at most about a dozen over the span.
double tick_step(double span_s) {
  for (double s : {10.0, 30.0, 60.0, 120.0, 300.0, 600.0, 900.0, 1800.0, 3600.0, 7200.0, 10800.0, 21600.0})
    if (span_s / s <= 12) return s;
  return 43200;
}

}  // namespace

const char* verdict_colour(const std::string& status) {
  // Found for this report by a search over hue, lightness and saturation
  // (L* 30 to 72, readable on white) that maximised the smallest CIELAB
  // difference between any two, for normal vision and under the three
  // simulated dichromacies; not_recorded kept neutral grey.
  static const std::map<std::string, const char*> c = {
      {"aired", "#0b8f3c"},   {"early", "#eca018"},        {"late", "#543d8c"},
      {"partial", "#22b9e1"}, {"wrong_version", "#8e3d6d"}, {"missing", "#cc0011"},
      {"not_recorded", "#9a9a9a"}, {"unknown_spot", "#5d4232"}, {"unscheduled", "#4751cb"}};
  auto it = c.find(status);
  return it == c.end() ? "#555555" : it->second;
}

ReportHeading report_heading(const std::string& log_name, const ReconcileResult& r) {
  ReportHeading h;
  std::string station = log_name;
  auto digits = [&](size_t at, size_t n) {
    if (at + n > log_name.size()) return false;
    for (size_t i = at; i < at + n; ++i)
      if (log_name[i] < '0' || log_name[i] > '9') return false;
    return true;
  };
  for (size_t i = 0; i < log_name.size() && h.day.empty(); ++i) {
    std::string day;
    size_t len = 0;
    if (digits(i, 4) && i + 10 <= log_name.size() && log_name[i + 4] == '-' && digits(i + 5, 2) && log_name[i + 7] == '-' &&
        digits(i + 8, 2))
      day = log_name.substr(i, 10), len = 10;
    else if (digits(i, 8) && !digits(i + 8, 1) && (i == 0 || !digits(i - 1, 1)))
      day = log_name.substr(i, 4) + "-" + log_name.substr(i + 4, 2) + "-" + log_name.substr(i + 6, 2), len = 8;
    if (!day.empty() && parse_iso8601_local(day + "T00:00:00")) {
      h.day = day;
      // "kfm_20260314_log" -> "kfm_log": one separator where the date was.
      std::string before = log_name.substr(0, i), after = log_name.substr(i + len);
      const std::string sep = "-_. ";
      if (!before.empty() && !after.empty() && sep.find(before.back()) != std::string::npos &&
          sep.find(after.front()) != std::string::npos)
        after.erase(after.begin());
      station = before + after;
    }
  }
  if (!h.day.empty()) {
    auto trim = [](std::string s) {
      const std::string sep = "-_. ";
      while (!s.empty() && sep.find(s.back()) != std::string::npos) s.pop_back();
      while (!s.empty() && sep.find(s.front()) != std::string::npos) s.erase(s.begin());
      return s;
    };
    h.station = trim(station);
  } else {
    h.station = log_name;
    if (!r.placements.empty()) h.day = r.placements.front().planned.substr(0, 10);
    else
      for (const auto& rec : r.recordings)
        if (rec.start_s) {
          h.day = format_iso8601_local(*rec.start_s, 0).substr(0, 10);
          break;
        }
  }
  if (auto t = parse_iso8601_local(h.day + "T00:00:00")) {
    static const char* const names[] = {"Thursday", "Friday", "Saturday", "Sunday", "Monday", "Tuesday", "Wednesday"};
    const auto days = static_cast<long long>(std::floor(*t / 86400));  // 1970-01-01 was a Thursday
    h.weekday = names[((days % 7) + 7) % 7];
  }
  return h;
}

std::string reconcile_to_html(const ReconcileResult& r, const HtmlReportOptions& o) {
  const ReportHeading heading = report_heading(o.title, r);
  std::map<std::string, int> counts;
  for (const auto& v : r.verdicts) counts[verdict_name(v.status)]++;
  counts["unscheduled"] = static_cast<int>(r.unscheduled.size());
  std::vector<std::string> shown;
  for (VerdictStatus st : all_verdicts()) shown.push_back(verdict_name(st));
  shown.push_back("unscheduled");
  std::vector<std::string> airing_status(r.airings.size(), "unscheduled");
  for (const auto& v : r.verdicts)
    if (v.airing) airing_status[*v.airing] = verdict_name(v.status);

  std::string h;
  h.reserve(64 * 1024 + r.placements.size() * 3072);
  const std::string name_and_day =
      (heading.station.empty() ? "" : heading.station + ", ") + (heading.weekday.empty() ? "" : heading.weekday + " ") + heading.day;
  h += "<!doctype html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>" + esc(name_and_day) +
       ": placements and airings (godwit)</title>\n<style>\n"
       "body{font:14px/1.4 system-ui,sans-serif;margin:24px;color:#222}h1{font-size:20px;margin-bottom:2px}"
       "h2{font-size:16px;margin-top:28px}#made{margin-top:0}"
       "#cautions{border:1px solid #e0a800;background:#fff8e1;padding:8px 12px}"
       ".count{display:inline-block;margin:0 10px 6px 0;padding:3px 9px;border-radius:4px}"
       "table{border-collapse:collapse;width:100%}th,td{border-top:1px solid #ddd;padding:3px 6px;text-align:left;"
       "vertical-align:middle}th{background:#fafafa;position:sticky;top:0;z-index:1}.status{font-weight:600}"
       "td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}.small{color:#555;font-size:12px}"
       "svg#timeline{border:1px solid #ddd;background:#fff;width:100%;height:auto;box-sizing:border-box}"
       "#legend .legend-item{display:inline-block;margin:0 12px 4px 0;font-size:12px}"
       ".swatch{display:inline-block;width:14px;height:10px;margin-right:4px;vertical-align:baseline;border-radius:2px}"
       "#filters{border:1px solid #ddd;padding:6px 10px;background:#fafafa}#filters label{margin-right:10px;white-space:nowrap}"
       ".listen-box{display:flex;flex-wrap:wrap;align-items:center;gap:6px 18px}tr.listen td{border-top:none;"
       "padding-bottom:6px}"
       ".player{display:flex;flex-direction:column}.player audio{height:30px;width:260px}"
       "svg.listen{display:block}.rec-path{overflow-wrap:anywhere}"
       "svg.profile{background:#f4f4f4}svg.profile path{stroke:#ccc;stroke-dasharray:2,2}"
       "svg.profile polyline{fill:none;stroke:#333;stroke-width:1}"
       ".print-only{display:none}[hidden]{display:none!important}\n" +
       palette_css(shown) +
       "@media print{@page{size:A4;margin:12mm}*{-webkit-print-color-adjust:exact;print-color-adjust:exact}"
       "body{margin:0;font-size:9pt}h2{font-size:11pt;margin-top:12pt}"
       "#filters,audio,.profile,.no-print{display:none!important}.print-only{display:inline}"
       "th{position:static}th,td{padding:1px 3px;overflow-wrap:anywhere}table{font-size:8pt}.small{font-size:7pt}"
       "tr,svg{break-inside:avoid}"
       "a{color:inherit;text-decoration:none}.player{display:block}}\n"
       "</style></head><body>\n";
  // Patterns the listening pictures mark ranges with.
  h += "<svg width=\"0\" height=\"0\" style=\"position:absolute\" aria-hidden=\"true\"><defs>"
       "<pattern id=\"hatch-missing\" width=\"4\" height=\"4\" patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(45)\">"
       "<rect width=\"4\" height=\"4\" fill=\"" + std::string(verdict_colour("missing")) + "\" fill-opacity=\"0.25\"/>"
       "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"4\" stroke=\"" + verdict_colour("missing") + "\" stroke-width=\"1.2\" "
       "stroke-opacity=\"0.8\"/></pattern>"
       "<pattern id=\"hatch-unrecorded\" width=\"4\" height=\"4\" patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(-45)\">"
       "<rect width=\"4\" height=\"4\" fill=\"#9a9a9a\" fill-opacity=\"0.3\"/>"
       "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"4\" stroke=\"#777\" stroke-width=\"1.5\"/></pattern></defs></svg>\n";
  h += "<h1>" + esc(name_and_day.empty() ? o.title : name_and_day) + "</h1>\n<p id=\"made\" class=\"small\">Placements of the planned log <b>" +
       esc(o.title) + "</b> against the recordings. Made " + (o.made.empty() ? "" : "on " + esc(o.made) + " ") + "by godwit " +
       godwit_version() + ".</p>\n";
  h += "<div id=\"cautions\"><p>" + esc(kEvidenceCaution) + "</p><p>" + esc(kLoudnessCaution) + "</p>";
  if (o.listening)
    h += "<p>The excerpts below are compressed copies for listening (Opus, mono, speech quality): the recordings "
         "themselves are the evidence.</p>";
  h += "</div>\n";

  // Filters: by verdict and by advertiser, here in the page.
  std::set<std::string> advertisers;
  for (const auto& p : r.placements) advertisers.insert(advertiser_of(r, p.spot));
  for (size_t i : r.unscheduled) advertisers.insert(advertiser_of(r, r.airings[i].spot));
  h += "<form id=\"filters\" class=\"no-print\" onsubmit=\"return false\"><b>Show</b> ";
  for (const std::string& s : shown)
    h += "<label data-status=\"" + s + "\"><input type=\"checkbox\" name=\"status\" value=\"" + s +
         "\" checked><span class=\"chip\"></span>" + s + "</label>";
  h += "<label>advertiser <select name=\"advertiser\"><option value=\"\">all</option>";
  for (const auto& a : advertisers) h += "<option value=\"" + esc(a) + "\">" + esc(a) + "</option>";
  h += "</select></label> <span id=\"shown\" class=\"small\"></span></form>\n";

  h += "<h2>Summary</h2><div id=\"summary\">";
  for (const std::string& s : shown)
    h += "<span class=\"count\" data-status=\"" + s + "\">" + s + ": <b>" + std::to_string(counts[s]) + "</b></span>";
  h += "</div>\n";

  // Timeline, over the recorded time only.
  Span span{0, 0};
  if (!r.recorded.empty()) {
    span = {r.recorded.front().first, r.recorded.back().second};
  } else {
    span = {1e300, -1e300};
    for (const auto& a : r.airings) span.t0 = std::min(span.t0, a.aired_s), span.t1 = std::max(span.t1, a.aired_s + a.length_s);
    if (span.t0 > span.t1)
      for (const auto& p : r.placements)
        span.t0 = std::min(span.t0, p.planned_s - p.window_s), span.t1 = std::max(span.t1, p.planned_s + p.window_s);
    if (span.t0 > span.t1) span = {0, 3600};
  }
  if (span.t1 - span.t0 < 60) span.t1 = span.t0 + 60;
  const double W = 1200, left = 40, right = 40;
  auto X = [&](double t) { return left + (W - left - right) * (std::clamp(t, span.t0, span.t1) - span.t0) / (span.t1 - span.t0); };
  auto inside = [&](double from, double to) { return to >= span.t0 && from <= span.t1; };
  // Planned windows in lanes, so that none hides another.
  std::vector<size_t> drawn, apart;
  for (size_t k = 0; k < r.verdicts.size(); ++k) {
    const auto& p = r.placements[r.verdicts[k].placement];
    (inside(p.planned_s - p.window_s, p.planned_s + p.window_s) ? drawn : apart).push_back(k);
  }
  std::sort(drawn.begin(), drawn.end(), [&](size_t a, size_t b) {
    const auto &pa = r.placements[r.verdicts[a].placement], &pb = r.placements[r.verdicts[b].placement];
    return pa.planned_s - pa.window_s < pb.planned_s - pb.window_s;
  });
  const size_t kMaxLanes = 8;
  std::vector<double> lane_end;
  std::map<size_t, size_t> lane_of;
  for (size_t k : drawn) {
    const auto& p = r.placements[r.verdicts[k].placement];
    const double x0 = X(p.planned_s - p.window_s), x1 = X(p.planned_s + p.window_s);
    size_t lane = lane_end.size();
    for (size_t i = 0; i < lane_end.size(); ++i)
      if (lane_end[i] + 2 <= x0) {
        lane = i;
        break;
      }
    if (lane == lane_end.size() && lane_end.size() == kMaxLanes)  // full: the lane that frees first
      lane = static_cast<size_t>(std::min_element(lane_end.begin(), lane_end.end()) - lane_end.begin());
    if (lane == lane_end.size()) lane_end.push_back(0);
    lane_end[lane] = std::max(x1, x0 + 1);
    lane_of[k] = lane;
  }
  const double lane_h = 16, top = 26, plan_top = top + 14;
  const double plan_bottom = plan_top + std::max<double>(1, static_cast<double>(lane_end.size())) * lane_h;
  const double air_y = plan_bottom + 18, H = air_y + 34;
  h += "<h2>Timeline</h2><p class=\"small\">" + clock(span.t0) + " to " + clock(span.t1) +
       ", the recorded time (shaded; unshaded: a gap). Planned windows above, detections below; a line joins a placement "
       "to the airing that served it.</p>\n";
  h += "<svg id=\"timeline\" viewBox=\"0 0 " + fmt("%.0f", W) + " " + fmt("%.0f", H) +
       "\" role=\"img\" aria-label=\"planned windows against detections over the recorded time\">\n";
  for (const auto& [from, to] : r.recorded) {
    if (!inside(from, to)) continue;
    h += "<rect class=\"recorded\" x=\"" + fmt("%.1f", X(from)) + "\" y=\"" + fmt("%.0f", top) + "\" width=\"" +
         fmt("%.2f", std::max(0.5, X(to) - X(from))) + "\" height=\"" + fmt("%.0f", H - top - 4) +
         "\" fill=\"#eef2f7\"><title>recorded " + clock(from) + "-" + clock(to) + "</title></rect>\n";
  }
  const double step = tick_step(span.t1 - span.t0);
  for (double t = std::ceil(span.t0 / step) * step; t <= span.t1 + 1e-6; t += step) {
    const std::string label = step < 60 ? clock(t) : clock(t).substr(0, 5);
    h += "<line class=\"tick\" x1=\"" + fmt("%.1f", X(t)) + "\" y1=\"" + fmt("%.0f", top - 4) + "\" x2=\"" + fmt("%.1f", X(t)) +
         "\" y2=\"" + fmt("%.0f", H - 4) + "\" stroke=\"#d5d9de\"/><text class=\"tick-label\" x=\"" + fmt("%.1f", X(t)) +
         "\" y=\"" + fmt("%.0f", top - 8) + "\" text-anchor=\"middle\" font-size=\"11\" fill=\"#555\">" + label + "</text>\n";
  }
  h += "<text x=\"4\" y=\"" + fmt("%.0f", plan_top - 3) + "\" font-size=\"10\" fill=\"#444\">planned</text><text x=\"4\" y=\"" +
       fmt("%.0f", air_y - 4) + "\" font-size=\"10\" fill=\"#444\">detected</text>\n";
  for (size_t k : drawn) {
    const auto& v = r.verdicts[k];
    const auto& p = r.placements[v.placement];
    const std::string st = verdict_name(v.status);
    const double y = plan_top + static_cast<double>(lane_of[k]) * lane_h;
    const std::string detected = v.airing ? reported_spot(r.airings[*v.airing], p) : "";
    const std::string tip = p.slot + " " + p.spot + ", planned " + clock(p.planned_s) + " \xC2\xB1" + fmt("%.0f", p.window_s) +
                            " s: " + st + (v.airing ? "; aired " + detected + " at " + clock_ms(r.airings[*v.airing].aired_s) : "");
    h += "<g class=\"slot\" data-slot=\"" + esc(p.slot) + "\" data-status=\"" + st + "\" data-advertiser=\"" +
         esc(advertiser_of(r, p.spot)) + "\" data-detected=\"" + esc(detected) + "\"><title>" + esc(tip) + "</title><rect x=\"" +
         fmt("%.1f", X(p.planned_s - p.window_s)) + "\" y=\"" + fmt("%.1f", y + 2) + "\" width=\"" +
         fmt("%.2f", std::max(1.0, X(p.planned_s + p.window_s) - X(p.planned_s - p.window_s))) + "\" height=\"" +
         fmt("%.0f", lane_h - 4) + "\"/><line x1=\"" + fmt("%.1f", X(p.planned_s)) + "\" y1=\"" + fmt("%.1f", y) + "\" x2=\"" +
         fmt("%.1f", X(p.planned_s)) + "\" y2=\"" + fmt("%.1f", y + lane_h) + "\"/>";
    if (v.airing) {
      const auto& a = r.airings[*v.airing];
      h += "<line class=\"link\" x1=\"" + fmt("%.1f", X(p.planned_s)) + "\" y1=\"" + fmt("%.1f", y + lane_h) + "\" x2=\"" +
           fmt("%.1f", X(a.aired_s)) + "\" y2=\"" + fmt("%.0f", air_y) + "\"/>";
    }
    h += "</g>\n";
  }
  std::map<size_t, const Placement*> served;  // airing -> the placement it served
  for (const auto& v : r.verdicts)
    if (v.airing) served[*v.airing] = &r.placements[v.placement];
  for (size_t i = 0; i < r.airings.size(); ++i) {
    const auto& a = r.airings[i];
    const double len = a.length_s / (a.time_scale() > 0 ? a.time_scale() : 1.0);
    if (!inside(a.aired_s, a.aired_s + len)) continue;
    auto sv = served.find(i);
    const Placement* by = sv == served.end() ? nullptr : sv->second;
    const std::string detected = by ? reported_spot(a, *by) : a.spot;
    const std::string tip = (by ? by->slot : std::string("unscheduled")) + ": " + detected + " aired " +
                            clock_ms(a.aired_s) + " (" + airing_status[i] + "), score " + fmt("%.3f", a.score) +
                            ", coverage " + fmt("%.2f", a.coverage);
    h += "<rect class=\"detection\" data-status=\"" + airing_status[i] + "\" data-advertiser=\"" +
         esc(advertiser_of(r, by ? by->spot : a.spot)) + "\" data-detected=\"" + esc(detected) + "\"" +
         (by ? " data-slot=\"" + esc(by->slot) + "\"" : "") +
         " x=\"" + fmt("%.1f", X(a.aired_s)) + "\" y=\"" + fmt("%.0f", air_y) + "\" width=\"" +
         fmt("%.2f", std::max(2.0, X(a.aired_s + len * std::max(a.coverage, 0.02)) - X(a.aired_s))) + "\" height=\"16\"><title>" +
         esc(tip) + "</title></rect>\n";
  }
  h += "</svg>\n<div id=\"legend\">";
  for (const std::string& s : shown)
    h += "<span class=\"legend-item\" data-status=\"" + s + "\"><span class=\"swatch\"></span>" + s + "</span>";
  h += "<span class=\"legend-item\"><span class=\"swatch recorded\"></span>recorded "
       "time</span><span class=\"legend-item small\">window: pale bar, planned time: its tick; detection: solid bar, as "
       "long as the part that aired</span></div>\n";
  if (!apart.empty()) {
    h += "<p class=\"small\">Outside the recorded time, not drawn:</p><ul id=\"outside\">";
    for (size_t k : apart) {
      const auto& v = r.verdicts[k];
      const auto& p = r.placements[v.placement];
      h += "<li data-slot=\"" + esc(p.slot) + "\" data-status=\"" + verdict_name(v.status) + "\">" + esc(p.slot) + " " +
           esc(p.spot) + ", planned " + esc(p.planned) + ": <span class=\"chip\"></span>" + verdict_name(v.status) + "</li>";
    }
    h += "</ul>\n";
  }

  // Per advertiser. Owed: placements without a satisfactory airing (early,
  // late, partial, wrong version, missing); unverified: not recorded, or a
  // spot the library lacks, so nothing can be said.
  struct Totals {
    int ordered = 0, aired = 0, owed = 0, unverified = 0, unscheduled = 0;
  };
  std::map<std::string, Totals> by_adv;
  for (const auto& v : r.verdicts) {
    Totals& t = by_adv[advertiser_of(r, r.placements[v.placement].spot)];
    ++t.ordered;
    if (v.status == VerdictStatus::aired) ++t.aired;
    else if (v.status == VerdictStatus::not_recorded || v.status == VerdictStatus::unknown_spot) ++t.unverified;
    else ++t.owed;
  }
  for (size_t i : r.unscheduled) ++by_adv[advertiser_of(r, r.airings[i].spot)].unscheduled;
  h += "<h2>By advertiser</h2><table id=\"advertisers\"><thead><tr><th>advertiser</th><th class=\"num\">ordered</th>"
       "<th class=\"num\">aired</th><th class=\"num\">owed</th><th class=\"num\">unverified</th>"
       "<th class=\"num\">unscheduled airings</th></tr></thead><tbody>\n";
  for (const auto& [adv, t] : by_adv)
    h += "<tr class=\"advertiser\" data-advertiser=\"" + esc(adv) + "\"><td>" + esc(adv) + "</td><td class=\"num ordered\">" +
         std::to_string(t.ordered) + "</td><td class=\"num aired\">" + std::to_string(t.aired) + "</td><td class=\"num owed\">" +
         std::to_string(t.owed) + "</td><td class=\"num unverified\">" + std::to_string(t.unverified) +
         "</td><td class=\"num unscheduled\">" + std::to_string(t.unscheduled) + "</td></tr>\n";
  h += "</tbody></table><p class=\"small\"><b>Aired</b>: in its window and complete. <b>Owed</b>: placements without a "
       "satisfactory airing (early, late, partial, wrong version, missing). <b>Unverified</b>: not recorded, or a spot "
       "the library lacks. Unscheduled airings are not counted against any order.</p>\n";

  // Recordings and the gaps and overlaps between them.
  h += "<h2>Recordings</h2><table id=\"recordings\"><thead><tr><th>file</th><th>from</th><th>to</th>"
       "<th class=\"num\">length</th><th class=\"num\">rate</th><th class=\"num\">channels</th><th>format</th>"
       "<th>problem</th></tr></thead><tbody>\n";
  for (const auto& rec : r.recordings) {
    h += "<tr class=\"recording\"><td class=\"rec-path\" title=\"" + esc(rec.path) + "\">" + esc(file_name(rec.path)) + "</td>";
    if (rec.start_s)
      h += "<td>" + format_iso8601_local(*rec.start_s, 0) + "</td><td>" + format_iso8601_local(*rec.start_s + rec.duration_s, 0) +
           "</td>";
    else
      h += "<td colspan=\"2\" class=\"small\">start unknown</td>";
    h += "<td class=\"num\">" + fmt("%.1f s", detail::round_decimals(rec.duration_s, 1)) + "</td><td class=\"num\">" +
         fmt("%.0f Hz", rec.native_rate_hz) + "</td><td class=\"num\">" + std::to_string(rec.channels) + "</td><td>" +
         esc(rec.format) + "</td><td class=\"small\">" + (rec.error ? esc(rec.error->describe()) : "") + "</td></tr>\n";
  }
  h += "</tbody></table>\n";
  if (!r.timeline_issues.empty()) {
    h += "<ul id=\"timeline-issues\">";
    for (const auto& t : r.timeline_issues)
      h += "<li class=\"" + std::string(timeline_issue_name(t.kind)) + "\">" + timeline_issue_name(t.kind) + " of " +
           fmt("%.3f", detail::round_decimals(t.seconds, 3)) + " s at " + clock_ms(t.at_s) + " between " +
           esc(file_name(t.before)) + " and " + esc(file_name(t.after)) + "</li>";
    h += "</ul>\n";
  } else if (!r.recordings.empty()) {
    h += "<p class=\"small\" id=\"timeline-issues\">No gaps or overlaps between the recordings.</p>\n";
  }

  h += "<h2>Placements</h2><table id=\"placements\"><thead><tr><th>slot</th><th>spot</th><th>planned</th><th>status</th>"
       "<th>aired</th><th class=\"num\">deviation</th><th class=\"num\">score</th><th class=\"num\">coverage</th>"
       "<th>detected</th><th>recording @ offset</th><th>loudness</th><th class=\"no-print\">profile</th>"
       "</tr></thead><tbody>\n";
  const int columns = 12;
  // With excerpts, each airing's row is followed by one to listen: the
  // picture and the players, across the table.
  auto listen_row = [&](const std::string& key, const std::string& st, const std::string& adv, size_t airing,
                        const std::string& heard, const std::string& planned, int columns_spanned) {
    if (!o.listening) return std::string();
    return "<tr class=\"listen\" " + key + " data-status=\"" + st + "\" data-advertiser=\"" + esc(adv) +
           "\"><td></td><td colspan=\"" + std::to_string(columns_spanned - 1) + "\"><div class=\"listen-box\">" +
           listen_cell(r, o, airing, heard, planned) + "</div></td></tr>\n";
  };
  for (const auto& v : r.verdicts) {
    const auto& p = r.placements[v.placement];
    const std::string st = verdict_name(v.status);
    h += "<tr class=\"placement\" data-slot=\"" + esc(p.slot) + "\" data-status=\"" + st + "\" data-advertiser=\"" +
         esc(advertiser_of(r, p.spot)) + "\"><td>" + esc(p.slot) + "</td><td>" + spot_cell(r, p.spot) + "</td><td>" +
         wrappable(p.planned) + "<br><span class=\"small\">&plusmn;" + fmt("%.0f", p.window_s) +
         " s</span></td><td class=\"status\"><span class=\"chip\"></span>" + wrappable(st) +
         "</td>";
    if (v.airing) {
      const auto& a = r.airings[*v.airing];
      const std::string missing = ranges(a.missing_s), unrecorded = ranges(a.unrecorded_s);
      const std::string detected = reported_spot(a, p);
      h += "<td>" + wrappable(format_iso8601_local(a.aired_s, 3)) + "</td><td class=\"num\">" +
           fmt("%+.3f s", detail::round_decimals(v.deviation_s, 3)) + "</td><td class=\"num\">" + fmt("%.3f", a.score) +
           (a.polarity < 0 ? " (inverted)" : "") + speed_note(a) + "</td><td class=\"num\">" + fmt("%.2f", a.coverage) +
           (missing.empty() ? "" : "<br><span class=\"small\">missing " + missing + "</span>") +
           (unrecorded.empty() ? "" : "<br><span class=\"small\">not recorded " + unrecorded + "</span>") +
           "</td><td class=\"detected\"><span class=\"spot-id\">" + wrappable(detected) + "</span>" +
           (a.undetermined_among.empty() ? "" : "<br><span class=\"small\">version undetermined</span>") + "</td><td class=\"small\">" +
           recording_cell(a) + "</td><td class=\"small\">" + loudness_cell(a, o.loudness) + "</td><td class=\"no-print\">" +
           sparkline(a.profile) + "</td></tr>\n" +
           listen_row("data-slot=\"" + esc(p.slot) + "\"", st, advertiser_of(r, p.spot), *v.airing, detected, p.spot, columns);
    } else {
      h += "<td colspan=\"" + std::to_string(columns - 4) + "\" class=\"small\">" + esc(no_airing_note(v)) + "</td></tr>\n";
    }
  }
  h += "</tbody></table>\n";
  h += "<h2>Unscheduled airings</h2><table id=\"unscheduled\"><thead><tr><th>spot</th><th>aired</th><th class=\"num\">score</th>"
       "<th class=\"num\">coverage</th><th>recording @ offset</th><th>loudness</th><th class=\"no-print\">profile</th>"
       "</tr></thead><tbody>\n";
  for (size_t k = 0; k < r.unscheduled.size(); ++k) {
    const size_t i = r.unscheduled[k];
    const auto& a = r.airings[i];
    h += "<tr class=\"airing\" data-status=\"unscheduled\" data-advertiser=\"" + esc(advertiser_of(r, a.spot)) + "\"><td>" +
         spot_cell(r, a.spot) + "</td><td>" + wrappable(format_iso8601_local(a.aired_s, 3)) + "</td><td class=\"num\">" + fmt("%.3f", a.score) +
         (a.polarity < 0 ? " (inverted)" : "") + speed_note(a) + "</td><td class=\"num\">" + fmt("%.2f", a.coverage) +
         "</td><td class=\"small\">" + recording_cell(a) + "</td><td class=\"small\">" + loudness_cell(a, o.loudness) +
         "</td><td class=\"no-print\">" + sparkline(a.profile) + "</td></tr>\n" +
         listen_row("data-unscheduled=\"" + std::to_string(k) + "\"", "unscheduled", advertiser_of(r, a.spot), i, a.spot, a.spot, 7);
  }
  h += "</tbody></table>\n";
  const bool excerpt_problems = o.listening && !o.listening->problems.empty();
  if (!r.timeline_issues.empty() || !r.log_problems.empty() || excerpt_problems) {
    h += "<h2>Problems</h2><ul id=\"problems\">";
    for (const auto& t : r.timeline_issues)
      h += "<li>" + std::string(timeline_issue_name(t.kind)) + " of " + fmt("%.3f", detail::round_decimals(t.seconds, 3)) +
           " s between " + esc(t.before) + " and " + esc(t.after) + "</li>";
    for (const auto& p : r.log_problems) h += "<li>planned log line " + std::to_string(p.line) + ": " + esc(p.reason) + "</li>";
    if (excerpt_problems)
      for (const auto& p : o.listening->problems) h += "<li>no excerpt for " + esc(p) + "</li>";
    h += "</ul>\n";
  }
  h += "<p class=\"small\">Times are local to the station's clock; offsets are seconds from the start of each recording. "
       "Made by godwit " + std::string(godwit_version()) + ".</p>\n";
  // The filters: rows, timeline marks and legend follow the form.
  h += "<script>\n(function(){var f=document.getElementById('filters');if(!f)return;"
       "function apply(){var on={};f.querySelectorAll('input[name=status]').forEach(function(c){on[c.value]=c.checked;});"
       "var adv=f.querySelector('select[name=advertiser]').value,n=0,m=0;"
       "document.querySelectorAll('tr.placement,tr.airing,tr.listen,g.slot,rect.detection').forEach(function(e){"
       "var show=on[e.getAttribute('data-status')]!==false&&(adv===''||e.getAttribute('data-advertiser')===adv);"
       "if(show)e.removeAttribute('hidden');else e.setAttribute('hidden','');"
       "if(e.tagName==='TR'&&!e.classList.contains('listen')){m++;if(show)n++;}});"
       "document.getElementById('shown').textContent=n+' of '+m+' rows shown';}"
       "f.addEventListener('change',apply);apply();})();\n</script>\n</body></html>\n";
  return h;
}

}  // namespace godwit
