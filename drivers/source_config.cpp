// See source_config.hpp. One function per table kind; each key is read once
// with its range and the words a technician needs to fix it.
#include "source_config.hpp"

#include <set>

#include "config_reader.hpp"

namespace tensile::drivers {

namespace {

constexpr double ms = 1e-3;

ChannelSpec load_channel(const toml::table& t, const std::string& path, const std::string& format) {
    ConfigReader r(t, path);
    ChannelSpec c;
    c.name = r.required_text("name", "a channel name such as \"force\", \"extension\" or \"crosshead\"");
    const std::string unit = r.required_text("unit", "a unit: N, kN, lbf, kgf (force) or mm, um, in (length)");
    if (const auto f = parse_force_unit(unit)) c.unit = *f;
    else if (const auto l = parse_length_unit(unit)) c.unit = *l;
    else r.fail("unit", "a unit: N, kN, lbf, kgf (force) or mm, um, in (length)", t.get("unit"));
    if (format == "lines") {
        const auto f = r.integer("field", 0, 63, "the field position of this channel, 0 to 63");
        if (!f) r.fail("field", "the field position of this channel, 0 to 63 (required for format \"lines\")");
        c.field = static_cast<int>(*f);
    } else if (format == "keyvalue") {
        c.key = r.required_text("key", "the key of this channel in the line, e.g. \"F\"");
    }
    c.scale = r.number("scale", -1e12, 1e12, "a calibration factor (binary: units per count), e.g. 0.001").value_or(1.0);
    if (c.scale == 0) r.fail("scale", "a non-zero calibration factor", t.get("scale"));
    c.offset = r.number("offset", -1e12, 1e12, "a calibration offset in N or mm").value_or(0.0);
    c.min = r.number("min", -1e15, 1e15, "the lowest plausible reading in N or mm").value_or(c.min);
    c.max = r.number("max", -1e15, 1e15, "the highest plausible reading in N or mm").value_or(c.max);
    if (c.min >= c.max) r.fail("max", "a value above min", t.get("max"));
    r.finish();
    return c;
}

}  // namespace

SourceConfig load_source(const toml::table& t, const std::string& path, const ParserRegistry& formats) {
    ConfigReader r(t, path);
    SourceConfig s;
    s.name = path.substr(path.rfind('.') + 1);
    s.kind = r.require(r.choice<SourceKind>("kind", {{"serial", SourceKind::serial}, {"tcp", SourceKind::tcp}, {"replay", SourceKind::replay}}),
                       "kind", "one of \"serial\", \"tcp\", \"replay\"");

    BackoffConfig backoff;
    backoff.initial_s = r.number("retry_min_ms", 1, 60000, "milliseconds before the first reconnection attempt, 1 to 60000").value_or(100) * ms;
    backoff.max_s = r.number("retry_max_ms", 10, 60000, "the longest wait between attempts in milliseconds, 10 to 60000").value_or(1000) * ms;
    if (backoff.max_s < backoff.initial_s) r.fail("retry_max_ms", "a value not below retry_min_ms", t.get("retry_max_ms"));

    switch (s.kind) {
        case SourceKind::serial: {
            auto& c = s.serial;
            c.name = s.name;
            c.backoff = backoff;
            c.path = r.required_text("path", "a serial port path such as \"/dev/ttyUSB0\"");
            c.settings.baud = static_cast<int>(r.integer("baud", 50, 4000000, "a baud rate such as 9600 or 115200").value_or(115200));
            c.settings.data_bits = static_cast<int>(r.integer("data_bits", 5, 8, "5, 6, 7 or 8").value_or(8));
            c.settings.parity = r.choice<Parity>("parity", {{"none", Parity::none}, {"odd", Parity::odd}, {"even", Parity::even}}).value_or(Parity::none);
            c.settings.stop_bits = static_cast<int>(r.integer("stop_bits", 1, 2, "1 or 2").value_or(1));
            c.settings.flow = r.choice<FlowControl>("flow", {{"none", FlowControl::none}, {"xonxoff", FlowControl::xonxoff},
                                                             {"rtscts", FlowControl::rtscts}, {"dtrdsr", FlowControl::dtrdsr}})
                                  .value_or(FlowControl::none);
            c.settings.rts = r.flag("rts");
            c.settings.dtr = r.flag("dtr");
            break;
        }
        case SourceKind::tcp: {
            auto& c = s.tcp;
            c.name = s.name;
            c.backoff = backoff;
            c.host = r.required_text("host", "a host name or address such as \"192.168.1.20\"");
            c.port = static_cast<std::uint16_t>(r.require(r.integer("port", 1, 65535, "a TCP port, 1 to 65535"), "port", "a TCP port, 1 to 65535"));
            c.connect_timeout_s = r.number("connect_timeout_ms", 10, 60000, "milliseconds, 10 to 60000").value_or(2000) * ms;
            c.silence_timeout_s = r.number("silence_timeout_ms", 0, 600000, "milliseconds without data before reconnecting, 0 = never").value_or(0) * ms;
            break;
        }
        case SourceKind::replay: {
            auto& c = s.replay;
            c.name = s.name;
            c.path = r.required_text("file", "the path of a byte capture to replay");
            c.original_timing = r.flag("original_timing").value_or(false);
            c.speed = r.number("speed", 0.001, 1000, "a replay speed factor, e.g. 1 or 10").value_or(1.0);
            break;
        }
    }

    auto& f = s.format;
    f.format = r.required_text("format", "a wire format: one of binary, control, keyvalue, lines");
    const FormatInfo* info = formats.find(f.format);
    if (!info) {
        std::string known;
        for (const auto& n : formats.names()) known += (known.empty() ? "" : ", ") + n;
        r.fail("format", "a wire format: one of " + known, t.get("format"));
    }
    if (const auto sep = r.text("separator", "one character such as \",\", \";\", \" \" or \"\\t\"")) {
        if (sep->size() != 1 || *sep == "\n" || *sep == "\r")
            r.fail("separator", "one character such as \",\", \";\", \" \" or \"\\t\"", t.get("separator"));
        f.separator = (*sep)[0];
    }
    if (const auto v = r.integer("time_field", 0, 63, "the field position of the device time, 0 to 63")) f.time_field = static_cast<int>(*v);
    if (const auto unit = r.text("time_unit", "the unit of the device time: \"us\", \"ms\" or \"s\"")) {
        if (*unit == "us" || *unit == "µs") f.time_us_per_unit = 1.0;
        else if (*unit == "ms") f.time_us_per_unit = 1e3;
        else if (*unit == "s") f.time_us_per_unit = 1e6;
        else r.fail("time_unit", "the unit of the device time: \"us\", \"ms\" or \"s\"", t.get("time_unit"));
    }
    if (const auto v = r.integer("counter_field", 0, 63, "the field position of the sample counter, 0 to 63")) f.counter_field = static_cast<int>(*v);
    f.field_count = static_cast<int>(r.integer("field_count", 1, 64, "the number of fields per line, 1 to 64").value_or(0));
    f.time_key = r.text_or("time_key", "t", "the key of the device time, e.g. \"t\"");
    f.counter_key = r.text_or("counter_key", "", "the key of the sample counter");
    f.max_line = static_cast<std::size_t>(r.integer("max_line", 16, 65536, "the longest accepted line in bytes, 16 to 65536").value_or(512));
    f.nominal_rate_hz = r.number("nominal_rate_hz", 0, 1e6, "the device's sampling rate in Hz").value_or(0);
    f.keep_nan = r.flag("keep_nan").value_or(false);
    f.decimal_comma = r.flag("decimal_comma").value_or(false);

    s.time.latency_s = r.number("latency_ms", 0, 10000, "the smallest transport delay in milliseconds, 0 to 10000").value_or(0) * ms;
    s.time.clock_pace = r.number("clock_pace", 0.001, 1000,
                                 "device seconds per real second, 1 for real instruments (a simulator may run faster)")
                            .value_or(1.0);
    s.time.clock_bits = info->device_clock_bits;
    s.time.nominal_rate_hz = f.nominal_rate_hz;

    const toml::node* chans = r.node("channel");
    if (!info->carries_channels) {
        if (chans) r.fail("channel", "no [[" + path + ".channel]] tables: a \"" + f.format + "\" source is a command port and carries no data", chans);
    } else if (!chans || !chans->is_array_of_tables() || chans->as_array()->empty()) {
        r.fail("channel", "one or more [[" + path + ".channel]] tables", chans);
    }
    std::set<std::string> names;
    std::size_t i = 0;
    if (chans) for (const auto& el : *chans->as_array()) {
        const std::string cpath = path + ".channel[" + std::to_string(i++) + "]";
        ChannelSpec c = load_channel(*el.as_table(), cpath, f.format);
        if (!names.insert(c.name).second)
            throw ConfigError(cpath + ".name", cpath + ".name: expected a name not used by another channel of this source, got \"" + c.name + "\"");
        f.channels.push_back(std::move(c));
    }
    r.finish();

    try {
        (void)formats.make(f);  // the format's own checks (field positions, keys, rates)
    } catch (const std::invalid_argument& e) {
        throw ConfigError(path, path + ": " + e.what());
    }
    return s;
}

OutputConfig load_output(const toml::table& t, const std::string& path) {
    ConfigReader r(t, path);
    OutputConfig o;
    o.name = path.substr(path.rfind('.') + 1);
    o.kind = r.require(r.choice<OutputKind>("kind", {{"command", OutputKind::command}, {"relay", OutputKind::relay}}), "kind",
                       "one of \"command\", \"relay\"");
    o.source = r.required_text("source", "the name of a source in [source.<name>]");
    if (o.kind == OutputKind::command) {
        o.command.name = o.name;
        o.command.ack_timeout_s = r.number("ack_timeout_ms", 1, 60000, "milliseconds to wait for #ok, 1 to 60000").value_or(500) * ms;
        o.command.retries = static_cast<int>(r.integer("retries", 0, 10, "resends after the first attempt, 0 to 10").value_or(2));
    } else {
        o.line = r.require(r.choice<ModemLine>("line", {{"rts", ModemLine::rts}, {"dtr", ModemLine::dtr}}), "line", "\"rts\" or \"dtr\"");
    }
    r.finish();
    return o;
}

DriversConfig load_drivers(const toml::table& root, const ParserRegistry& formats) {
    DriversConfig d;
    if (const toml::node* n = root.get("source")) {
        if (!n->is_table()) throw ConfigError("source", "source: expected tables [source.<name>]");
        for (const auto& [k, v] : *n->as_table()) {
            const std::string path = "source." + std::string(k.str());
            if (!v.is_table()) throw ConfigError(path, path + ": expected a table [" + path + "]");
            d.sources.push_back(load_source(*v.as_table(), path, formats));
        }
    }
    if (const toml::node* n = root.get("output")) {
        if (!n->is_table()) throw ConfigError("output", "output: expected tables [output.<name>]");
        for (const auto& [k, v] : *n->as_table()) {
            const std::string path = "output." + std::string(k.str());
            if (!v.is_table()) throw ConfigError(path, path + ": expected a table [" + path + "]");
            OutputConfig o = load_output(*v.as_table(), path);
            const SourceConfig* src = nullptr;
            for (const auto& s : d.sources)
                if (s.name == o.source) src = &s;
            if (!src) throw ConfigError(path + ".source", path + ".source: expected the name of a [source.<name>] table, got \"" + o.source + "\"");
            if (o.kind == OutputKind::relay && src->kind != SourceKind::serial)
                throw ConfigError(path + ".source", path + ".source: expected a serial source (RTS/DTR exist only on serial ports), got \"" + o.source + "\"");
            if (o.kind == OutputKind::command && src->kind == SourceKind::replay)
                throw ConfigError(path + ".source", path + ".source: expected a serial or tcp source (a replay cannot be commanded), got \"" + o.source + "\"");
            d.outputs.push_back(std::move(o));
        }
    }
    return d;
}

}  // namespace tensile::drivers
