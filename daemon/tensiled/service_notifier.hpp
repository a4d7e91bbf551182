// Tells systemd how the daemon is doing (sd_notify): ready once the rig and
// monitor are up, a watchdog ping at half the unit's WatchdogSec from the
// daemon's own event loop (so a loop that hangs stops the pings and systemd
// restarts the daemon), reloading around SIGHUP, and stopping on the way out.
//
// Built against libsystemd when it is present; without it, or when the
// daemon was not started by systemd (no NOTIFY_SOCKET), every call does
// nothing. Never throws; a failed notification is not worth stopping a run.
#pragma once

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <chrono>

namespace tensile {

class ServiceNotifier {
public:
    explicit ServiceNotifier(boost::asio::io_context& io);

    void ready();
    void reloading();
    void stopping();

    // The watchdog interval systemd asked for, zero when none.
    [[nodiscard]] std::chrono::microseconds watchdog_interval() const { return interval_; }

private:
    void ping();

    boost::asio::steady_timer timer_;
    std::chrono::microseconds interval_{0};
    bool stopped_ = false;
};

}  // namespace tensile
