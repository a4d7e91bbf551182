// See serial_source.hpp. The stream_descriptor owns a dup() of the port's fd so
// that Asio and libserialport each close their own descriptor.
#include "serial_source.hpp"

#include <unistd.h>

#include <boost/asio/post.hpp>
#include <boost/asio/write.hpp>

namespace tensile::drivers {

namespace asio = boost::asio;

std::shared_ptr<SerialSource> SerialSource::create(asio::io_context& io, SerialSourceConfig cfg,
                                                   std::shared_ptr<spdlog::logger> log) {
    return std::shared_ptr<SerialSource>(new SerialSource(io, std::move(cfg), std::move(log)));
}

SerialSource::SerialSource(asio::io_context& io, SerialSourceConfig cfg, std::shared_ptr<spdlog::logger> log)
    : io_(io),
      cfg_(std::move(cfg)),
      keeper_(cfg_.name, std::move(log)),
      backoff_(cfg_.backoff, static_cast<std::uint32_t>(std::hash<std::string>{}(cfg_.path))),
      stream_(io),
      timer_(io),
      buf_(cfg_.read_chunk),
      sendq_(cfg_.max_send_queue) {}

void SerialSource::start(SourceHandlers handlers) {
    keeper_.set_handlers(std::move(handlers));
    running_ = true;
    hung_up_name_.reset();  // started afresh: the configured name is taken as given
    if (keeper_.state() == SourceState::stopped) keeper_.change(SourceState::connecting, "to " + cfg_.path);
    open();
}

void SerialSource::close_port() {
    boost::system::error_code ignored;
    stream_.close(ignored);
    handle_.close();
}

void SerialSource::stop() {
    running_ = false;
    ++generation_;
    timer_.cancel();
    close_port();
    sendq_.fail_all(io_, std::errc::operation_canceled);
    keeper_.change(SourceState::stopped, "");
}

void SerialSource::open() {
    ++generation_;
    if (hung_up_name_) {
        const PortName now = port_name(cfg_.path);
        if (!now.link || now == *hung_up_name_)
            return fail(cfg_.path + ": the pseudo-terminal hung up and is not reopened under the same name, which the "
                                    "next pty opened by any program may take; point the link at a new one or restart the source");
        hung_up_name_.reset();
    }
    std::string detail;
    if (const auto ec = handle_.open(cfg_.path, cfg_.settings, detail)) return fail(detail);
    opened_name_ = port_name(cfg_.path);
    const int fd = ::dup(handle_.fd());
    if (fd < 0) return fail("dup failed");
    boost::system::error_code ec;
    stream_.assign(fd, ec);
    if (ec) {
        ::close(fd);
        return fail("cannot watch the port: " + ec.message());
    }
    stream_.non_blocking(true, ec);
    backoff_.reset();
    keeper_.change(SourceState::connected,
                   cfg_.path + (handle_.via_termios() ? " (pseudo-terminal, termios)" : " (libserialport)"));
    read();
}

void SerialSource::read() {
    auto self = shared_from_this();
    const auto gen = generation_;
    stream_.async_read_some(asio::buffer(buf_), [this, self, gen](boost::system::error_code ec, std::size_t n) {
        if (gen != generation_) return;
        // A pty whose master closed reads EIO; a vanished USB port reads EIO or EOF.
        if (ec) return fail(ec == asio::error::eof ? std::string("end of file") : ec.message());
        keeper_.bytes(std::span<const std::byte>(buf_.data(), n));
        if (gen == generation_) read();
    });
}

void SerialSource::fail(const std::string& reason) {
    if (!running_) return;
    ++generation_;
    if (keeper_.state() == SourceState::connected && handle_.via_termios()) hung_up_name_ = opened_name_;
    close_port();
    sendq_.fail_all(io_, std::errc::not_connected);  // never replayed on a later connection
    keeper_.failed(reason);
    auto self = shared_from_this();
    const auto gen = generation_;
    after(timer_, backoff_.next(), [this, self, gen] {
        if (gen == generation_ && running_) open();
    });
}

void SerialSource::send(std::string bytes, SendDone done) {
    if (!sendq_.push(io_, keeper_.state() == SourceState::connected, std::move(bytes), std::move(done))) return;
    if (!sendq_.writing) write_next();
}

void SerialSource::write_next() {
    if (sendq_.empty()) return;
    sendq_.writing = true;
    auto self = shared_from_this();
    const auto gen = generation_;
    asio::async_write(stream_, asio::buffer(sendq_.front()), [this, self, gen](boost::system::error_code ec, std::size_t) {
        if (gen != generation_) return;
        sendq_.pop(ec ? std::error_code(ec.value(), std::system_category()) : std::error_code{});
        if (ec) return fail("write failed: " + ec.message());
        write_next();
    });
}

}  // namespace tensile::drivers
