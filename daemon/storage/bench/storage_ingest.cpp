// Benchmark (never run by ctest): frames per second from the recorder's inbox
// into durable storage (synchronous = FULL, commits every 200 ms), and the
// stored size of the frames against sqlite3's plain CSV import of the same
// frames. Demo data from our own scenario: a 1 kHz-style text rig with values
// parsed from fixed decimals, noise, an extensometer removed half-way and a
// fracture. With `--raw`, each batch of frames also comes with its wire
// bytes (one text line per frame, as a delimited-lines device sends them),
// the way a live rig records them for re-parsing.
// Usage: storage_ingest [frames] [work-dir] [--raw]
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <span>
#include <string>
#include <thread>
#include <unistd.h>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/store.hpp"

using namespace tensile;
using namespace tensile::storage;

namespace {

std::vector<Frame> demo_frames(std::size_t n) {
    std::mt19937_64 rng(42);
    std::normal_distribution<double> noise(0.0, 1.0);
    std::vector<Frame> frames(n);
    char buf[64];
    auto fixed = [&](double v, int decimals) {
        std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
        return std::strtod(buf, nullptr);
    };
    const double duration = static_cast<double>(n) * 0.001;
    for (std::size_t i = 0; i < n; ++i) {
        const double t = static_cast<double>(i) * 0.001;
        const double crosshead = 0.05 * t;
        double force = 40000.0 * std::min(1.0, t / 20.0) * (1.0 - 0.2 * std::max(0.0, t / duration - 0.5)) + 3.0 * noise(rng);
        if (i > n * 9 / 10) force = 0.5 * noise(rng);
        frames[i] = Frame{fixed(t, 3), fixed(force, 2), i > n / 2 ? absent : fixed(0.8 * crosshead + 0.0002 * noise(rng), 4),
                          fixed(crosshead, 4)};
    }
    return frames;
}

std::int64_t scalar(Store& store, const char* sql) {
    auto stmt = store.db().prepare(sql);
    if (!stmt || !stmt->step().ok()) return -1;
    return stmt->int64(0);
}

// The wire bytes of frames [from, to): one line per frame, three fields.
std::string wire_lines(std::span<const Frame> frames) {
    std::string out;
    char buf[128];
    for (const Frame& f : frames) {
        const int len = std::snprintf(buf, sizeof buf, "%.3f;%.2f;%.4f\r\n", f.time_s, f.force_N,
                                      std::isnan(f.extension_mm) ? f.crosshead_mm : f.extension_mm);
        out.append(buf, static_cast<std::size_t>(len));
    }
    return out;
}

}  // namespace

int main(int argc, char** argv) {
    std::vector<std::string> args(argv + 1, argv + argc);
    const bool with_raw = std::erase(args, "--raw") > 0;
    const std::size_t n = !args.empty() ? std::strtoull(args[0].c_str(), nullptr, 10) : 2'000'000;
    const std::filesystem::path dir = args.size() > 1 ? std::filesystem::path(args[1]) : std::filesystem::temp_directory_path() / ("tensile-bench-" + std::to_string(::getpid()));
    std::filesystem::create_directories(dir);
    const std::string db = (dir / "runs.db").string();
    std::filesystem::remove(db);
    const auto frames = demo_frames(n);
    constexpr std::size_t batch_frames = 1024;
    std::vector<std::string> wire;  // made before the clock starts: the bench times the recorder, not printf
    if (with_raw)
        for (std::size_t pos = 0; pos < n; pos += batch_frames)
            wire.push_back(wire_lines(std::span<const Frame>(frames).subspan(pos, std::min(batch_frames, n - pos))));

    auto store = Store::open(db);
    if (!store) { std::fprintf(stderr, "%s\n", store.error().c_str()); return 1; }
    NewRun r;
    r.state = RunState::running;
    const auto run = *store->create_run(r);

    RecorderOptions opts;
    opts.path = db;
    opts.min_free_bytes = 0;
    auto rec = Recorder::start(opts);
    if (!rec) { std::fprintf(stderr, "%s\n", rec.error().c_str()); return 1; }
    (*rec)->begin_run(run);
    const auto t0 = std::chrono::steady_clock::now();
    // Push in acquisition-sized batches; when the inbox is full, wait and retry,
    // so the figure is the sustained rate with no frame lost.
    std::size_t pos = 0;
    std::uint64_t raw_bytes = 0;
    while (pos < n) {
        const std::size_t batch = std::min(batch_frames, n - pos);
        if ((*rec)->counters().frames_waiting + batch > opts.frame_capacity) {
            std::this_thread::yield();
            continue;
        }
        if (with_raw) {
            const std::string& bytes = wire[pos / batch_frames];
            const double arrival_s = frames[pos].time_s;
            while (!(*rec)->try_push_raw("force", bytes, arrival_s)) std::this_thread::yield();
            raw_bytes += bytes.size();
        }
        const std::size_t taken = (*rec)->try_push(std::span<const Frame>(frames).subspan(pos, batch));
        if (taken != batch) { std::fprintf(stderr, "frames refused after their raw bytes went in\n"); return 1; }
        pos += taken;
    }
    if (auto s = (*rec)->flush(); !s) { std::fprintf(stderr, "%s\n", s.error().c_str()); return 1; }
    const double secs = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    const auto c = (*rec)->counters();
    (*rec)->stop();

    (void)store->db().exec("PRAGMA wal_checkpoint(TRUNCATE)");  // size the main file with everything in it
    const std::int64_t blob_bytes = scalar(*store, "SELECT sum(length(data)) FROM frame_chunks");

    // The peer: sqlite3's own CSV import of the same frames, into a fresh file.
    const auto csv = dir / "frames.csv";
    {
        std::ofstream out(csv);
        out << "time_s,force_N,extension_mm,crosshead_mm\n";
        char buf[128];
        for (const Frame& f : frames) {
            auto cell = [&](double v) { return std::isnan(v) ? std::string() : (std::snprintf(buf, sizeof buf, "%.17g", v), std::string(buf)); };
            out << cell(f.time_s) << ',' << cell(f.force_N) << ',' << cell(f.extension_mm) << ',' << cell(f.crosshead_mm) << '\n';
        }
    }
    // %.17g can print more digits than the shortest round trip; also make a shortest-form CSV, the fairer peer.
    const auto csv_short = dir / "frames-short.csv";
    {
        std::ofstream out(csv_short);
        out << "time_s,force_N,extension_mm,crosshead_mm\n";
        char buf[64];
        for (const Frame& f : frames) {
            for (int k = 0; k < 4; ++k) {
                const double v = k == 0 ? f.time_s : k == 1 ? f.force_N : k == 2 ? f.extension_mm : f.crosshead_mm;
                if (k) out << ',';
                if (!std::isnan(v)) { auto res = std::to_chars(buf, buf + sizeof buf, v); out.write(buf, res.ptr - buf); }
            }
            out << '\n';
        }
    }
    auto import_size = [&](const std::filesystem::path& file, const char* name) -> std::uintmax_t {
        const auto peer = dir / (std::string(name) + ".db");
        std::filesystem::remove(peer);
        const std::string cmd = "sqlite3 -csv " + peer.string() + " '.import " + file.string() + " frames'";
        if (std::system(cmd.c_str()) != 0) return 0;
        return std::filesystem::file_size(peer);
    };
    const auto peer_17g = import_size(csv, "peer-17g");
    const auto peer_short = import_size(csv_short, "peer-short");
    const auto ours_file = std::filesystem::file_size(db);

    std::printf("frames                         %zu\n", n);
    std::printf("ingest into durable storage    %.0f frames/s (%.3f s; %llu committed, %llu dropped, %llu commits)\n",
                static_cast<double>(n) / secs, secs, static_cast<unsigned long long>(c.frames_committed),
                static_cast<unsigned long long>(c.frames_dropped), static_cast<unsigned long long>(c.commits));
    if (with_raw)
        std::printf("raw bytes                      %llu (%.1f bytes/frame; %llu written)\n",
                    static_cast<unsigned long long>(raw_bytes), static_cast<double>(raw_bytes) / static_cast<double>(n),
                    static_cast<unsigned long long>(c.raw_bytes_written));
    std::printf("frame BLOBs                    %lld bytes (%.2f bytes/frame)\n", static_cast<long long>(blob_bytes),
                static_cast<double>(blob_bytes) / static_cast<double>(n));
    std::printf("our database file              %ju bytes\n", ours_file);
    std::printf("sqlite3 CSV import, shortest   %ju bytes   ratio %.2fx (goal >= 3x)\n", peer_short,
                static_cast<double>(peer_short) / static_cast<double>(ours_file));
    std::printf("sqlite3 CSV import, %%.17g      %ju bytes   ratio %.2fx\n", peer_17g,
                static_cast<double>(peer_17g) / static_cast<double>(ours_file));
    std::filesystem::remove_all(dir);
    return 0;
}
