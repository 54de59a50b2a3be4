#include "record_client.h"

#include <utility>  // before Asio: Boost 1.74 awaitable.hpp uses std::exchange without it
#include <boost/asio.hpp>
#include <fstream>

#include "host_port.h"
#include "json_text.h"
#include "wire_code.h"

namespace godwit {

using boost::asio::ip::tcp;

struct RecordClient::Impl {
  boost::asio::io_context io;
  tcp::socket socket{io};
  boost::asio::streambuf buf;
};

RecordClient::RecordClient() : impl_(std::make_unique<Impl>()) {}
RecordClient::~RecordClient() = default;

Status RecordClient::open(const std::string& where) {
  std::string host;
  unsigned short port = 0;
  if (!split_host_port(where, host, port)) return Error{ErrorCode::usage, "--connect must be HOST:PORT", "", std::nullopt};
  try {
    tcp::resolver r(impl_->io);
    boost::asio::connect(impl_->socket, r.resolve(host, std::to_string(port)));
  } catch (const std::exception& e) {
    return Error{ProtocolCode::unavailable, "cannot connect to godwitd at " + where + ": " + e.what(), "", std::nullopt};
  }
  return ok_status();
}

Result<nlohmann::json> RecordClient::request(nlohmann::json req, const std::string& token) {
  if (!token.empty()) req["token"] = token;
  try {
    const std::string line = json_text(req) + "\n";
    boost::asio::write(impl_->socket, boost::asio::buffer(line));
    boost::asio::read_until(impl_->socket, impl_->buf, '\n');
    std::istream is(&impl_->buf);
    std::string reply;
    std::getline(is, reply);
    return nlohmann::json::parse(reply);
  } catch (const std::exception& e) {
    return Error{ProtocolCode::unavailable, std::string("connection lost: ") + e.what(), "", std::nullopt};
  }
}

Result<std::string> read_token_file(const std::string& path) {
  if (path.empty()) return std::string();
  std::ifstream in(path);
  if (!in) return Error{ErrorCode::unreadable, "cannot read the token file", path, std::nullopt};
  std::string t;
  std::getline(in, t);
  return t;
}

}  // namespace godwit
