#include "proof_page.h"

#include <cstdio>
#include <filesystem>

#include "godwit/report/html_report.h"
#include "godwit/compliance/reconciler.h"

namespace godwit {
namespace {

// Field access that tolerates any shape.
std::string str(const nlohmann::json& j, const char* key) {
  if (!j.is_object()) return "";
  auto it = j.find(key);
  if (it == j.end() || it->is_null()) return "";
  if (it->is_string()) return it->get<std::string>();
  return it->dump();
}
const nlohmann::json& sub(const nlohmann::json& j, const char* key) {
  static const nlohmann::json empty;
  if (!j.is_object()) return empty;
  auto it = j.find(key);
  return it == j.end() ? empty : *it;
}
std::string num(const nlohmann::json& j, const char* key, const char* f) {
  const auto& v = sub(j, key);
  if (!v.is_number()) return "";
  char b[64];
  std::snprintf(b, sizeof b, f, v.get<double>() + 0.0);
  return b;
}
std::string e(const std::string& s) { return html_escape(s); }
std::string clock(const std::string& iso) { return iso.size() > 11 ? iso.substr(11) : iso; }
std::string file_name(const std::string& p) { return std::filesystem::path(p).filename().string(); }

std::vector<std::string> statuses() {
  std::vector<std::string> s;
  for (VerdictStatus st : all_verdicts()) s.push_back(verdict_name(st));
  s.push_back("unscheduled");
  return s;
}

std::string chip(const std::string& status) {
  return "<span class=\"tag\" data-status=\"" + e(status) + "\"><span class=\"chip\"></span>" + e(status) + "</span>";
}

std::string airing_cells(const nlohmann::json& a, const std::string& deviation) {
  if (!a.is_object()) return "<td colspan=\"8\"></td>";
  const auto& l = sub(a, "loudness");
  std::string version = str(a, "spot");
  const auto& among = sub(a, "version_undetermined_among");
  if (among.is_array() && !among.empty()) {
    std::string list;
    for (const auto& s : among)
      if (s.is_string()) list += (list.empty() ? "" : ", ") + s.get<std::string>();
    version = "<span class=\"small\">undetermined among</span> " + e(list);
  } else {
    version = e(version);
  }
  std::string rec = e(file_name(str(a, "recording")));
  return "<td class=\"time\">" + e(clock(str(a, "aired"))) + "</td><td>" + version + "</td><td class=\"num\">" +
         deviation + "</td><td class=\"num\">" + num(a, "coverage", "%.2f") + "</td><td class=\"num\">" +
         num(l, "spot_lufs", "%.1f") + "</td><td class=\"num\">" + num(l, "spot_vs_programme_lu", "%+.1f") +
         "</td><td class=\"num\">" + num(a, "score", "%.3f") + "</td><td class=\"rec\" title=\"" +
         e(str(a, "recording_sha256")) + "\">" + rec + " @ " + num(a, "offset_s", "%.3f") + " s</td>";
}

const char* kAiringHeads =
    "<th>aired</th><th>version</th><th class=\"num\">dev s</th><th class=\"num\">cover</th>"
    "<th class=\"num\">LUFS</th><th class=\"num\">vs prog</th><th class=\"num\">score</th><th>recording @ offset</th>";

std::string counts_row(const nlohmann::json& c) {
  auto n = [&](const char* k) { return num(c, k, "%.0f"); };
  return "<td class=\"num\">" + n("ordered") + "</td><td class=\"num\">" + n("aired") + "</td><td class=\"num\">" +
         n("early") + "</td><td class=\"num\">" + n("late") + "</td><td class=\"num\">" + n("partial") +
         "</td><td class=\"num\">" + n("wrong_version") + "</td><td class=\"num\">" + n("missing") +
         "</td><td class=\"num\">" + n("not_recorded") + "</td><td class=\"num owed\">" + n("owed") +
         "</td><td class=\"num\">" + n("unscheduled") + "</td>";
}
const char* kCountHeads =
    "<th class=\"num\">ordered</th><th class=\"num\">aired</th><th class=\"num\">early</th><th class=\"num\">late</th>"
    "<th class=\"num\">partial</th><th class=\"num\">wrong version</th><th class=\"num\">missing</th>"
    "<th class=\"num\">not recorded</th><th class=\"num\">owed</th><th class=\"num\">unscheduled</th>";

}  // namespace

std::string proof_to_html(const nlohmann::json& doc) {
  const auto& q = sub(doc, "proof");
  const std::string who = !str(q, "advertiser").empty() ? str(q, "advertiser") : "spot " + str(q, "spot");
  const std::string range = str(q, "from") + " to " + str(q, "to");
  std::string h;
  h += "<!doctype html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>" + e(who) + ", " + e(range) +
       ": proof of performance (godwit)</title>\n<style>\n"
       "body{font:14px/1.45 system-ui,sans-serif;margin:24px auto;max-width:1180px;color:#1d2430;padding:0 16px}"
       "header{border-bottom:3px solid #1d2430;padding-bottom:8px;margin-bottom:14px}"
       "header .kind{text-transform:uppercase;letter-spacing:.12em;font-size:11px;color:#5a6473}"
       "h1{font-size:24px;margin:2px 0}h2{font-size:17px;margin:26px 0 6px}h3{font-size:14px;margin:16px 0 4px}"
       ".small{color:#5a6473;font-size:12px}"
       "#cautions{border-left:4px solid #b7791f;background:#fdf6e7;padding:6px 12px;margin:12px 0}"
       "#cautions p{margin:4px 0}"
       ".count{display:inline-block;margin:0 8px 6px 0;padding:4px 10px;border-radius:12px}"
       ".tag{white-space:nowrap}"
       "table{border-collapse:collapse;width:100%;margin-top:4px}th,td{border-bottom:1px solid #e3e6ea;padding:3px 6px;"
       "text-align:left;vertical-align:top}th{font-size:12px;color:#5a6473;font-weight:600;background:#f6f7f9}"
       "td.time{white-space:nowrap}td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}td.owed{font-weight:700}"
       "tr[data-owed=yes] td:first-child{box-shadow:inset 4px 0 0 var(--c)}"
       "td.rec,td.sha{overflow-wrap:anywhere;font-size:12px}td.sha{font-family:ui-monospace,monospace}"
       "section.station{margin-top:30px;border-top:1px solid #c9ced6;padding-top:4px}"
       "ul.owed{columns:3;font-size:13px}\n" +
       verdict_palette_css(statuses()) +
       "@media print{@page{size:A4;margin:12mm}*{-webkit-print-color-adjust:exact;print-color-adjust:exact}"
       "body{margin:0;max-width:none;font-size:9pt}table{font-size:8pt}tr{break-inside:avoid}"
       "section.station{break-before:page}}\n"
       "</style></head><body>\n";
  h += "<header><div class=\"kind\">Proof of performance</div><h1>" + e(who) + "</h1><div>" + e(range) +
       " <span class=\"small\">(" + e(str(q, "from_local")) + " up to " + e(str(q, "to_local")) +
       ", each station's local time)</span></div><div class=\"small\">Made " +
       (str(q, "made").empty() ? "" : "on " + e(str(q, "made")) + " ") + "by " + e(str(q, "software")) +
       " from its store of record.</div></header>\n";
  h += "<div id=\"cautions\">";
  for (const auto& c : sub(doc, "cautions"))
    if (c.is_string()) h += "<p>" + e(c.get<std::string>()) + "</p>";
  h += "</div>\n";

  const auto& totals = sub(doc, "totals");
  h += "<h2>At a glance</h2><div id=\"glance\"><span class=\"count\" style=\"background:#1d2430;color:#fff\">ordered: <b>" +
       num(totals, "ordered", "%.0f") + "</b></span><span class=\"count owed\" "
       "style=\"background:#fff;color:#1d2430;border:2px solid #1d2430\">owed: <b>" + num(totals, "owed", "%.0f") + "</b></span>";
  for (const auto& s : statuses())
    h += "<span class=\"count\" data-status=\"" + s + "\">" + s + ": <b>" + num(totals, s.c_str(), "%.0f") + "</b></span>";
  h += "</div>\n";

  h += "<h2>By spot and day</h2><table id=\"by-spot-day\"><tr><th>station</th><th>day</th><th>spot</th>" +
       std::string(kCountHeads) + "</tr>\n";
  for (const auto& c : sub(doc, "totals_by_spot_day"))
    h += "<tr class=\"spot-day\"><td>" + e(str(c, "station")) + "</td><td>" + e(str(c, "day")) + "</td><td>" +
         e(str(c, "spot")) + "</td>" + counts_row(c) + "</tr>\n";
  h += "</table>\n";

  for (const auto& st : sub(doc, "stations")) {
    const std::string name = str(st, "station");
    h += "<section class=\"station\" data-station=\"" + e(name) + "\"><h2>" + e(name) + "</h2>";
    h += "<table class=\"totals\"><tr>" + std::string(kCountHeads) + "</tr><tr>" + counts_row(sub(st, "totals")) +
         "</tr></table>\n";
    h += "<h3>Ordered and aired</h3><table class=\"placements\"><tr><th>planned</th><th>slot</th><th>spot</th>"
         "<th>verdict</th>" + std::string(kAiringHeads) + "</tr>\n";
    for (const auto& p : sub(st, "placements")) {
      const std::string status = str(p, "status");
      const bool owed = sub(p, "owed").is_boolean() && sub(p, "owed").get<bool>();
      std::string spot = e(str(p, "spot"));
      if (!str(p, "title").empty()) spot += "<div class=\"small\">" + e(str(p, "title")) + "</div>";
      h += "<tr class=\"placement\" data-slot=\"" + e(str(p, "slot")) + "\" data-status=\"" + e(status) +
           "\" data-owed=\"" + (owed ? "yes" : "no") + "\"><td class=\"time\">" + e(str(p, "planned")) + "</td><td>" +
           e(str(p, "slot")) + "</td><td>" + spot + "</td><td>" + chip(status) + "</td>";
      if (sub(p, "airing").is_object()) {
        h += airing_cells(sub(p, "airing"), num(p, "deviation_s", "%+.3f"));
      } else {
        std::string note;
        if (status == "not_recorded") {
          for (const auto& span : sub(p, "not_recorded"))
            if (span.is_array() && span.size() == 2 && span[0].is_string() && span[1].is_string())
              note += (note.empty() ? "not recorded " : ", ") + clock(span[0].get<std::string>()) + "-" +
                      clock(span[1].get<std::string>());
        } else if (status == "unknown_spot") {
          note = "not in the library" + (str(p, "did_you_mean").empty() ? "" : "; did you mean " + str(p, "did_you_mean") + "?");
        } else {
          note = "no airing found";
        }
        h += "<td colspan=\"8\" class=\"small\">" + e(note) + "</td>";
      }
      h += "</tr>\n";
    }
    h += "</table>\n";
    h += "<h3>Owed</h3>";
    if (sub(st, "owed").empty()) {
      h += "<p class=\"small\">Nothing owed: every placement aired (on time, early or late).</p>";
    } else {
      h += "<ul class=\"owed\">";
      for (const auto& p : sub(st, "placements"))
        if (sub(p, "owed").is_boolean() && sub(p, "owed").get<bool>())
          h += "<li data-slot=\"" + e(str(p, "slot")) + "\" data-status=\"" + e(str(p, "status")) + "\">" +
               e(str(p, "slot")) + " " + e(str(p, "planned")) + " " + chip(str(p, "status")) + "</li>";
      h += "</ul>";
    }
    h += "\n<h3>Aired, not ordered</h3>";
    if (sub(st, "unscheduled").empty()) {
      h += "<p class=\"small\">None.</p>\n";
    } else {
      h += "<table class=\"unscheduled\"><tr><th>day</th>" + std::string(kAiringHeads) + "</tr>\n";
      for (const auto& a : sub(st, "unscheduled"))
        h += "<tr class=\"airing\" data-status=\"unscheduled\"><td>" + e(str(a, "aired").substr(0, 10)) + "</td>" +
             airing_cells(a, "") + "</tr>\n";
      h += "</table>\n";
    }
    h += "<h3>Recordings searched</h3><table class=\"recordings\"><tr><th>file</th><th>start</th>"
         "<th class=\"num\">length s</th><th class=\"num\">rate Hz</th><th>codec</th><th>SHA-256</th></tr>\n";
    for (const auto& r : sub(st, "recordings"))
      h += "<tr class=\"recording\" data-sha256=\"" + e(str(r, "sha256")) + "\"><td class=\"rec\">" +
           e(str(r, "path")) + (str(r, "error").empty() ? "" : "<div class=\"small\">" + e(str(r, "error")) + "</div>") +
           "</td><td>" + e(str(r, "start")) + "</td><td class=\"num\">" + num(r, "duration_s", "%.1f") +
           "</td><td class=\"num\">" + num(r, "rate_hz", "%.0f") + "</td><td>" + e(str(r, "codec")) +
           "</td><td class=\"sha\">" + e(str(r, "sha256")) + "</td></tr>\n";
    h += "</table></section>\n";
  }
  if (sub(doc, "stations").empty())
    h += "<p>No placements or airings of " + e(who) + " are stored for this range.</p>\n";
  h += "</body></html>\n";
  return h;
}

}  // namespace godwit
