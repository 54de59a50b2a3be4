#include "server.h"

#include <spdlog/spdlog.h>

#include <chrono>
#include <deque>
#include <map>
#include <vector>

#include "error_boundary.h"
#include "line_framer.h"
#include "json_text.h"
#include "wire_code.h"

namespace godwit {
namespace {

using boost::asio::ip::tcp;
using Clock = std::chrono::steady_clock;

// The peer's address, IPv4-mapped IPv6 written as IPv4; "?" when unknown.
std::string peer_address(const tcp::socket& socket) {
  boost::system::error_code ec;
  auto a = socket.remote_endpoint(ec).address();
  if (ec) return "?";
  if (a.is_v6() && a.to_v6().is_v4_mapped()) a = boost::asio::ip::make_address_v4(boost::asio::ip::v4_mapped, a.to_v6());
  return a.to_string();
}

}  // namespace

struct ConnectionCounts {  // touched on the I/O thread only
  size_t total = 0;
  std::map<std::string, size_t> by_address;
};

namespace {

class Session : public std::enable_shared_from_this<Session> {
 public:
  Session(tcp::socket socket, Dispatcher& d, JobStore& store, const ServerLimits& limits,
          std::shared_ptr<ConnectionCounts> counts, std::string address, FairPool& requests, FairPool& heavy)
      : socket_(std::move(socket)),
        timer_(socket_.get_executor()),
        requests_(requests),
        heavy_(heavy),
        dispatcher_(d),
        store_(store),
        limits_(limits),
        framer_(limits.max_line_bytes),
        counts_(std::move(counts)),
        address_(std::move(address)) {
    ++counts_->total;
    ++counts_->by_address[address_];
  }
  ~Session() {
    --counts_->total;
    if (--counts_->by_address[address_] == 0) counts_->by_address.erase(address_);
    if (subscription_) store_.unsubscribe(subscription_);
  }

  void start() {
    boost::system::error_code ignored;
    socket_.set_option(tcp::socket::keep_alive(true), ignored);  // a vanished peer is found out
    last_active_ = Clock::now();
    arm_timer();
    read();
  }

  void send(std::string line) {
    if (closed_) return;
    queued_bytes_ += line.size() + 1;
    // One answer of max_reply_bytes fits, and the events behind it.
    if (queued_bytes_ > limits_.max_reply_bytes + (1u << 20)) {  // the client is not reading
      close();
      return;
    }
    if (out_.empty()) write_since_ = Clock::now();
    out_.push_back(std::move(line) + "\n");
    if (out_.size() == 1) write();
  }

 private:
  void read() {
    // Past heavy_read_bytes of one line (or in one over the limit, whose
    // rest is skipped), 256 KiB a read instead of 8 KiB: a client's
    // megabytes cost the I/O thread 32 times fewer turns. The larger buffer
    // goes once the line is done.
    const bool long_line = framer_.pending() > limits_.heavy_read_bytes || framer_.skipping();
    if (long_line && long_buf_.empty()) long_buf_.resize(256u << 10);
    if (!long_line && !long_buf_.empty()) std::vector<char>().swap(long_buf_);
    auto into = long_line ? boost::asio::buffer(long_buf_) : boost::asio::buffer(buf_);
    auto self = shared_from_this();
    socket_.async_read_some(into, [this, self, long_line](boost::system::error_code ec, size_t n) {
      if (ec) return close();
      take(framer_.feed(std::string_view(long_line ? long_buf_.data() : buf_.data(), n)));
    });
  }

  // Lines just framed: handled in turn, or reading goes on.
  void take(std::vector<LineFramer::Event> events) {
    for (auto& ev : events) {
      if (ev.kind == LineFramer::Event::line && ev.text.empty()) continue;  // no request: idle all the same
      last_active_ = Clock::now();
      lines_.push_back(std::move(ev));
    }
    // A line is under way while its bytes are held or, over the limit,
    // while its rest is skipped: the read deadline covers both.
    const bool in_line = framer_.pending() > 0 || framer_.skipping();
    line_started_ = in_line ? (line_started_ ? line_started_ : std::optional(Clock::now())) : std::nullopt;
    if (closed_) return;
    if (lines_.empty()) read();
    else handle_next();
  }

  // Requests are handled one at a time, in order, on the request threads
  // (long lines on the heavy ones), never on the I/O thread: a submit
  // opens recordings and fsyncs the journal, `cluster` asks Redis, a long
  // line takes milliseconds to parse. Reading pauses meanwhile and resumes
  // once the lines of the last read are answered.
  void handle_next() {
    while (!closed_ && !lines_.empty() && lines_.front().kind == LineFramer::Event::too_long) {
      lines_.pop_front();
      send(json_text(Dispatcher::error_response(
          ProtocolCode::too_large, "request line over " + std::to_string(limits_.max_line_bytes) + " bytes")));
    }
    if (closed_) return;
    if (lines_.empty()) {
      handling_ = false;
      last_active_ = Clock::now();  // the idle time starts after the answer
      read();
      return;
    }
    handling_ = true;
    auto self = shared_from_this();
    FairPool& pool = lines_.front().text.size() > limits_.heavy_line_bytes ? heavy_ : requests_;
    pool.post(address_, [this, self, text = std::move(lines_.front().text)]() mutable {
      // The request's error boundary (error_boundary.h): whatever handling
      // it throws is answered `internal`, and the connection stays usable.
      auto reply = std::make_shared<Reply>();
      try {
        *reply = dispatcher_.handle(text);
      } catch (...) {
        reply->response = Dispatcher::error_response(ErrorCode::internal, internal_error_message("request"));
      }
      auto line = std::make_shared<std::string>(json_text(reply->response));
      if (line->size() > limits_.max_reply_bytes) {
        auto err = Dispatcher::error_response(ProtocolCode::too_large,
                                              "the answer is " + std::to_string(line->size()) +
                                                  " bytes, over the limit of " +
                                                  std::to_string(limits_.max_reply_bytes) + " (limits.max_reply_bytes)");
        if (reply->response.contains("id")) err["id"] = reply->response["id"];
        *line = json_text(err);
        reply->watch = false;
      }
      // `self` moves on, so the session is never destroyed on this thread
      // (its counts are the I/O thread's).
      boost::asio::post(socket_.get_executor(), [this, self = std::move(self), reply, line] {
        send(std::move(*line));
        if (reply->watch && !closed_) subscribe(reply->watch_job);
        handle_next();
      });
    });
    lines_.pop_front();
  }

  void subscribe(const std::string& job) {
    if (subscription_) store_.unsubscribe(subscription_);
    last_heartbeat_ = Clock::now();
    std::weak_ptr<Session> weak = shared_from_this();
    auto exec = socket_.get_executor();
    subscription_ = store_.subscribe([weak, exec, job](const nlohmann::json& ev) {
      if (!job.empty() && ev.value("job", "") != job) return;
      boost::asio::post(exec, [weak, line = json_text(ev)]() mutable {
        if (auto s = weak.lock()) s->send(std::move(line));
      });
    });
  }

  void write() {
    auto self = shared_from_this();
    boost::asio::async_write(socket_, boost::asio::buffer(out_.front()), [this, self](boost::system::error_code ec, size_t) {
      if (ec) return close();
      queued_bytes_ -= out_.front().size();
      out_.pop_front();
      write_since_ = Clock::now();
      if (!out_.empty()) write();
    });
  }

  void arm_timer() {
    auto self = shared_from_this();
    timer_.expires_after(std::chrono::milliseconds(250));
    timer_.async_wait([this, self](boost::system::error_code ec) {
      if (ec || closed_) return;
      const auto now = Clock::now();
      auto since = [&](Clock::time_point t) { return std::chrono::duration<double>(now - t).count(); };
      // An answer or event not taken by the client for idle_timeout_s.
      if (!out_.empty() && since(write_since_) > limits_.idle_timeout_s) {
        spdlog::info("closing a connection from {} that reads nothing", address_);
        return close();
      }
      const bool watching = subscription_ != 0;
      if (watching && since(last_heartbeat_) >= limits_.watch_heartbeat_s) {
        last_heartbeat_ = now;
        send(R"({"event":"heartbeat"})");
      }
      if (handling_) return arm_timer();  // deadlines are for the client, not for us
      if (!watching && since(last_active_) > limits_.idle_timeout_s) return close();
      if (line_started_ && std::chrono::duration<double>(now - *line_started_).count() > limits_.read_timeout_s) {
        spdlog::info("closing a connection whose request line took over {} s", limits_.read_timeout_s);
        return close();
      }
      arm_timer();
    });
  }

  void close() {
    if (closed_) return;
    closed_ = true;
    boost::system::error_code ignored;
    socket_.shutdown(tcp::socket::shutdown_both, ignored);
    socket_.close(ignored);
    timer_.cancel();
    if (subscription_) {
      store_.unsubscribe(subscription_);
      subscription_ = 0;
    }
  }

  tcp::socket socket_;
  boost::asio::steady_timer timer_;
  FairPool& requests_;
  FairPool& heavy_;
  Dispatcher& dispatcher_;
  JobStore& store_;
  const ServerLimits& limits_;
  LineFramer framer_;
  std::shared_ptr<ConnectionCounts> counts_;
  std::string address_;
  std::array<char, 8192> buf_{};
  std::vector<char> long_buf_;  // while a long line is read
  std::deque<std::string> out_;
  std::deque<LineFramer::Event> lines_;  // read, not yet handled
  bool handling_ = false;                // a request is with the request threads
  size_t queued_bytes_ = 0;
  Clock::time_point last_active_;      // the last request line, or answer
  Clock::time_point write_since_;      // the write queue last moved
  Clock::time_point last_heartbeat_;
  std::optional<Clock::time_point> line_started_;
  size_t subscription_ = 0;
  bool closed_ = false;
};

}  // namespace

Server::Server(boost::asio::io_context& io, const tcp::endpoint& at, Dispatcher& d, JobStore& store, ServerLimits limits)
    : acceptor_(io),
      dispatcher_(d),
      store_(store),
      limits_(limits),
      counts_(std::make_shared<ConnectionCounts>()),
      requests_(FairPool::Options{4, "gw-request", 0, 2}),
      heavy_(FairPool::Options{2, "gw-heavy", limits.heavy_nice, 2, limits.idle_class}) {
  acceptor_.open(at.protocol());
  acceptor_.set_option(tcp::acceptor::reuse_address(true));
  if (at.address().is_v6()) acceptor_.set_option(boost::asio::ip::v6_only(false));
  acceptor_.bind(at);
  acceptor_.listen();
  accept();
}

unsigned short Server::port() const { return acceptor_.local_endpoint().port(); }

size_t Server::connections() const { return counts_->total; }

void Server::stop_accepting() {
  boost::system::error_code ignored;
  acceptor_.close(ignored);
}

void Server::accept() {
  acceptor_.async_accept([this](boost::system::error_code ec, tcp::socket socket) {
    if (ec == boost::asio::error::operation_aborted) return;  // shutting down
    if (!ec) {
      const std::string address = peer_address(socket);
      const auto mine = counts_->by_address.find(address);
      const bool too_many = counts_->total >= limits_.max_connections;
      if (too_many || (mine != counts_->by_address.end() && mine->second >= limits_.max_connections_per_address)) {
        auto line = std::make_shared<std::string>(
            json_text(Dispatcher::error_response(
                ProtocolCode::busy, too_many ? "too many connections" : "too many connections from " + address)) +
            "\n");
        auto sock = std::make_shared<tcp::socket>(std::move(socket));
        boost::asio::async_write(*sock, boost::asio::buffer(*line), [sock, line](boost::system::error_code, size_t) {
          boost::system::error_code ignored;
          sock->close(ignored);
        });
      } else {
        std::make_shared<Session>(std::move(socket), dispatcher_, store_, limits_, counts_, address, requests_, heavy_)
            ->start();
      }
    }
    accept();
  });
}

}  // namespace godwit
