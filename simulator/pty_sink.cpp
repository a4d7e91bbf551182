// Pseudo-terminal sink: the simulator holds the master side and a reader opens
// /dev/pts/N as if it were a serial port. The slave side is opened here too and
// set raw (no echo, no CR/LF translation), and kept open so that the pty keeps
// its settings and a reader may close and reopen it (a reconnect). A
// disconnect fault on a pty is silence: a serial line has no connection to drop.
#include <cerrno>
#include <cstdio>
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

    // Drains before the pty may close: closing the master hangs the slave up
    // and throws away whatever the reader has not taken yet. FIONREAD on the
    // slave counts only the line discipline's buffer (4 KiB), not the bytes
    // still waiting in the tty layer behind it, so it reads 0 for a moment
    // each time the reader empties that buffer while the rest is on its way.
    // Only a queue that stays empty for `settle` counts as drained. A slow
    // reader keeps that buffer full while it reads, so progress cannot be
    // seen in it: `give_up` (counted from the last change of the queue) is
    // long enough for a 9600-baud reader to take the ~18 KB a pty holds;
    // after it the sink closes anyway and says so on stderr.
    void finish() override {
        using namespace std::chrono;
        constexpr milliseconds settle(100), give_up(30000), step(5);
        auto progress_at = steady_clock::now();  // last time the queue changed
        auto empty_since = progress_at;
        int last_queued = -1;
        for (;;) {
            int queued = 0;
            if (::ioctl(slave_, FIONREAD, &queued) != 0) return;
            const auto now = steady_clock::now();
            if (queued != last_queued) {
                progress_at = now;
                if (queued == 0) empty_since = now;
                last_queued = queued;
            }
            if (queued == 0 && now - empty_since >= settle) return;
            if (queued > 0 && now - progress_at >= give_up) {
                std::fprintf(stderr, "tensile-sim: pty: the reader took nothing for %lld s; closing with %d bytes or more unread\n",
                             static_cast<long long>(duration_cast<seconds>(give_up).count()), queued);
                return;
            }
            std::this_thread::sleep_for(step);
        }
    }

private:
    int master_;
    int slave_;
};

}  // namespace

Result<std::unique_ptr<Sink>> open_pty_sink(std::ostream& announce, const std::string& option, const std::string& label) {
    const int master = ::posix_openpt(O_RDWR | O_NOCTTY | O_CLOEXEC);
    if (master < 0) return Error{std::string(option + ": cannot open a pseudo-terminal: ") + std::strerror(errno)};
    if (::grantpt(master) != 0 || ::unlockpt(master) != 0) {
        const std::string why = std::strerror(errno);
        ::close(master);
        return Error{option + ": cannot unlock the pseudo-terminal: " + why};
    }
    char name[128];
    if (::ptsname_r(master, name, sizeof name) != 0) {
        ::close(master);
        return Error{option + ": cannot name the pseudo-terminal"};
    }
    const int slave = ::open(name, O_RDWR | O_NOCTTY | O_CLOEXEC);
    termios t{};
    if (slave < 0 || ::tcgetattr(slave, &t) != 0) {
        const std::string why = std::strerror(errno);
        if (slave >= 0) ::close(slave);
        ::close(master);
        return Error{option + ": cannot open " + std::string(name) + ": " + why};
    }
    ::cfmakeraw(&t);
    ::tcsetattr(slave, TCSANOW, &t);
    announce << "pty " << name << (label.empty() ? "" : " ") << label << std::endl;
    return std::unique_ptr<Sink>(std::make_unique<PtySink>(master, slave));
}

}  // namespace tensile::sim
