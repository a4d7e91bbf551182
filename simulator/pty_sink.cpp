// Pseudo-terminal sink: the simulator holds the master side and a reader opens
// /dev/pts/N as if it were a serial port. The slave side is opened here too and
// set raw (no echo, no CR/LF translation), and kept open so that the pty keeps
// its settings and a reader may close and reopen it (a reconnect). A
// disconnect fault on a pty is silence: a serial line has no connection to drop.
#include <cerrno>
#include <chrono>
#include <cstring>
#include <thread>

#include <fcntl.h>
#include <poll.h>
#include <stdlib.h>
#include <sys/ioctl.h>
#include <termios.h>
#include <unistd.h>

#include "sinks.hpp"

namespace tensile::sim {

namespace {

class PtySink final : public Sink {
public:
    PtySink(int master, int slave) : master_(master), slave_(slave) {}
    ~PtySink() override {
        ::close(slave_);
        ::close(master_);
    }

    bool write(std::string_view bytes) override {
        while (!bytes.empty()) {
            const ssize_t n = ::write(master_, bytes.data(), bytes.size());
            if (n < 0) {
                if (errno == EINTR) continue;
                return false;
            }
            bytes.remove_prefix(static_cast<std::size_t>(n));
        }
        return true;
    }

    std::string poll() override {
        std::string out;
        pollfd p{master_, POLLIN, 0};
        while (::poll(&p, 1, 0) > 0 && (p.revents & POLLIN)) {
            char buf[512];
            const ssize_t n = ::read(master_, buf, sizeof buf);
            if (n <= 0) break;
            out.append(buf, static_cast<std::size_t>(n));
        }
        return out;
    }

    void finish() override {
        // Give the reader up to 5 s to take what is still queued before the pty goes.
        for (int i = 0; i < 500; ++i) {
            int queued = 0;
            if (::ioctl(slave_, FIONREAD, &queued) != 0 || queued == 0) return;
            std::this_thread::sleep_for(std::chrono::milliseconds(10));
        }
    }

private:
    int master_;
    int slave_;
};

}  // namespace

Result<std::unique_ptr<Sink>> open_pty_sink(std::ostream& announce) {
    const int master = ::posix_openpt(O_RDWR | O_NOCTTY | O_CLOEXEC);
    if (master < 0) return Error{std::string("--pty: cannot open a pseudo-terminal: ") + std::strerror(errno)};
    if (::grantpt(master) != 0 || ::unlockpt(master) != 0) {
        const std::string why = std::strerror(errno);
        ::close(master);
        return Error{"--pty: cannot unlock the pseudo-terminal: " + why};
    }
    char name[128];
    if (::ptsname_r(master, name, sizeof name) != 0) {
        ::close(master);
        return Error{"--pty: cannot name the pseudo-terminal"};
    }
    const int slave = ::open(name, O_RDWR | O_NOCTTY | O_CLOEXEC);
    termios t{};
    if (slave < 0 || ::tcgetattr(slave, &t) != 0) {
        const std::string why = std::strerror(errno);
        if (slave >= 0) ::close(slave);
        ::close(master);
        return Error{"--pty: cannot open " + std::string(name) + ": " + why};
    }
    ::cfmakeraw(&t);
    ::tcsetattr(slave, TCSANOW, &t);
    announce << "pty " << name << std::endl;
    return std::unique_ptr<Sink>(std::make_unique<PtySink>(master, slave));
}

}  // namespace tensile::sim
