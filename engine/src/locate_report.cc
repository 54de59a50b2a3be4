#include "godwit/locate_report.h"

#include <cmath>
#include <cstdio>

#include "csv_field.h"
#include "json_number.h"

namespace godwit {

nlohmann::json error_to_json(const Error& e) {
  nlohmann::json j{{"code", std::string(wire_name(e.code))}, {"message", e.message}};
  if (!e.path.empty()) j["path"] = e.path;
  if (e.offset_s) j["offset_s"] = detail::round_decimals(*e.offset_s, 3);
  return j;
}

nlohmann::json locate_to_json(const LocateResult& r) {
  nlohmann::json j;
  j["analysis_rate_hz"] = r.analysis_rate_hz;
  j["complete"] = r.complete();
  j["templates"] = nlohmann::json::array();
  for (const auto& t : r.templates)
    j["templates"].push_back({{"id", t.id}, {"path", t.path}, {"duration_s", detail::round_decimals(t.duration_s, 6)},
                              {"fft_size", t.fft_size}});
  j["recordings"] = nlohmann::json::array();
  for (const auto& rec : r.recordings) {
    nlohmann::json x{{"path", rec.path},
                     {"format", rec.format},
                     {"duration_s", detail::round_decimals(rec.duration_s, 6)},
                     {"native_rate_hz", rec.native_rate_hz},
                     {"channels", rec.channels}};
    if (rec.error) x["error"] = error_to_json(*rec.error);
    j["recordings"].push_back(std::move(x));
  }
  j["matches"] = nlohmann::json::array();
  for (const auto& m : r.matches)
    j["matches"].push_back({{"template", m.template_id},
                            {"recording", m.recording},
                            {"offset_s", detail::round_decimals(m.offset_s, 6)},
                            {"score", detail::round_decimals(m.score, 4)},
                            {"polarity", m.polarity},
                            {"speed", detail::round_decimals(m.speed, 6)},
                            {"refined", m.refined}});
  return j;
}

std::string locate_to_csv(const LocateResult& r) {
  std::string out = "template,recording,offset_s,score,polarity,speed\r\n";
  char num[128];
  for (const auto& m : r.matches) {
    std::snprintf(num, sizeof num, ",%.6f,%.4f,%d,%.6f\r\n", m.offset_s, m.score, m.polarity, m.speed);
    out += detail::csv_field(m.template_id) + "," + detail::csv_field(m.recording) + num;
  }
  return out;
}

}  // namespace godwit
