// Two devices, two clocks, two links, one truth: force at 1 kHz as delimited
// lines (64-bit µs clock running 80 ppm fast, 1 ms minimum latency) and
// extension at 500 Hz as binary frames (32-bit µs clock that wraps, 150 ppm
// slow, 4 ms minimum latency). Real wire bytes go through the real parsers,
// the time bases and the aligner; the frames must match the analytic signals
// at the true instants. The signals and rates are demo values of our own.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdio>
#include <random>
#include <string>

#include "drivers/aligner.hpp"
#include "drivers/crc16.hpp"
#include "drivers/parser_registry.hpp"
#include "drivers/time_base.hpp"

using namespace tensile::drivers;

namespace {

constexpr double t_start = 500.0;  // host time at which both devices start sampling
double force_truth(double t) { return 2000.0 + 300.0 * (t - t_start); }     // N
double ext_truth(double t) { return 0.5 * (t - t_start); }                  // mm, 0.5 mm/s

std::string binary_frame(std::uint16_t seq, std::uint32_t time_us, std::int32_t count) {
    std::string f = "\xA5\x5A";
    f.push_back(11);
    auto put = [&](std::uint64_t v, int n) {
        for (int i = 0; i < n; ++i) f.push_back(static_cast<char>((v >> (8 * i)) & 0xFF));
    };
    put(seq, 2);
    put(time_us, 4);
    f.push_back(1);
    put(static_cast<std::uint32_t>(count), 4);
    const auto crc = crc16_ccitt_false({reinterpret_cast<const std::uint8_t*>(f.data()) + 2, f.size() - 2});
    f.push_back(static_cast<char>(crc >> 8));
    f.push_back(static_cast<char>(crc & 0xFF));
    return f;
}

struct Delivery {
    double arrival;
    Role role;
    std::string bytes;
};

}  // namespace

TEST_CASE("alignment: two drifting devices on two links match the truth", "[aligner][timebase]") {
    const double duration = 40.0;
    std::mt19937 rng(11);
    std::vector<Delivery> deliveries;
    std::vector<double> force_instants;

    {  // Force device: lines, chunks of 8 readings.
        std::uniform_real_distribution<double> jitter(0.0, 0.003);
        const double drift = 80e-6;
        std::string chunk;
        char line[80];
        for (int k = 0; k < static_cast<int>(duration * 1000); ++k) {
            const double device_s = 3.0 + k * 1e-3;                      // device clock reading
            const double truth = t_start + k * 1e-3 / (1.0 + drift);     // host instant of reading k
            force_instants.push_back(truth);
            std::snprintf(line, sizeof line, "%llu,%.4f N\n", static_cast<unsigned long long>(std::llround(device_s * 1e6)),
                          force_truth(truth));
            chunk += line;
            if (k % 8 == 7) {
                deliveries.push_back({truth + 0.001 + jitter(rng), Role::force, chunk});
                chunk.clear();
            }
        }
    }
    {  // Extension device: binary frames, chunks of 20 frames, clock wraps 10 s in.
        std::uniform_real_distribution<double> jitter(0.0, 0.002);
        const double drift = -150e-6;
        std::string chunk;
        for (int k = 0; k < static_cast<int>(duration * 500); ++k) {
            const double device_s = 4294.967296 - 10.0 + k * 2e-3;
            const double truth = t_start + 0.0007 + k * 2e-3 / (1.0 + drift);
            const auto raw = static_cast<std::uint32_t>(std::llround(device_s * 1e6) & 0xFFFFFFFFll);
            chunk += binary_frame(static_cast<std::uint16_t>(k), raw, static_cast<std::int32_t>(std::llround(ext_truth(truth) / 1e-4)));
            if (k % 20 == 19) {
                deliveries.push_back({truth + 0.004 + jitter(rng), Role::extension, chunk});
                chunk.clear();
            }
        }
    }
    std::stable_sort(deliveries.begin(), deliveries.end(), [](const auto& a, const auto& b) { return a.arrival < b.arrival; });

    const auto formats = builtin_formats();
    FormatConfig fcfg;
    fcfg.time_field = 0;
    ChannelSpec fch;
    fch.name = "force";
    fch.field = 1;
    fcfg.channels = {fch};
    FormatConfig ecfg;
    ecfg.format = "binary";
    ChannelSpec ech;
    ech.name = "extension";
    ech.unit = tensile::LengthUnit::millimetre;
    ech.scale = 1e-4;
    ecfg.channels = {ech};
    auto fparser = formats.make(fcfg);
    auto eparser = formats.make(ecfg);
    TimeBase ftime({.latency_s = 0.001, .clock_bits = 64});
    TimeBase etime({.latency_s = 0.004, .clock_bits = 32});
    Aligner al(AlignerConfig{.fitted = {true, true, false}, .max_wait_s = 0.1});

    std::vector<AlignedFrame> frames;
    std::vector<Sample> batch;
    for (const auto& d : deliveries) {
        batch.clear();
        const bool is_force = d.role == Role::force;
        (is_force ? fparser : eparser)->feed(d.bytes, batch);
        (is_force ? ftime : etime).stamp(batch, d.arrival);
        for (const auto& s : batch) al.push(d.role, s.time_s, s.value, s.flags);
        al.drain(frames);
    }
    al.flush(frames);

    REQUIRE(frames.size() == force_instants.size());  // one frame per master reading, none invented or lost
    CHECK(eparser->counters().stream.lost_frames == 0);
    double worst_time = 0, worst_ext = 0;
    std::size_t checked = 0;
    for (std::size_t i = 0; i < frames.size(); ++i) {
        const double truth = force_instants[i];
        if (truth - t_start < 5.0 || truth - t_start > duration - 0.2) continue;  // warm-up of the drift fit, tail
        ++checked;
        worst_time = std::max(worst_time, std::abs(frames[i].frame.time_s - truth));
        worst_ext = std::max(worst_ext, std::abs(frames[i].frame.extension_mm - ext_truth(truth)));
        CHECK(frames[i].frame.force_N == Approx(force_truth(truth)).margin(1e-4));
    }
    CHECK(checked > 34000);
    // Time error: the minimum extra delay over each 1 s bucket, a few hundred µs at most.
    CHECK(worst_time < 300e-6);
    // 0.5 mm/s × (time error of both channels) + half a count (0.05 µm). Without the
    // latency correction the 3 ms difference between the links alone would give 1.5 µm.
    CHECK(worst_ext < 0.5 * 600e-6 + 0.5e-4);
}
