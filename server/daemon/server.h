// Server: the TCP side of godwitd (Boost.Asio, one I/O thread).
//
//   Acceptor  accepts connections; over max_connections, or over
//             max_connections_per_address from one address, it answers one
//             `busy` line and closes.
//   Session   one per connection: reads bytes into a LineFramer, hands
//             each line to the Dispatcher on a request thread (never on
//             the I/O thread, which reads, frames and writes but parses
//             nothing: a submit opens files and fsyncs; one line at a
//             time, reading paused meanwhile) and queues the response;
//             a write loop sends queued lines in order. Deadlines:
//               idle  no request line (empty lines do not count) for
//                     idle_timeout_s after the last answer -> closed
//                     (not while watching)
//               read  a started line not finished within read_timeout_s -> closed
//                     (a line over max_line_bytes too: answered too_large
//                     at once, closed if its rest is still coming then)
//               write an answer or event not taken for idle_timeout_s -> closed
//             An answer over max_reply_bytes is replaced by a `too_large`
//             error; a client that does not read (write queue over
//             max_reply_bytes + 1 MiB) is closed. `watch` subscribes the
//             session to job events, posted from worker threads onto the
//             I/O thread, and a heartbeat event every watch_heartbeat_s
//             (with TCP keepalive, a vanished watcher is found out).
//
//   Request threads: two FairPools (fair_pool.h), each taking first the
//   lines of the address that used the least CPU there recently:
//     requests  4 threads at the daemon's priority, for lines up to
//               heavy_line_bytes (every request but a long one)
//     heavy     2 threads at heavy_nice below it (`gw-heavy`), for longer
//               lines (inline spots, or a client's megabytes to parse):
//               their parse waits while short requests want a core, and
//               never holds a thread short requests need.
//   A line past heavy_read_bytes is read 256 KiB at a time (else 8 KiB).
//
//   read loop --bytes--> framer --line--> post(requests|heavy): dispatcher --json--> post(io) --> write queue --> write loop
//   worker threads --event--> post(io) --> write queue
#pragma once

#include <utility>  // before Asio: Boost 1.74 awaitable.hpp uses std::exchange without it
#include <boost/asio.hpp>
#include <memory>
#include <string>

#include "dispatcher.h"
#include "fair_pool.h"

namespace godwit {

struct ServerLimits {
  size_t max_line_bytes = 24u << 20;  // room for one inline spot of max_inline_mb in base64
  size_t max_connections = 256;
  double idle_timeout_s = 300;
  double read_timeout_s = 10;
  size_t max_connections_per_address = 64;
  size_t max_reply_bytes = 32u << 20;
  double watch_heartbeat_s = 30;
  size_t heavy_line_bytes = 1u << 20;  // longer request lines are handled on the heavy threads
  size_t heavy_read_bytes = 256u << 10;  // a line longer is read 256 KiB at a time
  int heavy_nice = 5;                  // added to the heavy threads' nice value: below requests, above jobs (job_nice 10)
  bool idle_class = false;             // the heavy threads in Linux's idle class (job_priority.h; config idle_class)
};

struct ConnectionCounts;

class Server {
 public:
  Server(boost::asio::io_context& io, const boost::asio::ip::tcp::endpoint& at, Dispatcher& dispatcher,
         JobStore& store, ServerLimits limits);
  // The bound port (useful with port 0).
  unsigned short port() const;
  void stop_accepting();
  size_t connections() const;

 private:
  void accept();
  boost::asio::ip::tcp::acceptor acceptor_;
  Dispatcher& dispatcher_;
  JobStore& store_;
  ServerLimits limits_;
  std::shared_ptr<ConnectionCounts> counts_;
  // Run Dispatcher::handle; joined on destruction (declared last: first to go).
  FairPool requests_;
  FairPool heavy_;
};

}  // namespace godwit
