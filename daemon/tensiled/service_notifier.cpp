// sd_notify for tensiled; see service_notifier.hpp.
#include "service_notifier.hpp"

#ifdef TENSILED_HAVE_SYSTEMD
#include <systemd/sd-daemon.h>
#endif

namespace tensile {

namespace {
void notify([[maybe_unused]] const char* state) {
#ifdef TENSILED_HAVE_SYSTEMD
    (void)sd_notify(0, state);
#endif
}
}  // namespace

ServiceNotifier::ServiceNotifier(boost::asio::io_context& io) : timer_(io) {
#ifdef TENSILED_HAVE_SYSTEMD
    std::uint64_t usec = 0;
    if (sd_watchdog_enabled(0, &usec) > 0 && usec > 0) interval_ = std::chrono::microseconds(usec);
#endif
}

void ServiceNotifier::ready() {
    notify("READY=1\nSTATUS=acquiring");
    if (interval_.count() > 0) ping();
}

void ServiceNotifier::reloading() { notify("RELOADING=1"); }

void ServiceNotifier::stopping() {
    stopped_ = true;
    timer_.cancel();
    notify("STOPPING=1");
}

// Pings from the event loop itself: only a loop that is turning keeps the daemon alive.
void ServiceNotifier::ping() {
    if (stopped_) return;
    notify("WATCHDOG=1");
    timer_.expires_after(interval_ / 2);
    timer_.async_wait([this](const boost::system::error_code& ec) {
        if (!ec) ping();
    });
}

}  // namespace tensile
