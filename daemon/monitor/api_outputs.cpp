// Tare and outputs from the monitor; see api_outputs.hpp.
#include "api_outputs.hpp"

#include <algorithm>
#include <memory>

namespace tensile::monitor {

using nlohmann::json;

namespace {

std::string command_list() {
    std::string names;
    for (const char* c : output_commands) names += (names.empty() ? "" : ", ") + std::string(c);
    return names;
}

const drivers::OutputConfig* find_output(const RigService& rig, const std::string& name) {
    for (const auto& o : rig.config().drivers.outputs)
        if (o.name == name) return &o;
    return nullptr;
}

std::string output_names(const RigService& rig) {
    std::string names;
    for (const auto& o : rig.config().drivers.outputs) names += (names.empty() ? "" : ", ") + o.name;
    return names.empty() ? "(the config has no outputs)" : names;
}

// Refuses any field but the allowed ones, naming the first stranger.
std::optional<Reply> only_fields(const json& j, std::initializer_list<const char*> allowed, const std::string& expected) {
    for (const auto& [key, value] : j.items())
        if (std::none_of(allowed.begin(), allowed.end(), [&](const char* a) { return key == a; }))
            return error_reply(400, "unknown field '" + key + "'; expected " + expected);
    return std::nullopt;
}

void send_command(RigService& rig, const drivers::OutputConfig& out, const json& j, const std::function<void(Reply)>& done) {
    if (!j["send"].is_string()) return done(error_reply(400, "field 'send' must be a command word (text): one of " + command_list()));
    const auto word = j["send"].get<std::string>();
    if (std::none_of(std::begin(output_commands), std::end(output_commands), [&](const char* c) { return word == c; }))
        return done(error_reply(400, "field 'send': unknown command '" + word + "'; expected one of " + command_list()));
    if (word == "resume" && rig.handover() == HandoverState::waiting)
        return done(error_reply(409, "cannot resume: the frame is held for extensometer removal; take it off and confirm "
                                     "the hand-over (POST /api/v1/handover/confirm), which resumes the frame"));
    // A link that is down would only time out after every retry: say so at once.
    for (const auto& st : rig.acquisition().status())
        if (st.name == out.source && st.state != drivers::SourceState::connected)
            return done(error_reply(503, "'" + word + "' not sent on output '" + out.name + "': its link (source '" +
                                             out.source + "') is " + std::string(drivers::name_of(st.state))));
    auto sender = rig.command_output(out.name);
    if (!sender) return done(error_reply(503, "output '" + out.name + "' has no link to send on"));
    sender->submit(word, [done, name = out.name](const drivers::CommandResult& r) {
        json a = {{"output", name}, {"command", r.command}, {"outcome", std::string(drivers::name_of(r.outcome))},
                  {"attempts", r.attempts}, {"reply", r.reply}};
        switch (r.outcome) {
            case drivers::CommandOutcome::acknowledged:
                a["ok"] = true;
                return done(json_reply(a));
            case drivers::CommandOutcome::refused:
                a["error"] = "the rig refused '" + r.command + "' on output '" + name + "': " + r.reply;
                a["status"] = 502;
                return done(json_reply(a, 502));
            case drivers::CommandOutcome::timed_out:
                a["error"] = "no acknowledgement of '" + r.command + "' on output '" + name + "' after " +
                             std::to_string(r.attempts) + " attempts; treat it as not done";
                a["status"] = 504;
                return done(json_reply(a, 504));
            case drivers::CommandOutcome::not_sent:
                a["error"] = "'" + r.command + "' not sent on output '" + name + "': " + r.reply;
                a["status"] = 503;
                return done(json_reply(a, 503));
        }
    });
}

Reply set_relay(RigService& rig, const drivers::OutputConfig& out, const json& j) {
    const auto& v = j["relay"];
    if (!v.is_string() || (v != "on" && v != "off"))
        return error_reply(400, "field 'relay' must be \"on\" or \"off\"");
    if (out.name == rig.config().rig.relay_output && rig.handover() == HandoverState::waiting)
        return error_reply(409, "relay '" + out.name + "' signals the extensometer removal that is waiting; confirm "
                                "the hand-over (POST /api/v1/handover/confirm) to drop it");
    auto* relay = rig.relay_output(out.name);
    if (!relay) return error_reply(503, "relay '" + out.name + "' has no serial port to drive (source '" + out.source + "')");
    const bool on = v == "on";
    if (auto ec = relay->set(on))
        return error_reply(502, "relay '" + out.name + "' not set " + (on ? "on" : "off") + ": " + ec.message());
    return json_reply({{"ok", true}, {"output", out.name}, {"relay", on ? "on" : "off"}});
}

}  // namespace

Reply tare(RigService& rig, const std::string& body) {
    auto j = parse_command_body(body);
    if (!j) return error_reply(400, j.error());
    if (auto bad = only_fields(*j, {}, "no fields (an empty body)")) return *bad;
    // A tare of nothing would leave the run waiting for frames that never come.
    bool connected = false;
    std::string sources;
    for (const auto& s : rig.acquisition().status()) {
        connected = connected || s.state == drivers::SourceState::connected;
        sources += (sources.empty() ? "" : ", ") + s.name + ": " + std::string(drivers::name_of(s.state));
    }
    if (!connected) return error_reply(409, "cannot take the tare: no source is connected (" + sources + ")");
    auto r = rig.retare();
    if (!r) return error_reply(409, r.error());
    const bool run = live(rig.state());
    return json_reply({{"ok", true},
                       {"command", "tare"},
                       {"state", tensile::name_of(rig.state())},
                       {"scope", run ? "run" : "readout"},
                       {"frames", rig.controller().tare_frames_needed()},
                       {"note", run ? "the run's tare is taken again from the next frames; start waits for it"
                                    : "a zero for the readout between runs; arming takes the run's own tare"}});
}

json outputs_json(const RigService& rig) {
    json list = json::array();
    const auto& cfg = rig.config();
    for (const auto& o : cfg.drivers.outputs) {
        json e = {{"name", o.name}, {"source", o.source}};
        if (o.kind == drivers::OutputKind::command) {
            e["kind"] = "command";
            e["commands"] = std::vector<std::string>(std::begin(output_commands), std::end(output_commands));
            e["role"] = o.name == cfg.rig.commands_output ? json("hold, resume and stop for runs") : json(nullptr);
        } else {
            e["kind"] = "relay";
            e["line"] = o.line == drivers::ModemLine::rts ? "rts" : "dtr";
            e["role"] = o.name == cfg.rig.relay_output ? json("raised while the extensometer should come off") : json(nullptr);
            e["available"] = rig.relay_output(o.name) != nullptr;
        }
        list.push_back(e);
    }
    return {{"outputs", list}};
}

void use_output(RigService& rig, const std::string& name, const std::string& body, std::function<void(Reply)> done) {
    const auto* out = find_output(rig, name);
    if (!out) return done(error_reply(404, "no output '" + name + "'; the rig's outputs: " + output_names(rig)));
    auto j = parse_command_body(body);
    if (!j) return done(error_reply(400, j.error()));
    if (out->kind == drivers::OutputKind::command) {
        if (auto bad = only_fields(*j, {"send"}, "{\"send\": \"<command>\"} for command output '" + name + "'"))
            return done(std::move(*bad));
        if (!j->contains("send"))
            return done(error_reply(400, "missing field 'send' for command output '" + name + "'; expected one of " + command_list()));
        return send_command(rig, *out, *j, done);
    }
    if (auto bad = only_fields(*j, {"relay"}, "{\"relay\": \"on\" | \"off\"} for relay output '" + name + "'"))
        return done(std::move(*bad));
    if (!j->contains("relay")) return done(error_reply(400, "missing field 'relay' for relay output '" + name + "'; expected \"on\" or \"off\""));
    done(set_relay(rig, *out, *j));
}

}  // namespace tensile::monitor
