// The monitor's HTTP API, routed by method and path:
//
//   GET  /                          the page (and /app.js, /style.css, /lib/chart.min.js)
//   GET  /metrics                   Prometheus text format
//   GET  /api/v1/status             state, run, live values, sources, recorder, alarms
//   GET  /api/v1/runs               ?from=&to=&state=&material=&limit=
//   GET  /api/v1/runs/{id}          specimen, profile, results, events, alarms, states
//   GET  /api/v1/runs/{id}/frames   ?from=&to=&points=  (min/max per time bucket)
//   GET  /api/v1/runs/{id}/export   ?format=csv|json
//   POST /api/v1/arm                {"specimen": {...}, "profile": "name"}
//   POST /api/v1/start | stop | abort | handover/confirm
//   POST /api/v1/tare               take the tare again (see api_outputs.hpp)
//   GET  /api/v1/outputs            the rig's outputs
//   POST /api/v1/outputs/{name}     {"send": "hold"} | {"relay": "on"|"off"}
//   GET  /api/v1/live               WebSocket upgrade (handled by HttpSession)
//
// Access: see access.hpp (page files need no token: they carry no data).
// Stored-run reads go to the RunReader thread; everything else is answered
// at once on the io_context thread.
//
// Error policy: every refusal is one JSON error naming what was wrong: 400
// malformed JSON or bad field, 401 token, 404 unknown run or path, 405 wrong
// method (with Allow), 409 a command that does not fit the run's state;
// outputs add 502/503/504 for what the rig did (api_outputs.hpp).
#pragma once

#include <filesystem>
#include <functional>
#include <string>

#include <nlohmann/json.hpp>

#include "access.hpp"
#include "live_feed.hpp"
#include "live_hub.hpp"
#include "reply.hpp"
#include "run_reader.hpp"

namespace tensile {
class RunKeeper;
}

namespace tensile::monitor {

struct ApiContext {
    RigService& rig;
    RunKeeper& keeper;
    LiveFeed& feed;
    LiveHub& hub;
    const Access& access;
    RunReader& reader;
    std::filesystem::path data_dir;
};

class Api {
public:
    explicit Api(ApiContext context);
    // `done` is called exactly once, on the io_context thread.
    void handle(ApiRequest request, std::function<void(Reply)> done);

    [[nodiscard]] nlohmann::json status() const;
    [[nodiscard]] std::string metrics() const;

private:
    Reply command(const std::string& name, const std::string& body);
    void runs(const ApiRequest& r, const std::function<void(Reply)>& done);

    ApiContext c_;
    double started_s_;
};

}  // namespace tensile::monitor
