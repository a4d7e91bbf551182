// The operator's hands on the rig from the monitor, beside arm/start/stop:
//
//   POST /api/v1/tare               take the tare again (armed, before the
//                                   start) or the readout zero (no run live)
//   GET  /api/v1/outputs            the rig's outputs: name, kind, source, role
//   POST /api/v1/outputs/{name}     {"send": "hold"} on a command output,
//                                   {"relay": "on" | "off"} on a relay output
//
// A command is answered once the rig acknowledged it (or refused it, or the
// acknowledgement never came), so the reply says what the frame did.
// Commands are the words of the wire protocol (drivers/wire-formats.md), not
// free text: this is a machine that applies force.
//
// Safety: these are requests, not an interlock. Two are refused while the
// run's hand-over waits, because someone may have hands on the specimen:
// `resume` (confirm the hand-over instead) and moving the hand-over relay.
//
// Error policy: one JSON error naming what was wrong: 400 bad body or a
// command the output cannot take, 404 unknown output, 409 wrong run state,
// 502 the rig refused, 503 not sent (link down, queue full), 504 no
// acknowledgement in time.
#pragma once

#include <functional>
#include <string>

#include <nlohmann/json.hpp>

#include "daemon/tensiled/rig_service.hpp"
#include "engine/result.hpp"
#include "reply.hpp"

namespace tensile::monitor {

// The commands an operator may send on a command output.
inline constexpr const char* output_commands[] = {"hold", "resume", "stop", "extensometer-off", "ping"};

// Command bodies are read by parse_command_body (reply.hpp).

Reply tare(RigService& rig, const std::string& body);
nlohmann::json outputs_json(const RigService& rig);
// `done` is called exactly once, on the io_context thread.
void use_output(RigService& rig, const std::string& name, const std::string& body, std::function<void(Reply)> done);

}  // namespace tensile::monitor
