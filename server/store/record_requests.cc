#include "record_requests.h"

#include <ctime>

#include "airings_query.h"
#include "proof_report.h"
#include "wire_code.h"

namespace godwit {
namespace {

Error bad(const std::string& m) { return Error{ProtocolCode::bad_request, m, "", std::nullopt}; }

Result<std::string> text_field(const nlohmann::json& req, const char* key, bool required) {
  auto it = req.find(key);
  if (it == req.end()) {
    if (required) return bad(std::string("'") + key + "' is required");
    return std::string();
  }
  if (!it->is_string()) return bad(std::string("'") + key + "' must be a string");
  return it->get<std::string>();
}

struct Range {
  LocalSeconds from = 0, to = 0;
  std::string from_text, to_text;
};

Result<Range> range_of(const nlohmann::json& req) {
  auto from = text_field(req, "from", true);
  if (!from) return from.error();
  auto to = text_field(req, "to", true);
  if (!to) return to.error();
  Range r{0, 0, from.value(), to.value()};
  auto f = parse_range_start(from.value());
  auto t = parse_range_end(to.value());
  if (!f) return bad("'from' must be a date (2026-03-14) or a local date-time (2026-03-14T06:00:00)");
  if (!t) return bad("'to' must be a date (2026-03-14, through its end) or a local date-time");
  r.from = *f;
  r.to = *t;
  return r;
}

Error wire(const Error& e) {
  if (e.code == ErrorCode::usage) return bad(e.message);
  return e;
}

std::string now_utc() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char b[32];
  std::strftime(b, sizeof b, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return b;
}

}  // namespace

Result<nlohmann::json> airings_op(RecordStore& store, const nlohmann::json& req) {
  auto range = range_of(req);
  if (!range) return range.error();
  AiringsQuery q;
  q.from_local = range.value().from;
  q.to_local = range.value().to;
  for (auto [key, out] : {std::pair{"station", &q.station}, std::pair{"spot", &q.spot},
                          std::pair{"advertiser", &q.advertiser}, std::pair{"cursor", &q.cursor}}) {
    auto v = text_field(req, key, false);
    if (!v) return v.error();
    *out = v.value();
  }
  if (auto it = req.find("limit"); it != req.end()) {
    if (!it->is_number_integer() || it->get<int64_t>() < 1 || it->get<int64_t>() > int64_t(kMaxAiringsPage))
      return bad("'limit' must be an integer from 1 to " + std::to_string(kMaxAiringsPage));
    q.limit = it->get<size_t>();
  }
  auto page = store.read([&](SqliteDb& db) { return query_airings(db, q); });
  if (!page) return wire(page.error());
  nlohmann::json list = nlohmann::json::array();
  for (const auto& a : page.value().airings) list.push_back(airing_to_json(a));
  nlohmann::json r{{"ok", true}, {"airings", list}};
  if (!page.value().next_cursor.empty()) r["next"] = page.value().next_cursor;
  return r;
}

Result<nlohmann::json> proof_op(RecordStore& store, const nlohmann::json& req) {
  auto range = range_of(req);
  if (!range) return range.error();
  ProofQuery q;
  q.from_local = range.value().from;
  q.to_local = range.value().to;
  q.from_text = range.value().from_text;
  q.to_text = range.value().to_text;
  auto adv = text_field(req, "advertiser", false);
  if (!adv) return adv.error();
  auto spot = text_field(req, "spot", false);
  if (!spot) return spot.error();
  q.advertiser = adv.value();
  q.spot = spot.value();
  auto doc = store.read([&](SqliteDb& db) { return build_proof(db, q, now_utc()); });
  if (!doc) return wire(doc.error());
  return nlohmann::json{{"ok", true}, {"proof", doc.value()}};
}

}  // namespace godwit
