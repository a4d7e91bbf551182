// The daemon's TOML config; see daemon_config.hpp.
#include "daemon_config.hpp"

#include <fstream>
#include <sstream>
#include <stdexcept>

#include "drivers/config_reader.hpp"
#include "drivers/parser_registry.hpp"
#include "profile_config.hpp"

namespace tensile {

namespace {

using drivers::ConfigError;
using drivers::ConfigReader;

const toml::table* sub_table(ConfigReader& r, std::string_view key, const std::string& path) {
    const toml::node* n = r.node(key);
    if (!n) return nullptr;
    if (!n->is_table()) r.fail(key, "a table [" + path + "]", n);
    return n->as_table();
}

std::filesystem::path resolve(const std::filesystem::path& base, const std::string& p) {
    const std::filesystem::path path(p);
    return path.is_absolute() ? path : base / path;
}

}  // namespace

DaemonConfig load_daemon_config_text(const std::string& text, const std::filesystem::path& base_dir) {
    toml::table root;
    try {
        root = toml::parse(text);
    } catch (const toml::parse_error& e) {
        std::ostringstream msg;
        msg << "line " << e.source().begin.line << ", column " << e.source().begin.column << ": " << e.description()
            << "; expected valid TOML";
        throw ConfigError("", msg.str());
    }
    DaemonConfig c;
    c.text = text;
    c.data_dir = base_dir / "data";
    ConfigReader top(root, "");

    if (const auto* t = sub_table(top, "daemon", "daemon")) {
        ConfigReader r(*t, "daemon");
        if (auto v = r.text("data_dir", "a folder path for the database and logs")) c.data_dir = resolve(base_dir, *v);
        if (auto v = r.choice<std::string>("log_level", {{"trace", "trace"}, {"debug", "debug"}, {"info", "info"},
                                                         {"warn", "warn"}, {"error", "error"}}))
            c.log_level = *v;
        if (auto v = r.number("min_free_mb", 0, 1e7, "free disk space in MB below which recording stops, e.g. 200"))
            c.min_free_mb = *v;
        if (auto v = r.number("max_database_mb", 0, 1e9,
                              "a cap on the database file in MB (0: none), e.g. 20000; reaching it stops recording with an alarm"))
            c.max_database_mb = *v;
        r.finish();
    }
    if (const auto* t = sub_table(top, "monitor", "monitor")) {
        ConfigReader r(*t, "monitor");
        if (auto v = r.text("listen", "an IP address to listen on, e.g. \"127.0.0.1\"")) c.monitor.listen = *v;
        if (auto v = r.integer("port", 0, 65535, "a TCP port between 0 and 65535, e.g. 8470"))
            c.monitor.port = static_cast<std::uint16_t>(*v);
        if (auto v = r.text("token_file", "a file holding the access token")) c.monitor.token_file = resolve(base_dir, *v);
        r.finish();
    }
    if (const auto* t = sub_table(top, "rig", "rig")) {
        ConfigReader r(*t, "rig");
        c.rig.name = r.text_or("name", c.rig.name, "a name for this rig, e.g. \"frame-1\"");
        if (auto m = r.choice<drivers::Role>("master", {{"force", drivers::Role::force},
                                                         {"extension", drivers::Role::extension},
                                                         {"crosshead", drivers::Role::crosshead}}))
            c.rig.aligner.master = *m;
        c.rig.commands_output = r.text_or("commands", "", "the name of an [output.<name>] that takes hold/resume/stop");
        c.rig.relay_output = r.text_or("relay", "", "the name of a relay [output.<name>]");
        if (auto v = r.number("max_wait_ms", 1, 10000, "milliseconds between 1 and 10000, e.g. 50"))
            c.rig.aligner.max_wait_s = *v / 1000.0;
        if (auto v = r.number("stale_after_ms", 1, 60000, "milliseconds between 1 and 60000, e.g. 100"))
            c.rig.aligner.stale_after_s = *v / 1000.0;
        if (auto v = r.number("max_gap_ms", 1, 60000, "milliseconds between 1 and 60000, e.g. 50"))
            c.rig.aligner.max_gap_s = *v / 1000.0;
        if (auto v = r.number("device_lost_limit_s", 1, 86400, "seconds a device may stay lost in a run, e.g. 30"))
            c.rig.device_lost_limit_s = *v;
        r.finish();
    }
    if (const auto* t = sub_table(top, "profile", "profile")) {
        for (auto&& [name, node] : *t) {
            const std::string path = "profile." + std::string(name.str());
            if (!node.is_table()) throw ConfigError(path, path + ": expected a table [" + path + "]");
            c.profiles[std::string(name.str())] = load_profile(*node.as_table(), path, std::string(name.str()));
        }
    }
    if (c.profiles.empty()) c.profiles["iso-6892-a"] = RunSettings{};  // the defaults suit ISO 6892-1 Method A
    for (auto& [name, p] : c.profiles) p.device_lost_limit_s = c.rig.device_lost_limit_s;
    if (const auto* t = sub_table(top, "run", "run")) {
        ConfigReader r(*t, "run");
        c.default_profile = r.text_or("profile", "", "the name of a [profile.<name>]");
        r.finish();
    }
    if (c.default_profile.empty()) c.default_profile = c.profiles.begin()->first;
    if (!c.profiles.count(c.default_profile))
        throw ConfigError("run.profile", "run.profile: no [profile." + c.default_profile + "]; expected one of the profiles defined");

    const auto formats = drivers::builtin_formats();
    top.node("source");
    top.node("output");
    c.drivers = drivers::load_drivers(root, formats);
    if (c.drivers.sources.empty()) throw ConfigError("source", "source: no [source.<name>]; expected at least one source");
    auto has_output = [&](const std::string& name) {
        for (const auto& o : c.drivers.outputs)
            if (o.name == name) return true;
        return false;
    };
    if (!c.rig.commands_output.empty() && !has_output(c.rig.commands_output))
        throw ConfigError("rig.commands", "rig.commands: no [output." + c.rig.commands_output + "]; expected an output name");
    if (!c.rig.relay_output.empty() && !has_output(c.rig.relay_output))
        throw ConfigError("rig.relay", "rig.relay: no [output." + c.rig.relay_output + "]; expected an output name");
    top.finish();
    return c;
}

DaemonConfig load_daemon_config(const std::filesystem::path& file) {
    std::ifstream in(file);
    if (!in) throw std::runtime_error("cannot read config '" + file.string() + "'");
    std::ostringstream text;
    text << in.rdbuf();
    auto c = load_daemon_config_text(text.str(), file.parent_path().empty() ? "." : file.parent_path());
    c.file = file;
    return c;
}

}  // namespace tensile
