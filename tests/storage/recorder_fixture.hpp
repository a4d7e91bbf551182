// What the recorder tests share: a stored run to record into, frames whose
// values tell their index (force = 5·k N), and recorder options for tests.
// Test-only.
#pragma once

#include <catch2/catch.hpp>

#include <string>
#include <vector>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/store.hpp"

namespace tensile::testing {

inline std::int64_t new_run(const std::string& path) {
    auto store = storage::Store::open(path);
    REQUIRE(store.ok());
    storage::NewRun r;
    r.material = "S355";
    r.state = storage::RunState::running;
    auto id = store->create_run(r);
    REQUIRE(id.ok());
    return *id;
}

inline std::vector<Frame> frames_from(std::size_t first, std::size_t n) {
    std::vector<Frame> f(n);
    for (std::size_t i = 0; i < n; ++i) {
        const auto k = static_cast<double>(first + i);
        f[i] = Frame{k * 0.001, 5.0 * k, k * 1e-4, k * 2e-4};
    }
    return f;
}

inline storage::RecorderOptions options_for(const std::string& path) {
    storage::RecorderOptions o;
    o.path = path;
    o.open.durability = storage::Durability::process_safe;  // tests need no power-cut safety
    o.min_free_bytes = 0;
    return o;
}

}  // namespace tensile::testing
