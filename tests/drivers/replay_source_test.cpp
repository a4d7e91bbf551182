// Capture files and the replay source: round trip, timing, torn tails.
#include <catch2/catch.hpp>

#include <chrono>
#include <filesystem>
#include <fstream>

#include <boost/asio/io_context.hpp>

#include "drivers/replay_source.hpp"

using namespace tensile::drivers;

namespace {

std::string temp_path(const std::string& leaf) {
    return (std::filesystem::temp_directory_path() / ("tensiled-drv-" + std::to_string(::getpid()) + "-" + leaf)).string();
}

std::span<const std::byte> bytes_of(const std::string& s) { return std::as_bytes(std::span<const char>(s.data(), s.size())); }

const std::vector<std::pair<double, std::string>> records = {
    {0.0, "1,1 N\n"}, {0.1, "2,2 N\n3,3"}, {0.25, " N\n"}};

std::string write_capture(const std::string& leaf) {
    const auto path = temp_path(leaf);
    CaptureWriter w;
    REQUIRE_FALSE(w.open(path));
    for (const auto& [t, s] : records) REQUIRE_FALSE(w.write(bytes_of(s), t));
    w.close();
    return path;
}

struct Replayed {
    std::string bytes;
    std::vector<double> times;
    std::vector<SourceState> states;
    double elapsed = 0;
};

Replayed replay(ReplaySourceConfig cfg) {
    boost::asio::io_context io;
    auto src = ReplaySource::create(io, cfg);
    Replayed r;
    // From before start(): start() already schedules the timed records, so a
    // clock read after it (late on a loaded machine) would shorten the span.
    const auto t0 = std::chrono::steady_clock::now();
    src->start({[&](std::span<const std::byte> b, double t) {
                    r.bytes.append(reinterpret_cast<const char*>(b.data()), b.size());
                    r.times.push_back(t);
                },
                [&](SourceState s) { r.states.push_back(s); }, nullptr});
    io.run_for(std::chrono::seconds(3));
    r.elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    return r;
}

}  // namespace

TEST_CASE("replay: as fast as possible gives the bytes and the recorded times", "[replay][source]") {
    const auto path = write_capture("fast.cap");
    const auto r = replay({"rec", path, false, 1.0, 100.0});
    CHECK(r.bytes == "1,1 N\n2,2 N\n3,3 N\n");
    CHECK(r.times == std::vector<double>{100.0, 100.1, 100.25});
    CHECK(r.states == std::vector<SourceState>{SourceState::connected, SourceState::finished});
    CHECK(r.elapsed < 0.25);  // no waiting for the 0.25 s the capture spans (generous: CI machines are loaded)
    std::filesystem::remove(path);
}

TEST_CASE("replay: original timing keeps the gaps between records", "[replay][source]") {
    const auto path = write_capture("timed.cap");
    const auto r = replay({"rec", path, true, 1.0, 0.0});
    CHECK(r.bytes == "1,1 N\n2,2 N\n3,3 N\n");
    CHECK(r.elapsed >= 0.25);
    const auto r2 = replay({"rec", path, true, 5.0, 0.0});  // five times faster
    CHECK(r2.elapsed >= 0.05);
    CHECK(r2.elapsed < r.elapsed);  // faster than original timing; loose on purpose: CI machines are loaded
    std::filesystem::remove(path);
}

TEST_CASE("replay: a torn tail is skipped, a foreign file is refused", "[replay][source]") {
    const auto path = write_capture("torn.cap");
    std::filesystem::resize_file(path, std::filesystem::file_size(path) - 2);
    const auto r = replay({"rec", path, false, 1.0, 0.0});
    CHECK(r.bytes == "1,1 N\n2,2 N\n3,3");
    CHECK(r.states.back() == SourceState::finished);

    std::ofstream(path, std::ios::binary) << "time,force\n1,2\n";
    const auto r2 = replay({"rec", path, false, 1.0, 0.0});
    CHECK(r2.bytes.empty());
    CHECK(r2.states == std::vector<SourceState>{SourceState::finished});
    std::filesystem::remove(path);
}
