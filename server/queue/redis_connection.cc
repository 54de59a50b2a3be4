#include "redis_connection.h"

#include <hiredis/hiredis.h>

#include <charconv>
#include <cmath>

#include "wire_code.h"

namespace godwit {
namespace {

timeval to_timeval(double s) {
  timeval tv{};
  tv.tv_sec = static_cast<time_t>(std::floor(s));
  tv.tv_usec = static_cast<suseconds_t>((s - std::floor(s)) * 1e6);
  return tv;
}

RedisReply copy(const redisReply* r) {
  RedisReply out;
  switch (r->type) {
    case REDIS_REPLY_INTEGER:
      out.type = RedisReply::Type::integer;
      out.integer = r->integer;
      break;
    case REDIS_REPLY_STRING:
      out.type = RedisReply::Type::string;
      out.str.assign(r->str, r->len);
      break;
    case REDIS_REPLY_STATUS:
      out.type = RedisReply::Type::status;
      out.str.assign(r->str, r->len);
      break;
    case REDIS_REPLY_ERROR:
      out.type = RedisReply::Type::error;
      out.str.assign(r->str, r->len);
      break;
    case REDIS_REPLY_ARRAY:
      out.type = RedisReply::Type::array;
      for (size_t i = 0; i < r->elements; ++i) out.elements.push_back(copy(r->element[i]));
      break;
    default:
      break;
  }
  return out;
}

}  // namespace

Result<QueueUrl> parse_queue_url(const std::string& url) {
  const std::string scheme = "redis://";
  auto bad = [&](const std::string& why) {
    return Error{ErrorCode::usage, "queue URL '" + url + "': " + why + " (expected redis://HOST:PORT/STREAM)", "",
                 std::nullopt};
  };
  if (url.rfind(scheme, 0) != 0) return bad("not a redis:// URL");
  std::string rest = url.substr(scheme.size());
  QueueUrl q;
  const auto slash = rest.find('/');
  q.stream = slash == std::string::npos ? "godwit" : rest.substr(slash + 1);
  rest = rest.substr(0, slash);
  if (q.stream.empty()) q.stream = "godwit";
  if (q.stream.find_first_of(" \t\r\n") != std::string::npos) return bad("the stream name has blanks");
  std::string host = rest;
  if (!rest.empty() && rest[0] == '[') {  // [::1]:6379
    const auto close = rest.find(']');
    if (close == std::string::npos) return bad("unclosed '['");
    host = rest.substr(1, close - 1);
    rest = rest.substr(close + 1);
    if (!rest.empty() && rest[0] != ':') return bad("junk after ']'");
    rest = rest.empty() ? "" : rest.substr(1);
  } else if (const auto colon = rest.rfind(':'); colon != std::string::npos) {
    host = rest.substr(0, colon);
    rest = rest.substr(colon + 1);
  } else {
    rest.clear();
  }
  if (host.empty()) return bad("no host");
  q.host = host;
  if (!rest.empty()) {
    int port = 0;
    auto [p, ec] = std::from_chars(rest.data(), rest.data() + rest.size(), port);
    if (ec != std::errc() || p != rest.data() + rest.size() || port <= 0 || port > 65535) return bad("bad port");
    q.port = port;
  }
  return q;
}

RedisConnection::RedisConnection(std::string host, int port, double timeout_s)
    : host_(std::move(host)), port_(port), timeout_s_(timeout_s) {}

RedisConnection::~RedisConnection() {
  if (ctx_) redisFree(ctx_);
}

Status RedisConnection::connect() {
  if (ctx_) {
    redisFree(ctx_);
    ctx_ = nullptr;
  }
  ctx_ = redisConnectWithTimeout(host_.c_str(), port_, to_timeval(timeout_s_));
  if (!ctx_ || ctx_->err) {
    const std::string why = ctx_ ? ctx_->errstr : "out of memory";
    if (ctx_) redisFree(ctx_);
    ctx_ = nullptr;
    return Error{ProtocolCode::unavailable, "cannot reach Redis at " + host_ + ":" + std::to_string(port_) + ": " + why, "",
                 std::nullopt};
  }
  return ok_status();
}

Result<RedisReply> RedisConnection::command(const std::vector<std::string>& argv, double timeout_s) {
  std::vector<const char*> args;
  std::vector<size_t> lens;
  for (const auto& a : argv) {
    args.push_back(a.data());
    lens.push_back(a.size());
  }
  std::string last_error;
  for (int attempt = 0; attempt < 2; ++attempt) {
    if (!ctx_) {
      if (auto st = connect(); !st) {
        last_error = st.error().message;
        continue;
      }
    }
    redisSetTimeout(ctx_, to_timeval(timeout_s > 0 ? timeout_s : timeout_s_));
    auto* r = static_cast<redisReply*>(
        redisCommandArgv(ctx_, static_cast<int>(args.size()), args.data(), lens.data()));
    if (!r) {
      last_error = std::string("Redis connection broke: ") + ctx_->errstr;
      redisFree(ctx_);
      ctx_ = nullptr;
      continue;
    }
    RedisReply out = copy(r);
    freeReplyObject(r);
    if (out.type == RedisReply::Type::error)
      return Error{ProtocolCode::bad_request, "Redis: " + out.str, "", std::nullopt};
    return out;
  }
  return Error{ProtocolCode::unavailable, last_error, "", std::nullopt};
}

}  // namespace godwit
