#include "server.h"

#include <doctest/doctest.h>

#include <arpa/inet.h>
#include <netinet/in.h>
#include <poll.h>
#include <sys/socket.h>
#include <unistd.h>

#include <atomic>
#include <condition_variable>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include "test_util.h"

using namespace godwit;

namespace {

// A blocking client on loopback from a source address of its own
// (127.0.0.N stands for another host: the server keeps accounts per address).
class Client {
 public:
  Client(const char* source, unsigned short port) {
    fd_ = ::socket(AF_INET, SOCK_STREAM, 0);
    sockaddr_in from{};
    from.sin_family = AF_INET;
    ::inet_pton(AF_INET, source, &from.sin_addr);
    REQUIRE(::bind(fd_, reinterpret_cast<sockaddr*>(&from), sizeof from) == 0);
    sockaddr_in to{};
    to.sin_family = AF_INET;
    to.sin_port = htons(port);
    ::inet_pton(AF_INET, "127.0.0.1", &to.sin_addr);
    REQUIRE(::connect(fd_, reinterpret_cast<sockaddr*>(&to), sizeof to) == 0);
  }
  ~Client() { ::close(fd_); }
  void send(const std::string& line) {
    const std::string bytes = line + "\n";
    for (size_t at = 0; at < bytes.size();) {
      const ssize_t n = ::send(fd_, bytes.data() + at, bytes.size() - at, MSG_NOSIGNAL);
      REQUIRE(n > 0);
      at += static_cast<size_t>(n);
    }
  }
  void send_raw(const std::string& bytes) {
    for (size_t at = 0; at < bytes.size();) {
      const ssize_t n = ::send(fd_, bytes.data() + at, bytes.size() - at, MSG_NOSIGNAL);
      REQUIRE(n > 0);
      at += static_cast<size_t>(n);
    }
  }
  // Whether the server closed the connection within `wait_ms` (answers
  // before the close are skipped; a bound, not a measure of speed).
  bool closed_within(int wait_ms) {
    for (;;) {
      pollfd p{fd_, POLLIN, 0};
      if (::poll(&p, 1, wait_ms) <= 0) return false;
      char chunk[4096];
      const ssize_t n = ::recv(fd_, chunk, sizeof chunk, 0);
      if (n <= 0) return true;
    }
  }
  // The next answer line, or "" when none came within `wait_ms` (a bound
  // for a test that would otherwise hang, not a measure of speed).
  std::string answer(int wait_ms) {
    for (;;) {
      if (const size_t nl = buf_.find('\n'); nl != std::string::npos) {
        std::string line = buf_.substr(0, nl);
        buf_.erase(0, nl + 1);
        return line;
      }
      pollfd p{fd_, POLLIN, 0};
      if (::poll(&p, 1, wait_ms) <= 0) return "";
      char chunk[4096];
      const ssize_t n = ::recv(fd_, chunk, sizeof chunk, 0);
      if (n <= 0) return "";
      buf_.append(chunk, static_cast<size_t>(n));
    }
  }

 private:
  int fd_ = -1;
  std::string buf_;
};

// A real Server on 127.0.0.1 with an op `hold` that waits until released
// (a request that takes long, as parsing megabytes does), and a count of
// the `hold` requests being handled.
struct World {
  test::TempDir dir;
  std::unique_ptr<JobStore> store;
  std::unique_ptr<PathGuard> guard;
  std::unique_ptr<JobRunner> runner;
  std::unique_ptr<Dispatcher> dispatcher;
  boost::asio::io_context io;
  std::unique_ptr<Server> server;
  std::thread io_thread;
  std::mutex mu;
  std::condition_variable cv;
  int holding = 0;     // GUARDED_BY(mu)
  bool released = false;  // GUARDED_BY(mu)

  explicit World(ServerLimits limits) {
    store = std::move(JobStore::open(dir.file("state"), 4).value());
    guard = std::make_unique<PathGuard>(std::vector<std::string>{dir.path().string()});
    runner = std::make_unique<JobRunner>(RunnerConfig{}, *guard);
    dispatcher = std::make_unique<Dispatcher>(*store, *runner, 1);
    dispatcher->add_op("hold", [this](const nlohmann::json&) -> Result<nlohmann::json> {
      std::unique_lock lock(mu);
      ++holding;
      cv.notify_all();
      cv.wait(lock, [this] { return released; });
      return nlohmann::json{{"ok", true}, {"held", true}};
    });
    server = std::make_unique<Server>(io, boost::asio::ip::tcp::endpoint(boost::asio::ip::make_address("127.0.0.1"), 0),
                                      *dispatcher, *store, limits);
    io_thread = std::thread([this] { io.run(); });
  }
  ~World() {
    release();
    io.stop();
    io_thread.join();
    server.reset();  // joins the request threads
  }
  void wait_holding(int n) {
    std::unique_lock lock(mu);
    cv.wait(lock, [&] { return holding >= n; });
  }
  void release() {
    {
      std::lock_guard lock(mu);
      released = true;
    }
    cv.notify_all();
  }
};

// A request line of `bytes` bytes, padded with a long string.
std::string padded(const std::string& op, size_t bytes) {
  const std::string head = R"({"op":")" + op + R"(","pad":")";
  return head + std::string(bytes - head.size() - 2, 'x') + "\"}";
}

}  // namespace

TEST_CASE("server: a short request from one address is answered while another address's long lines are handled") {
  // Four long lines from 127.0.0.2 take long to handle (`hold`); a short
  // request from 127.0.0.3 arrives meanwhile. Long lines have threads of
  // their own, so it is answered before any of them is done; in one pool
  // of four threads, first come first served, it would wait for them.
  ServerLimits limits;
  limits.heavy_line_bytes = 64u << 10;
  World w(limits);
  std::vector<std::unique_ptr<Client>> heavy;
  for (int i = 0; i < 4; ++i) {
    heavy.push_back(std::make_unique<Client>("127.0.0.2", w.server->port()));
    heavy.back()->send(padded("hold", 256u << 10));
  }
  w.wait_holding(2);  // the long lines are being handled
  Client quiet("127.0.0.3", w.server->port());
  quiet.send(R"({"op":"health","id":7})");
  const std::string answer = quiet.answer(20000);
  CHECK_MESSAGE(!answer.empty(), "no answer to health while long lines were handled");
  if (!answer.empty()) CHECK(nlohmann::json::parse(answer)["id"] == 7);
  w.release();
  for (auto& c : heavy) CHECK(nlohmann::json::parse(c->answer(20000))["held"] == true);
}

TEST_CASE("server: a long line and the short lines after it on one connection are answered in order") {
  ServerLimits limits;
  limits.heavy_line_bytes = 64u << 10;
  World w(limits);
  w.release();
  Client c("127.0.0.1", w.server->port());
  c.send(R"({"op":"health","id":1})");
  c.send(padded("health", 512u << 10).insert(1, R"("id":2,)"));
  c.send(R"({"op":"health","id":3})");
  for (int id = 1; id <= 3; ++id) {
    const std::string line = c.answer(20000);
    REQUIRE_MESSAGE(!line.empty(), "answer " << id << " missing");
    const auto a = nlohmann::json::parse(line);
    CHECK(a["id"] == id);
    CHECK(a["ok"] == true);
  }
}

TEST_CASE("server: a line over the limit is answered too_large and the line after it is answered") {
  // Past heavy_read_bytes, the rest of a line (and the skipped rest of one
  // over max_line_bytes) is read in larger pieces: the framing must come
  // out the same (line_framer.h).
  ServerLimits limits;
  limits.heavy_read_bytes = 16u << 10;
  limits.max_line_bytes = 1u << 20;
  World w(limits);
  w.release();
  Client c("127.0.0.1", w.server->port());
  c.send(padded("health", 3u << 20));
  c.send(R"({"op":"health","id":"after"})");
  const std::string first = c.answer(20000);
  REQUIRE(!first.empty());
  CHECK(nlohmann::json::parse(first)["error"]["code"] == "too_large");
  const std::string second = c.answer(20000);
  REQUIRE(!second.empty());
  CHECK(nlohmann::json::parse(second)["id"] == "after");
}

TEST_CASE("server: a line over the limit whose rest never comes is closed at the read deadline") {
  // Before, the skipped rest of an over-limit line was outside the read
  // deadline: such a connection stayed open until the idle timeout.
  ServerLimits limits;
  limits.max_line_bytes = 64u << 10;
  limits.read_timeout_s = 1;
  limits.idle_timeout_s = 300;
  World w(limits);
  w.release();
  Client c("127.0.0.1", w.server->port());
  c.send_raw(std::string(100u << 10, 'x'));  // over the limit, no newline
  const std::string first = c.answer(20000);
  REQUIRE(!first.empty());
  CHECK(nlohmann::json::parse(first)["error"]["code"] == "too_large");
  CHECK(c.closed_within(15000));
}
