// Test helper for crash recovery: opens the database as the daemon does at
// start (closing runs left open), starts a run, and records frames paced by
// the wall clock, with raw bytes and the odd event, until it is killed.
// Frame time_s is wall-clock Unix time, so the test can tell how much was
// lost. Prints "run <id>" once recording is under way. Exits by itself after
// 20 s so a lost test never leaves it running.
#include <chrono>
#include <cstdio>
#include <string>
#include <thread>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/store.hpp"

using namespace tensile;
using namespace tensile::storage;

namespace {
double unix_now() {
    return std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}
}  // namespace

int main(int argc, char** argv) {
    if (argc != 2) {
        std::fprintf(stderr, "usage: storage_crash_helper DB\n");
        return 2;
    }
    const std::string path = argv[1];
    auto store = Store::open(path, {.durability = Durability::process_safe});
    if (!store) { std::fprintf(stderr, "%s\n", store.error().c_str()); return 1; }
    if (auto n = store->recover_interrupted_runs(unix_now()); !n) { std::fprintf(stderr, "%s\n", n.error().c_str()); return 1; }
    NewRun r;
    r.material = "demo S355";
    r.state = RunState::running;
    r.created_unix_s = unix_now();
    auto run = store->create_run(r);
    if (!run) { std::fprintf(stderr, "%s\n", run.error().c_str()); return 1; }

    RecorderOptions opts;
    opts.path = path;
    opts.open.durability = Durability::process_safe;  // kill -9 is what this tests; FULL adds only power-cut safety
    opts.min_free_bytes = 0;
    auto rec = Recorder::start(opts);
    if (!rec) { std::fprintf(stderr, "%s\n", rec.error().c_str()); return 1; }
    (*rec)->begin_run(*run);

    // 5 kHz, pushed every millisecond in small batches, as acquisition would.
    constexpr double rate = 5000.0;
    const double start = unix_now();
    std::uint64_t pushed = 0;
    bool announced = false;
    std::vector<Frame> batch;
    while (unix_now() - start < 20.0) {
        const double now = unix_now();
        const auto due = static_cast<std::uint64_t>((now - start) * rate);
        batch.clear();
        for (; pushed < due; ++pushed) {
            const auto k = static_cast<double>(pushed);
            batch.push_back(Frame{now, 10.0 * k, pushed % 1000 < 50 ? absent : k * 1e-4, k * 2e-4});
        }
        (*rec)->try_push(batch);
        const std::string line = std::to_string(pushed) + "," + std::to_string(10 * pushed) + " N\n";
        (*rec)->try_push_raw("load-cell", line, now - start);
        if (pushed % 2000 < batch.size()) (*rec)->try_push_event(Event{EventKind::rate_in_range, now, pushed, 0, 0, 0, "rate"});
        if (!announced && pushed > 0) {
            std::printf("run %lld\n", static_cast<long long>(*run));
            std::fflush(stdout);
            announced = true;
        }
        std::this_thread::sleep_for(std::chrono::milliseconds(1));
    }
    return 0;
}
