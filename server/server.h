// Server: the TCP side of godwitd (Boost.Asio, one I/O thread).
//
//   Acceptor  accepts connections; over max_connections, it answers one
//             error line and closes.
//   Session   one per connection: reads bytes into a LineFramer, hands
//             each line to the Dispatcher on a handler thread (never on
//             the I/O thread: a submit opens files and fsyncs; one line at
//             a time, reading paused meanwhile) and queues the response;
//             a write loop sends queued lines in order. Deadlines:
//               idle  no bytes at all for idle_timeout_s -> closed
//               read  a started line not finished within read_timeout_s -> closed
//             A client that does not read (write queue over 8 MiB) is closed.
//             `watch` subscribes the session to job events; events are
//             posted from worker threads onto the I/O thread.
//
//   read loop --bytes--> framer --line--> post(handlers): dispatcher --json--> post(io) --> write queue --> write loop
//   worker threads --event--> post(io) --> write queue
#pragma once

#include <utility>  // before Asio: Boost 1.74 awaitable.hpp uses std::exchange without it
#include <boost/asio.hpp>
#include <memory>
#include <string>

#include "dispatcher.h"

namespace godwit {

struct ServerLimits {
  size_t max_line_bytes = 24u << 20;  // room for one inline spot of max_inline_mb in base64
  size_t max_connections = 64;
  double idle_timeout_s = 300;
  double read_timeout_s = 10;
};

class Server {
 public:
  Server(boost::asio::io_context& io, const boost::asio::ip::tcp::endpoint& at, Dispatcher& dispatcher,
         JobStore& store, ServerLimits limits);
  // The bound port (useful with port 0).
  unsigned short port() const;
  void stop_accepting();
  size_t connections() const { return *connections_; }

 private:
  void accept();
  boost::asio::io_context& io_;
  boost::asio::ip::tcp::acceptor acceptor_;
  Dispatcher& dispatcher_;
  JobStore& store_;
  ServerLimits limits_;
  std::shared_ptr<size_t> connections_ = std::make_shared<size_t>(0);
  boost::asio::thread_pool handlers_{4};  // runs Dispatcher::handle; joined on destruction
};

}  // namespace godwit
