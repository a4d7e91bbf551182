// Where the byte stream goes: a file, stdout, a TCP client, or a pseudo-
// terminal acting as a serial port. Sinks only move bytes. A peer that goes
// away is reported by write() returning false, never by an exception; opening
// errors come back as an Error naming what could not be opened and why.
#pragma once

#include <memory>
#include <ostream>
#include <string>
#include <string_view>

#include "engine/result.hpp"

namespace tensile::sim {

class Sink {
public:
    virtual ~Sink() = default;
    // Writes all bytes (blocking); false when the peer has gone.
    virtual bool write(std::string_view bytes) = 0;
    // Bytes the peer has sent (commands), without blocking.
    virtual std::string poll() { return {}; }
    [[nodiscard]] virtual bool connected() const { return true; }
    // Gets a peer if there is none: waits for one when `wait`, else only looks.
    virtual bool connect(bool /*wait*/) { return true; }
    // Drops the current peer (the disconnect fault).
    virtual void drop() {}
    // End of the run: flush and give a reader the chance to take what is queued.
    virtual void finish() {}
};

// `option` names the command-line option in error messages; `label`, when not
// empty, follows the announcement after a space ("tcp 127.0.0.1:7701 force"),
// so a reader of several links knows which is which.
Result<std::unique_ptr<Sink>> open_file_sink(const std::string& path, const std::string& option = "--out");  // "-" is stdout
// Listens on HOST:PORT (port 0 picks a free one) and writes "tcp HOST:PORT" to announce.
Result<std::unique_ptr<Sink>> open_tcp_sink(const std::string& host_port, std::ostream& announce,
                                            const std::string& option = "--tcp", const std::string& label = "");
// Opens a pseudo-terminal in raw mode and writes "pty /dev/pts/N" to announce.
Result<std::unique_ptr<Sink>> open_pty_sink(std::ostream& announce, const std::string& option = "--pty",
                                            const std::string& label = "");

}  // namespace tensile::sim
