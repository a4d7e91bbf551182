// Load: twenty monitoring clients (each a WebSocket live feed and a status
// poll every half second) and one stalled client that never reads, while the
// demo's simulator streams 10,000 frames/s (--demo-speed 10; the simulator
// samples at 1 kHz of its own clock) through the real drivers. Checks that
// acquisition loses nothing — every line the simulator says it sent (its
// truth file) was parsed and became a frame, none was bad, the recorder
// dropped nothing and stored every frame of the run — that every reading
// client kept getting updates, and that the stalled client was dropped.
#include <catch2/catch.hpp>

#include <atomic>
#include <nlohmann/json.hpp>

#include "daemon_fixture.hpp"

using namespace tensile::testing;
using nlohmann::json;
namespace beast = boost::beast;
namespace websocket = beast::websocket;

namespace {

double metric(const std::string& text, const std::string& name) {
    const auto at = text.find("\n" + name + " ");
    if (at == std::string::npos) return -1;
    return std::stod(text.substr(at + name.size() + 2));
}

// One reading client: counts `points` messages and notes whether its feed ended.
struct Reader {
    explicit Reader(boost::asio::io_context& io) : ws(io) {}
    websocket::stream<beast::tcp_stream> ws;
    beast::flat_buffer buf;
    std::atomic<int> points{0}, messages{0};
    std::atomic<bool> closed{false};
    void read() {
        ws.async_read(buf, [this](beast::error_code ec, std::size_t) {
            if (ec) {
                closed = true;
                return;
            }
            ++messages;
            if (beast::buffers_to_string(buf.data()).find("\"type\":\"points\"") != std::string::npos) ++points;
            buf.consume(buf.size());
            read();
        });
    }
};

}  // namespace

TEST_CASE("twenty monitoring clients and a stalled one during a 10 kHz run") {
    const auto dir = temp_dir("tensiled-load");
    const auto t0 = std::chrono::steady_clock::now();
    Daemon d({"--demo", "--demo-speed", "10", "--demo-data", dir.string(), "--monitor-port", "0"}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;

    // The stalled client: a tiny receive buffer, and it never reads.
    boost::asio::io_context stalled_io;
    websocket::stream<beast::tcp_stream> stalled(stalled_io);
    {
        auto& s = beast::get_lowest_layer(stalled).socket();
        s.open(boost::asio::ip::tcp::v4());
        s.set_option(boost::asio::socket_base::receive_buffer_size(2048));
        s.connect({boost::asio::ip::address_v4::loopback(), p});
        stalled.handshake("127.0.0.1", "/api/v1/live");
    }

    constexpr int clients = 20;
    boost::asio::io_context io;
    std::vector<std::unique_ptr<Reader>> readers;
    for (int i = 0; i < clients; ++i) {
        auto r = std::make_unique<Reader>(io);
        beast::get_lowest_layer(r->ws).connect({boost::asio::ip::address_v4::loopback(), p});
        r->ws.handshake("127.0.0.1", "/api/v1/live");
        r->read();
        readers.push_back(std::move(r));
    }
    std::thread feed_thread([&] { io.run(); });

    // Each client also polls the status every 0.5 s: one poll every 25 ms in turn.
    std::atomic<bool> polling{true};
    std::atomic<int> polls{0}, poll_failures{0};
    std::atomic<double> slowest_poll_s{0}, fastest_frames_per_s{0};
    std::thread poller([&] {
        while (polling) {
            const auto start = std::chrono::steady_clock::now();
            try {
                const auto a = http(p, "GET", "/api/v1/status");
                const auto j = json::parse(a.body, nullptr, false);
                if (a.status != 200 || !j.contains("state")) ++poll_failures;
                else if (const double fps = j["acquisition"]["frames_per_s"].get<double>(); fps > fastest_frames_per_s)
                    fastest_frames_per_s = fps;
            } catch (const std::exception&) {
                ++poll_failures;
            }
            const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
            if (took > slowest_poll_s) slowest_poll_s = took;
            ++polls;
            std::this_thread::sleep_for(std::chrono::milliseconds(25));
        }
    });

    // The first specimen runs to its end and its simulator finishes its stream.
    const bool finished =
        wait_for([&] { return json::parse(http(p, "GET", "/api/v1/runs?state=finished").body)["count"] >= 1; }, 45);
    const bool sim_done = wait_for([&] { return std::filesystem::exists(dir / "demo-truth-1.json"); }, 5) &&
                          wait_for([&] { return json::parse(http(p, "GET", "/api/v1/status").body)["sources"][0]["state"] != "connected"; }, 5);
    const auto status = json::parse(http(p, "GET", "/api/v1/status").body);
    const auto metrics = http(p, "GET", "/metrics").body;
    polling = false;
    poller.join();
    const double run_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    WARN("load run took " << run_s << " s; " << polls << " status polls, slowest " << slowest_poll_s << " s");
    REQUIRE(finished);
    REQUIRE(sim_done);

    // Nothing lost on the way in: every line the simulator sent was parsed,
    // none was bad, and each became one aligned frame (one source).
    std::ifstream truth_file(dir / "demo-truth-1.json");
    const auto truth = json::parse(truth_file);
    const auto sent = truth["run"]["samples"].get<std::uint64_t>();
    const auto& src = status["sources"][0];
    INFO("simulator sent " << sent << " lines at " << truth["run"]["rate_hz"] << " Hz of its clock");
    CHECK(sent > 10000);
    WARN("simulator sent " << sent << " lines; acquisition peaked at " << fastest_frames_per_s << " frames/s");
    // The demo streams at 10 kHz (1 kHz of simulated time at 10× pace): not a
    // timing goal, a check that the load really was there.
    CHECK(fastest_frames_per_s > 8000);
    CHECK(src["records"].get<std::uint64_t>() == sent);
    CHECK(src["bad_records"] == 0);
    CHECK(src["resync_bytes"] == 0);
    CHECK(src["lost_frames"] == 0);
    CHECK(status["acquisition"]["frames"].get<std::uint64_t>() == sent);
    // Nothing lost on the way to the disk: every frame the run queued is
    // committed and stored with the run.
    CHECK(status["recorder"]["frames_dropped"] == 0);
    CHECK(status["recorder"]["messages_dropped"] == 0);
    CHECK(status["recorder"]["frames_refused_disk"] == 0);
    const auto run = json::parse(http(p, "GET", "/api/v1/runs/1").body);
    CHECK(run["frame_count"].get<std::uint64_t>() == status["recorder"]["frames_queued"].get<std::uint64_t>());
    CHECK(run["frame_count"].get<std::uint64_t>() == status["recorder"]["frames_committed"].get<std::uint64_t>());
    CHECK(run["frame_count"].get<std::uint64_t>() > sent / 2);

    // Every reading client kept up and stayed connected; the stalled one was dropped.
    CHECK(metric(metrics, "tensiled_live_clients_dropped_total") >= 1);
    int least = 1 << 30;
    for (const auto& r : readers) {
        CHECK_FALSE(r->closed);
        least = std::min(least, r->points.load());
    }
    // Points come at most 50 per second while running (live_feed.hpp); a run
    // of several seconds gives each reader hundreds.
    CHECK(least > 100);
    CHECK(poll_failures == 0);
    CHECK(polls > 20);
    WARN("each reader got at least " << least << " points messages");

    for (auto& r : readers) {
        beast::error_code ec;
        beast::get_lowest_layer(r->ws).socket().close(ec);
    }
    feed_thread.join();
    CHECK(d.stop() == 0);
    std::filesystem::remove_all(dir);
}
