// Fuzz target for the monitor's command bodies without sockets: the JSON
// body parser every POST goes through (parse_command_body), then what `arm`
// and `abort` read from it: the specimen form (specimen_from_json, then the
// geometry check), the profile name and the abort cause. Every input must end
// in a value or an error message; an exception escaping (a nlohmann
// type_error from a mistyped field, say), a crash or a sanitizer report is a bug.
#include <cstdint>
#include <string>

#include "daemon/monitor/reply.hpp"
#include "daemon/offline/specimen_json.hpp"

using nlohmann::json;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    const std::string body(reinterpret_cast<const char*>(data), size);
    auto j = tensile::monitor::parse_command_body(body);
    if (!j) {
        if (j.error().empty()) __builtin_trap();  // a refusal must say why
        return 0;
    }
    if (!j->is_object()) __builtin_trap();
    if (j->contains("specimen")) {
        if (auto s = tensile::specimen_from_json((*j)["specimen"])) {
            (void)tensile::check(*s);
            // What is stored with a run goes back out as JSON: it must dump.
            (void)tensile::to_json(*s).dump(-1, ' ', false, json::error_handler_t::replace);
        } else if (s.error().empty()) {
            __builtin_trap();
        }
    }
    if (j->contains("profile") && (*j)["profile"].is_string()) (void)(*j)["profile"].get<std::string>();
    if (j->contains("cause") && (*j)["cause"].is_string()) (void)(*j)["cause"].get<std::string>();
    // The error replies echo parts of the input; they must serialise whatever it held.
    (void)tensile::monitor::error_reply(400, body);
    return 0;
}
