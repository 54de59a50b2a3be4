#include "server.h"

#include <spdlog/spdlog.h>

#include <chrono>
#include <deque>

#include "line_framer.h"
#include "json_text.h"

namespace godwit {
namespace {

using boost::asio::ip::tcp;
using Clock = std::chrono::steady_clock;

class Session : public std::enable_shared_from_this<Session> {
 public:
  Session(tcp::socket socket, Dispatcher& d, JobStore& store, const ServerLimits& limits,
          std::shared_ptr<size_t> counter, boost::asio::thread_pool& handlers)
      : socket_(std::move(socket)),
        timer_(socket_.get_executor()),
        handlers_(handlers),
        dispatcher_(d),
        store_(store),
        limits_(limits),
        framer_(limits.max_line_bytes),
        counter_(std::move(counter)) {
    ++*counter_;
  }
  ~Session() {
    --*counter_;
    if (subscription_) store_.unsubscribe(subscription_);
  }

  void start() {
    last_byte_ = Clock::now();
    arm_timer();
    read();
  }

  void send(std::string line) {
    if (closed_) return;
    queued_bytes_ += line.size() + 1;
    if (queued_bytes_ > (8u << 20)) {  // the client is not reading
      close();
      return;
    }
    out_.push_back(std::move(line) + "\n");
    if (out_.size() == 1) write();
  }

 private:
  void read() {
    auto self = shared_from_this();
    socket_.async_read_some(boost::asio::buffer(buf_), [this, self](boost::system::error_code ec, size_t n) {
      if (ec) return close();
      last_byte_ = Clock::now();
      for (auto& ev : framer_.feed(std::string_view(buf_.data(), n))) {
        if (ev.kind == LineFramer::Event::line && ev.text.empty()) continue;
        lines_.push_back(std::move(ev));
      }
      line_started_ = framer_.pending() > 0 ? (line_started_ ? line_started_ : std::optional(Clock::now())) : std::nullopt;
      if (closed_) return;
      if (lines_.empty()) read();
      else handle_next();
    });
  }

  // Requests are handled one at a time, in order, on the handler threads,
  // never on the I/O thread: a submit opens recordings and fsyncs the
  // journal, `cluster` asks Redis. Reading pauses meanwhile and resumes
  // once the lines of the last read are answered.
  void handle_next() {
    while (!closed_ && !lines_.empty() && lines_.front().kind == LineFramer::Event::too_long) {
      lines_.pop_front();
      send(json_text(Dispatcher::error_response(
          ErrorCode::too_large, "request line over " + std::to_string(limits_.max_line_bytes) + " bytes")));
    }
    if (closed_) return;
    if (lines_.empty()) {
      handling_ = false;
      last_byte_ = Clock::now();  // the idle time starts after the answer
      read();
      return;
    }
    handling_ = true;
    auto self = shared_from_this();
    boost::asio::post(handlers_, [this, self, text = std::move(lines_.front().text)] {
      auto reply = std::make_shared<Reply>(dispatcher_.handle(text));
      boost::asio::post(socket_.get_executor(), [this, self, reply] {
        send(json_text(reply->response));
        if (reply->watch && !closed_) subscribe(reply->watch_job);
        handle_next();
      });
    });
    lines_.pop_front();
  }

  void subscribe(const std::string& job) {
    if (subscription_) store_.unsubscribe(subscription_);
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
      if (!out_.empty()) write();
    });
  }

  void arm_timer() {
    auto self = shared_from_this();
    timer_.expires_after(std::chrono::milliseconds(250));
    timer_.async_wait([this, self](boost::system::error_code ec) {
      if (ec || closed_) return;
      if (handling_) return arm_timer();  // deadlines are for the client, not for us
      const auto now = Clock::now();
      const double idle = std::chrono::duration<double>(now - last_byte_).count();
      const bool watching = subscription_ != 0;
      if (!watching && idle > limits_.idle_timeout_s) return close();
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
  boost::asio::thread_pool& handlers_;
  Dispatcher& dispatcher_;
  JobStore& store_;
  const ServerLimits& limits_;
  LineFramer framer_;
  std::shared_ptr<size_t> counter_;
  std::array<char, 8192> buf_{};
  std::deque<std::string> out_;
  std::deque<LineFramer::Event> lines_;  // read, not yet handled
  bool handling_ = false;                // a request is with the handler threads
  size_t queued_bytes_ = 0;
  Clock::time_point last_byte_;
  std::optional<Clock::time_point> line_started_;
  size_t subscription_ = 0;
  bool closed_ = false;
};

}  // namespace

Server::Server(boost::asio::io_context& io, const tcp::endpoint& at, Dispatcher& d, JobStore& store, ServerLimits limits)
    : io_(io), acceptor_(io), dispatcher_(d), store_(store), limits_(limits) {
  acceptor_.open(at.protocol());
  acceptor_.set_option(tcp::acceptor::reuse_address(true));
  if (at.address().is_v6()) acceptor_.set_option(boost::asio::ip::v6_only(false));
  acceptor_.bind(at);
  acceptor_.listen();
  accept();
}

unsigned short Server::port() const { return acceptor_.local_endpoint().port(); }

void Server::stop_accepting() {
  boost::system::error_code ignored;
  acceptor_.close(ignored);
}

void Server::accept() {
  acceptor_.async_accept([this](boost::system::error_code ec, tcp::socket socket) {
    if (ec == boost::asio::error::operation_aborted) return;  // shutting down
    if (!ec) {
      if (*connections_ >= limits_.max_connections) {
        auto line = std::make_shared<std::string>(
            json_text(Dispatcher::error_response(ErrorCode::busy, "too many connections")) + "\n");
        auto sock = std::make_shared<tcp::socket>(std::move(socket));
        boost::asio::async_write(*sock, boost::asio::buffer(*line), [sock, line](boost::system::error_code, size_t) {
          boost::system::error_code ignored;
          sock->close(ignored);
        });
      } else {
        std::make_shared<Session>(std::move(socket), dispatcher_, store_, limits_, connections_, handlers_)->start();
      }
    }
    accept();
  });
}

}  // namespace godwit
