// The live feed against the embedded demo at 20× speed (about 20,000 frames/s
// through the real drivers): a client that reads sees state changes, points,
// the proof or yield event and the extensometer alert; a client that never
// reads is dropped; the recorder loses no frame meanwhile; the stored run
// exports with stress = F/S0 and strain = ΔL/L0 (engineering definitions,
// ISO 6892-1 terms); tensilectl's commands work against the running daemon.
#include <catch2/catch.hpp>

#include <atomic>
#include <nlohmann/json.hpp>
#include <set>

#include "daemon_fixture.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;
namespace beast = boost::beast;

namespace {

double metric(const std::string& text, const std::string& name) {
    const auto at = text.find("\n" + name + " ");
    if (at == std::string::npos) return -1;
    return std::stod(text.substr(at + name.size() + 2));
}

// Connects a WebSocket client with a tiny receive buffer (so a client that
// never reads fills up quickly).
std::unique_ptr<beast::websocket::stream<beast::tcp_stream>> connect_live(boost::asio::io_context& io, std::uint16_t port,
                                                                        bool tiny_buffer) {
    auto ws = std::make_unique<beast::websocket::stream<beast::tcp_stream>>(io);
    auto& sock = beast::get_lowest_layer(*ws).socket();
    sock.open(boost::asio::ip::tcp::v4());
    if (tiny_buffer) sock.set_option(boost::asio::socket_base::receive_buffer_size(2048));
    sock.connect({boost::asio::ip::address_v4::loopback(), port});
    ws->handshake("127.0.0.1", "/api/v1/live");
    return ws;
}

}  // namespace

TEST_CASE("live feed, slow client and stored frames during a fast demo run") {
    const auto dir = temp_dir("tensiled-live");
    Daemon d({"--demo", "--demo-speed", "20", "--demo-data", dir.string(), "--monitor-port", "0"}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;

    // The slow client connects first and never reads.
    boost::asio::io_context slow_io;
    auto slow = connect_live(slow_io, p, true);

    // The reading client collects message types on its own thread.
    std::set<std::string> types, labels, alarms;
    std::atomic<bool> done{false};
    std::mutex m;
    std::thread reader([&] {
        boost::asio::io_context io;
        auto ws = connect_live(io, p, false);
        beast::flat_buffer buf;
        while (!done) {
            beast::error_code ec;
            ws->read(buf, ec);
            if (ec) break;
            const auto j = json::parse(beast::buffers_to_string(buf.data()), nullptr, false);
            buf.consume(buf.size());
            std::lock_guard lock(m);
            types.insert(j.value("type", ""));
            if (j.value("type", "") == "event") labels.insert(j.value("label", ""));
            if (j.value("type", "") == "alarm") alarms.insert(j.value("kind", ""));
            if (j.value("type", "") == "run_end") break;
        }
        beast::error_code ec;
        beast::get_lowest_layer(*ws).socket().close(ec);
    });

    // The first specimen runs to its end.
    REQUIRE(wait_for([&] { return json::parse(http(p, "GET", "/api/v1/runs?state=finished").body)["count"] >= 1; }, 60));
    done = true;
    reader.join();
    {
        std::lock_guard lock(m);
        CHECK(types.count("hello"));
        CHECK(types.count("state"));
        CHECK(types.count("points"));
        CHECK(types.count("event"));
        CHECK(types.count("run_end"));
        CHECK((labels.count("Rp0.2") || labels.count("ReH")));
        CHECK(alarms.count("extensometer_alert"));
    }

    // The slow client is dropped while the next specimens stream.
    std::string metrics;
    const bool dropped = wait_for([&] {
        metrics = http(p, "GET", "/metrics").body;
        return metric(metrics, "tensiled_live_clients_dropped_total") >= 1;
    }, 45);
    INFO(metrics);
    CHECK(dropped);
    // Acquisition lost nothing: no frame dropped by the recorder, and every
    // frame the first run took in is stored.
    CHECK(metric(metrics, "tensiled_recorder_frames_dropped_total") == 0);
    const auto run = json::parse(http(p, "GET", "/api/v1/runs/1").body);
    CHECK(run["state"] == "finished");
    CHECK(run["frame_count"].get<double>() > 10000);
    const auto status = json::parse(http(p, "GET", "/api/v1/status").body);
    CHECK(status["recorder"]["frames_dropped"] == 0);
    CHECK(status["recorder"]["messages_dropped"] == 0);

    // Export: header, one line per stored frame, stress and strain from S0 and L0.
    const double S0 = run["specimen"]["S0_mm2"], L0 = run["specimen"]["L0_mm"];
    const auto csv = http(p, "GET", "/api/v1/runs/1/export?format=csv").body;
    std::istringstream lines(csv);
    std::string line;
    std::getline(lines, line);
    CHECK(line == "time_s,force_N,extension_mm,crosshead_mm,stress_MPa,strain_pct");
    std::size_t rows = 0, checked = 0;
    while (std::getline(lines, line)) {
        ++rows;
        double t, F, e, x, s, eps;
        if (std::sscanf(line.c_str(), "%lf,%lf,%lf,%lf,%lf,%lf", &t, &F, &e, &x, &s, &eps) == 6 && rows % 997 == 0) {
            CHECK(s == Approx(F / S0).epsilon(1e-6));
            CHECK(eps == Approx(100.0 * e / L0).epsilon(1e-6).margin(1e-9));
            ++checked;
        }
    }
    CHECK(rows == run["frame_count"].get<std::size_t>());
    CHECK(checked > 5);
    auto frames = json::parse(http(p, "GET", "/api/v1/runs/1/frames?points=200").body);
    CHECK(frames["buckets"]["count"].size() > 100);

    // tensilectl against the running demo.
    const auto ctl = bin("tensilectl") + " ";
    const auto at = " --address " + d.address();
    auto st = run_command(ctl + "status" + at);
    CHECK(st.code == 0);
    CHECK_THAT(st.out, Catch::Contains("state"));
    auto show = run_command(ctl + "show 1" + at);
    CHECK(show.code == 0);
    CHECK_THAT(show.out, Catch::Contains("Rm_MPa"));
    CHECK(run_command(ctl + "show 999" + at).code == 1);
    const auto out = dir / "run1.csv";
    CHECK(run_command(ctl + "export 1 -o " + out.string() + at).code == 0);
    CHECK(std::filesystem::file_size(out) == csv.size());
    auto watch = run_command(ctl + "watch --seconds 2" + at);
    CHECK(watch.code == 0);
    CHECK_THAT(watch.out, Catch::Contains("connected"));
    CHECK(run_command(ctl + "confirm-handover" + at + " --token-file " + (dir / "monitor.token").string()).code == 1);

    CHECK(d.stop() == 0);
    std::filesystem::remove_all(dir);
}
