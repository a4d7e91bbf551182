// The live feed's broadcast point; see live_hub.hpp.
#include "live_hub.hpp"

#include <algorithm>

namespace tensile::monitor {

void LiveHub::prune() {
    std::erase_if(clients_, [](const auto& w) { return w.expired(); });
}

bool LiveHub::join(const std::shared_ptr<LiveClient>& client) {
    prune();
    if (clients_.size() >= max_clients) return false;
    clients_.push_back(client);
    return true;
}

void LiveHub::broadcast(const Message& message) {
    ++messages_;
    bool any_gone = false;
    // Copy the list: a delivery may drop a session, which must not disturb the loop.
    const auto list = clients_;
    for (const auto& w : list) {
        if (auto c = w.lock()) {
            if (!c->deliver(message)) any_gone = true;
        } else {
            any_gone = true;
        }
    }
    if (any_gone) prune();
}

void LiveHub::check_stalls(double now_s) {
    const auto list = clients_;
    for (const auto& w : list)
        if (auto c = w.lock()) c->check_stall(now_s);
    prune();
}

std::size_t LiveHub::clients() {
    prune();
    return clients_.size();
}

}  // namespace tensile::monitor
