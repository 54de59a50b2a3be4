// RedisConnection: one synchronous connection to a Redis server through
// hiredis, with connect and command timeouts, one reconnect on a broken
// connection, and replies copied into plain values.
//
// Thread contract: one per thread; not safe for concurrent use.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "godwit/core/error.h"

struct redisContext;

namespace godwit {

struct RedisReply {
  enum class Type { nil, integer, string, status, error, array };
  Type type = Type::nil;
  long long integer = 0;
  std::string str;  // string, status and error replies
  std::vector<RedisReply> elements;
  bool is_nil() const { return type == Type::nil; }
};

// "redis://HOST:PORT/STREAM" (PORT defaults to 6379, STREAM to "godwit").
struct QueueUrl {
  std::string host;
  int port = 6379;
  std::string stream;
};
Result<QueueUrl> parse_queue_url(const std::string& url);

class RedisConnection {
 public:
  RedisConnection(std::string host, int port, double timeout_s = 5.0);
  ~RedisConnection();
  RedisConnection(const RedisConnection&) = delete;
  RedisConnection& operator=(const RedisConnection&) = delete;

  // Sends one command (binary-safe arguments). Errors: unavailable (cannot
  // connect, or the connection broke twice), and the server's own error
  // replies as bad_request with its message. A command that blocks on the
  // server (BLOCK ms) needs a timeout above that: `timeout_s` is per call.
  Result<RedisReply> command(const std::vector<std::string>& argv, double timeout_s = -1);

  const std::string& host() const { return host_; }
  int port() const { return port_; }

 private:
  Status connect();
  std::string host_;
  int port_;
  double timeout_s_;
  redisContext* ctx_ = nullptr;
};

}  // namespace godwit
