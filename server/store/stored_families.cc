#include "stored_families.h"

#include "file_digest.h"
#include "godwit/core/version.h"
#include "stored_tasks.h"

namespace godwit {
namespace {

std::string bits(const std::vector<bool>& b) {
  std::string s(b.size(), '0');
  for (size_t i = 0; i < b.size(); ++i)
    if (b[i]) s[i] = '1';
  return s;
}

Result<std::vector<bool>> from_bits(const nlohmann::json& j) {
  if (!j.is_string()) return Error{ErrorCode::internal, "kept families: segments not text", "", std::nullopt};
  std::vector<bool> b;
  for (char c : j.get<std::string>()) {
    if (c != '0' && c != '1') return Error{ErrorCode::internal, "kept families: a segment not 0 or 1", "", std::nullopt};
    b.push_back(c == '1');
  }
  return b;
}

}  // namespace

std::string families_key(const FamilyQuery& q, const std::vector<std::string>& master_sha256) {
  nlohmann::json masters = nlohmann::json::array();
  for (size_t i = 0; i < q.ids.size() && i < master_sha256.size(); ++i) {
    auto d = q.declared.find(i);
    masters.push_back({q.ids[i], master_sha256[i], d == q.declared.end() ? nlohmann::json(nullptr) : nlohmann::json(d->second)});
  }
  const FamilyOptions& o = q.options;
  const nlohmann::json key{{"version", godwit_version()},
                           {"rate_hz", q.rate_hz},
                           {"options", {{"threshold", o.threshold},
                                        {"distinct_below", o.distinct_below},
                                        {"segment_s", o.segment_s},
                                        {"screen_rate_hz", o.screen_rate_hz},
                                        {"screen_below", o.screen_below}}},
                           {"masters", masters}};
  return key.dump();  // keys sorted: canonical
}

nlohmann::json families_to_json(const Families& f) {
  nlohmann::json links = nlohmann::json::array();
  for (const auto& l : f.links)
    links.push_back({{"a", l.a}, {"b", l.b}, {"score", l.score}, {"lag_s", l.lag_s},
                     {"distinct_a", bits(l.distinct_a)}, {"distinct_b", bits(l.distinct_b)}});
  return {{"family_of", f.family_of}, {"family_name", f.family_name}, {"links", links}};
}

Result<Families> families_from_json(const nlohmann::json& j, size_t masters) {
  const Error bad{ErrorCode::internal, "kept families do not fit the job's masters", "", std::nullopt};
  try {
    Families f;
    f.family_of = j.at("family_of").get<std::vector<size_t>>();
    f.family_name = j.at("family_name").get<std::vector<std::string>>();
    if (f.family_of.size() != masters) return bad;
    for (size_t x : f.family_of)
      if (x >= f.family_name.size()) return bad;
    for (const auto& l : j.at("links")) {
      SiblingLink s;
      s.a = l.at("a").get<size_t>();
      s.b = l.at("b").get<size_t>();
      s.score = l.at("score").get<double>();
      s.lag_s = l.at("lag_s").get<double>();
      auto da = from_bits(l.at("distinct_a")), db = from_bits(l.at("distinct_b"));
      if (!da) return da.error();
      if (!db) return db.error();
      s.distinct_a = std::move(da.value());
      s.distinct_b = std::move(db.value());
      if (!(s.a < s.b && s.b < masters)) return bad;
      f.links.push_back(std::move(s));
    }
    return f;
  } catch (const nlohmann::json::exception&) {
    return bad;
  }
}

Result<Families> StoredTaskRunner::families(const FamilyQuery& query, const std::function<Result<Families>()>& find) {
  std::vector<std::string> sha;
  for (const auto& p : query.paths) {
    auto d = digest(p);
    if (!d) {  // found here (its error, if any, is the decoder's)
      ++counts_.families_found;
      return find();
    }
    sha.push_back(d.value());
  }
  const std::string key = sha256_hex(families_key(query, sha));
  if (auto kept = store_.stored_result("families", key, "", "")) {
    auto j = nlohmann::json::parse(*kept, nullptr, false);
    if (!j.is_discarded())
      if (auto f = families_from_json(j, query.ids.size())) {
        ++counts_.families_reused;
        return f;
      }
  }
  auto found = find();
  ++counts_.families_found;
  if (found) (void)store_.store_results({{"families", key, "", "", families_to_json(found.value()).dump(), {}}});
  return found;  // families not kept are found again next time
}

}  // namespace godwit
