// The replay mode of tensile-sim; see replay.hpp.
#include "replay.hpp"

#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <iostream>
#include <map>
#include <thread>

#include "daemon/storage/store.hpp"
#include "sinks.hpp"

namespace tensile::sim {

namespace {

constexpr int bad_input = 2;

int refuse(const std::string& message) {
    std::cerr << "tensile-sim replay: " << message << "\n";
    return bad_input;
}

struct Piece {
    double arrival_s;
    std::string bytes;
};

}  // namespace

int replay_main(int argc, char** argv) {
    CLI::App app{"tensile-sim replay: stream the raw bytes of a run stored by tensiled as a live device"};
    std::string db, tcp, out, source;
    std::int64_t run = 0;
    bool pty = false, fast = false;
    double speed = 1.0;
    app.add_option("--db", db, "the tensiled database (tensiled.db)")->required();
    app.add_option("--run", run, "the run id")->required()->check(CLI::PositiveNumber);
    app.add_option("--source", source, "which source of the run to stream (needed when the run has several)");
    auto* o_tcp = app.add_option("--tcp", tcp, "serve the stream to one TCP client on HOST:PORT (port 0: any free one)");
    auto* o_pty = app.add_flag("--pty", pty, "serve the stream on a pseudo-terminal; its path is the first line on stdout");
    auto* o_out = app.add_option("--out", out, "write the stream to FILE ('-' for stdout)");
    o_tcp->excludes(o_pty)->excludes(o_out);
    o_pty->excludes(o_out);
    auto* o_speed = app.add_option("--speed", speed, "original timing scaled: 2 = twice as fast")->check(CLI::Range(0.001, 1000.0));
    auto* o_fast = app.add_flag("--fast", fast, "no pauses: as fast as the reader takes it");
    o_fast->excludes(o_speed);
    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        if (e.get_exit_code() == 0) return app.exit(e);
        return refuse(std::string(e.what()) + " (see tensile-sim replay --help)");
    }
    if (tcp.empty() && !pty && out.empty()) return refuse("give where to send the stream: --tcp HOST:PORT, --pty or --out FILE");

    storage::OpenOptions open;
    open.create = false;
    auto store = storage::Store::open(db, open);
    if (!store) return refuse("--db: " + store.error());
    auto rec = store->load_run(run);
    if (!rec) return refuse("--run " + std::to_string(run) + ": " + rec.error());

    std::map<std::string, std::vector<Piece>> by_source;
    auto visited = store->for_each_raw_chunk(run, [&](const storage::RawChunk& chunk) {
        auto& list = by_source[chunk.source];
        std::size_t at = 0;
        for (const auto& a : chunk.arrivals) {
            list.push_back({a.time_s, chunk.bytes.substr(at, a.length)});
            at += a.length;
        }
    });
    if (!visited) return refuse("--db: reading the raw bytes of run " + std::to_string(run) + ": " + visited.error());
    if (by_source.empty())
        return refuse("run " + std::to_string(run) + " has no raw bytes stored (recorded before raw storage, or imported); nothing to replay");
    std::string names;
    for (const auto& [name, _] : by_source) names += (names.empty() ? "" : ", ") + name;
    if (source.empty()) {
        if (by_source.size() > 1) return refuse("run " + std::to_string(run) + " has several sources (" + names + "); choose one with --source");
        source = by_source.begin()->first;
    }
    auto it = by_source.find(source);
    if (it == by_source.end()) return refuse("--source '" + source + "': run " + std::to_string(run) + " has " + names);
    auto& pieces = it->second;
    // The reads of one source were stored in order; sort anyway, stably, in
    // case chunks were written out of order after a crash recovery.
    std::stable_sort(pieces.begin(), pieces.end(), [](const Piece& a, const Piece& b) { return a.arrival_s < b.arrival_s; });

    Result<std::unique_ptr<Sink>> sink = Error{"no output"};
    if (!tcp.empty()) sink = open_tcp_sink(tcp, std::cout);
    else if (pty) sink = open_pty_sink(std::cout);
    else sink = open_file_sink(out);
    if (!sink) return refuse(sink.error());
    std::cout << std::flush;
    Sink& s = **sink;
    if (!s.connect(true)) {
        std::cerr << "tensile-sim replay: no reader came\n";
        return 1;
    }

    // Pace from the first read: piece k goes out (arrival_k − arrival_0)/speed after the start.
    const auto start = std::chrono::steady_clock::now();
    const double first = pieces.front().arrival_s;
    for (const auto& p : pieces) {
        if (!fast) {
            const auto due = start + std::chrono::duration_cast<std::chrono::steady_clock::duration>(
                                         std::chrono::duration<double>((p.arrival_s - first) / speed));
            std::this_thread::sleep_until(due);
        }
        (void)s.poll();  // commands to a recording are read and dropped
        if (!s.write(p.bytes)) {
            std::cerr << "tensile-sim replay: the reader went away\n";
            return 1;
        }
    }
    // On a pty the kernel moves the last write to the reader's side a moment
    // later; the sink's finish() checks that side, so give it that moment
    // (else the tail can be lost when the pty closes).
    if (pty) std::this_thread::sleep_for(std::chrono::milliseconds(300));
    s.finish();
    return 0;
}

}  // namespace tensile::sim
