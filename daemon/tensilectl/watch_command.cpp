// tensilectl watch: a live terminal view of the rig through the daemon's
// WebSocket feed (/api/v1/live): state changes, events and alarms as lines,
// and the current values at most twice a second. --seconds ends it after a
// while (for scripts and tests); otherwise it runs until Ctrl-C or the daemon
// goes away.
//
// Error policy: no daemon → exit 3 with a message; the feed closing ends the
// view with exit 0 when it had run, 3 when it never connected.
#include <boost/asio/connect.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/beast/core.hpp>
#include <boost/beast/websocket.hpp>
#include <chrono>
#include <cstdio>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "daemon_client.hpp"
#include "daemon_commands.hpp"

namespace tensile::ctl {

namespace beast = boost::beast;
using nlohmann::json;

namespace {

std::string num(const json& v, int decimals) {
    if (!v.is_number()) return "-";
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*f", decimals, v.get<double>());
    return buf;
}

// One line for each message worth a line; values are throttled by the caller.
void show(const json& m, double& last_values_s, double now_s) {
    const std::string type = m.value("type", "");
    if (type == "hello") {
        const auto& s = m["status"];
        std::cout << "connected: state " << s.value("state", "?") << ", hand-over " << s.value("handover", "?") << '\n';
    } else if (type == "state") {
        std::cout << "state " << m.value("state", "?") << " (run " << m.value("run", 0) << "): " << m.value("cause", "") << '\n';
    } else if (type == "event") {
        std::cout << "event " << m.value("kind", "") << ' ' << m.value("label", "") << " at " << num(m["time_s"], 3)
                  << " s: " << num(m["stress_MPa"], 1) << " MPa, " << num(m["strain_pct"], 3) << " %\n";
    } else if (type == "alarm") {
        const std::string kind = m.value("kind", "");
        if (kind == "extensometer_alert")
            std::cout << "*** REMOVE THE EXTENSOMETER (frame held), then: tensilectl confirm-handover ***\n";
        std::cout << "alarm " << kind << ": " << m.value("message", "") << '\n';
    } else if (type == "handover") {
        std::cout << "hand-over " << m.value("handover", "") << '\n';
    } else if (type == "run_end") {
        const auto& r = m["results"];
        std::cout << "run " << m.value("run", 0) << " ended: " << m.value("state", "?") << "; Rm "
                  << num(r.value("Rm_MPa", json()), 1) << " MPa, Rp0.2 " << num(r.value("Rp0.2_MPa", json()), 1)
                  << " MPa, A " << num(r.value("A_pct", json()), 1) << " %\n";
    } else if ((type == "points" || type == "idle") && now_s - last_values_s >= 0.5) {
        last_values_s = now_s;
        std::cout << "  F " << num(m["force_N"], 1) << " N  ext " << num(m["extension_mm"], 4) << " mm  xh "
                  << num(m["crosshead_mm"], 3) << " mm";
        if (type == "points") std::cout << "  " << num(m["stress_MPa"], 1) << " MPa  " << num(m["strain_pct"], 3) << " %";
        std::cout << '\n';
    }
    std::cout.flush();
}

struct Watch {
    boost::asio::io_context io;
    beast::websocket::stream<beast::tcp_stream> ws{io};
    beast::flat_buffer buffer;
    double last_values_s = -1;
    bool connected = false;
    std::string error;

    void read() {
        ws.async_read(buffer, [this](beast::error_code ec, std::size_t) {
            if (ec) {
                error = ec.message();
                return;
            }
            const auto m = json::parse(beast::buffers_to_string(buffer.data()), nullptr, false);
            buffer.consume(buffer.size());
            const double now = std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
            if (m.is_object()) show(m, last_values_s, now);
            read();
        });
    }
};

}  // namespace

void add_watch_command(CLI::App& app, int& exit_code) {
    auto target = std::make_shared<DaemonTarget>();
    auto seconds = std::make_shared<double>(0);
    auto* cmd = app.add_subcommand("watch", "Live view of state, values, events and alarms");
    add_target_options(*cmd, *target);
    cmd->add_option("--seconds", *seconds, "Stop after this many seconds (default: until Ctrl-C)")->check(CLI::NonNegativeNumber);
    cmd->callback([&exit_code, target, seconds] {
        Watch w;
        try {
            boost::asio::ip::tcp::resolver resolver(w.io);
            beast::get_lowest_layer(w.ws).expires_after(std::chrono::seconds(10));
            beast::get_lowest_layer(w.ws).connect(resolver.resolve(target->host(), target->port()));
            beast::get_lowest_layer(w.ws).expires_never();
            const auto token = target->token();
            w.ws.set_option(beast::websocket::stream_base::decorator([token](beast::websocket::request_type& req) {
                if (!token.empty()) req.set(beast::http::field::authorization, "Bearer " + token);
            }));
            w.ws.handshake(target->host() + ":" + target->port(), "/api/v1/live");
            w.connected = true;
        } catch (const std::exception& e) {
            HttpAnswer a;
            a.error = e.what();
            exit_code = report_failure(*target, a);
            return;
        }
        w.read();
        if (*seconds > 0) w.io.run_for(std::chrono::duration_cast<std::chrono::nanoseconds>(std::chrono::duration<double>(*seconds)));
        else w.io.run();
        if (!w.error.empty() && *seconds == 0) std::cout << "feed closed: " << w.error << '\n';
        exit_code = 0;
    });
}

}  // namespace tensile::ctl
