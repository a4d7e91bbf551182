// A rig on a pseudo-terminal for the monitor's tests: tensiled opens the pty's
// far end as a serial port and reads `time_us,force,extension,crosshead`
// lines at 1 kHz (format "lines" of drivers/wire-formats.md) carrying values
// the test sets, and the commands it writes are answered `#ok <word>` as the
// protocol says, or refused (`#error ...`) or ignored when the test asks.
// Test-only: the values are set by the test, so every check compares with a
// number the test itself put on the wire.
//
// Error policy: a pty that cannot be opened fails the constructor
// (std::runtime_error); bytes the daemon does not read in time are dropped
// beyond 64 KiB (never happens at 1 kHz).
#pragma once

#include <atomic>
#include <cerrno>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fcntl.h>
#include <mutex>
#include <poll.h>
#include <set>
#include <stdexcept>
#include <string>
#include <thread>
#include <unistd.h>
#include <vector>

namespace tensile::testing {

class FakeRig {
public:
    FakeRig() {
        master_ = ::posix_openpt(O_RDWR | O_NOCTTY | O_NONBLOCK);
        if (master_ < 0 || ::grantpt(master_) != 0 || ::unlockpt(master_) != 0)
            throw std::runtime_error("fake rig: cannot open a pseudo-terminal");
        path_ = ::ptsname(master_);
        thread_ = std::thread([this] { loop(); });
    }
    ~FakeRig() {
        stop_ = true;
        thread_.join();
        ::close(master_);
    }
    FakeRig(const FakeRig&) = delete;
    FakeRig& operator=(const FakeRig&) = delete;

    [[nodiscard]] const std::string& path() const { return path_; }
    // Lines flow only once the daemon has the port open (streaming = true), so
    // nothing stale waits in the pty for it.
    std::atomic<bool> streaming{false};
    std::atomic<double> force_N{0}, extension_mm{0}, crosshead_mm{0};

    void refuse(const std::string& word) {
        std::lock_guard lock(m_);
        refused_.insert(word);
    }
    void ignore(const std::string& word) {
        std::lock_guard lock(m_);
        ignored_.insert(word);
    }
    void answer_all() {
        std::lock_guard lock(m_);
        refused_.clear();
        ignored_.clear();
    }
    [[nodiscard]] std::vector<std::string> received() const {
        std::lock_guard lock(m_);
        return received_;
    }
    [[nodiscard]] std::size_t count(const std::string& word) const {
        std::size_t n = 0;
        for (const auto& r : received()) n += r == word;
        return n;
    }

private:
    void loop() {
        const auto t0 = std::chrono::steady_clock::now();
        long long written_us = 0;  // device time of the last line written
        std::string out, in;
        while (!stop_) {
            ::poll(nullptr, 0, 2);
            const auto now_us = std::chrono::duration_cast<std::chrono::microseconds>(std::chrono::steady_clock::now() - t0).count();
            if (!streaming) {
                written_us = now_us;
            } else {
                char line[128];
                for (; written_us + 1000 <= now_us; written_us += 1000) {
                    std::snprintf(line, sizeof line, "%lld,%.3f,%.5f,%.4f\n", written_us + 1000, force_N.load(),
                                  extension_mm.load(), crosshead_mm.load());
                    out += line;
                }
            }
            read_commands(in, out);
            if (out.size() > 65536) out.clear();
            while (!out.empty()) {
                const auto n = ::write(master_, out.data(), out.size());
                if (n <= 0) break;  // EAGAIN: the daemon is not reading yet
                out.erase(0, static_cast<std::size_t>(n));
            }
        }
    }

    void read_commands(std::string& in, std::string& out) {
        char buf[512];
        for (;;) {
            const auto n = ::read(master_, buf, sizeof buf);
            if (n <= 0) break;  // EAGAIN, or EIO while the far end is closed
            in.append(buf, static_cast<std::size_t>(n));
        }
        for (auto end = in.find('\n'); end != std::string::npos; end = in.find('\n')) {
            std::string word = in.substr(0, end);
            in.erase(0, end + 1);
            if (!word.empty() && word.back() == '\r') word.pop_back();
            if (word.empty()) continue;
            std::lock_guard lock(m_);
            received_.push_back(word);
            if (ignored_.count(word)) continue;
            out += refused_.count(word) ? "#error " + word + " refused by the test rig\n" : "#ok " + word + "\n";
        }
    }

    int master_ = -1;
    std::string path_;
    std::atomic<bool> stop_{false};
    mutable std::mutex m_;
    std::set<std::string> refused_, ignored_;
    std::vector<std::string> received_;
    std::thread thread_;
};

}  // namespace tensile::testing
