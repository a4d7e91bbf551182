// The drivers' TOML fragment: a good demo rig loads into the expected structs;
// each kind of bad entry gives one message naming the key and what was expected.
#include <catch2/catch.hpp>

#include "drivers/source_config.hpp"

using namespace tensile::drivers;

namespace {

// Demo rig (invented for this test): load cell on USB serial, extensometer on a
// serial device server, frame controller taking commands on the load cell port.
const char* demo = R"(
[source.load]
kind = "serial"
path = "/dev/ttyUSB0"
baud = 230400
parity = "even"
stop_bits = 1
flow = "rtscts"
dtr = true
format = "lines"
time_field = 0
latency_ms = 1.5
  [[source.load.channel]]
  name = "force"
  unit = "kN"
  field = 1
  scale = 1.0021
  offset = -0.8
  min = -300000
  max = 300000

[source.ext]
kind = "tcp"
host = "192.168.10.40"
port = 4001
retry_max_ms = 800
format = "binary"
  [[source.ext.channel]]
  name = "extension"
  unit = "mm"
  scale = 0.0001

[output.frame]
kind = "command"
source = "load"
ack_timeout_ms = 250
retries = 3

[output.lamp]
kind = "relay"
source = "load"
line = "rts"
)";

std::string error_of(const std::string& text) {
    try {
        (void)load_drivers(toml::parse(text), builtin_formats());
    } catch (const ConfigError& e) {
        return e.what();
    }
    return "no error";
}

std::string with(const std::string& from, const std::string& to) {
    std::string s = demo;
    const auto at = s.find(from);
    REQUIRE(at != std::string::npos);
    return s.replace(at, from.size(), to);
}

}  // namespace

TEST_CASE("config: the demo rig loads", "[config]") {
    const auto d = load_drivers(toml::parse(demo), builtin_formats());
    REQUIRE(d.sources.size() == 2);
    const auto& load = d.sources[0].name == "load" ? d.sources[0] : d.sources[1];
    const auto& ext = d.sources[0].name == "ext" ? d.sources[0] : d.sources[1];
    CHECK(load.kind == SourceKind::serial);
    CHECK(load.serial.path == "/dev/ttyUSB0");
    CHECK(load.serial.settings.baud == 230400);
    CHECK(load.serial.settings.parity == Parity::even);
    CHECK(load.serial.settings.flow == FlowControl::rtscts);
    CHECK(load.serial.settings.dtr == true);
    CHECK_FALSE(load.serial.settings.rts.has_value());
    CHECK(load.time.latency_s == Approx(0.0015));
    CHECK(load.time.clock_bits == 64);
    REQUIRE(load.format.channels.size() == 1);
    CHECK(std::get<tensile::ForceUnit>(load.format.channels[0].unit) == tensile::ForceUnit::kilonewton);
    CHECK(load.format.channels[0].scale == 1.0021);
    CHECK(load.format.channels[0].offset == -0.8);
    CHECK(ext.kind == SourceKind::tcp);
    CHECK(ext.tcp.port == 4001);
    CHECK(ext.tcp.backoff.max_s == Approx(0.8));
    CHECK(ext.time.clock_bits == 32);  // binary frames carry a 32-bit µs clock
    REQUIRE(d.outputs.size() == 2);
    const auto& frame = d.outputs[0].name == "frame" ? d.outputs[0] : d.outputs[1];
    CHECK(frame.command.ack_timeout_s == Approx(0.25));
    CHECK(frame.command.retries == 3);
}

TEST_CASE("config: bad entries name the key and the expected value", "[config]") {
    CHECK(error_of(with("baud = 230400", "baud = \"fast\"")) ==
          "source.load.baud (line 5): expected a baud rate such as 9600 or 115200, got \"fast\"");
    CHECK(error_of(with("parity = \"even\"", "parity = \"evn\"")) ==
          "source.load.parity (line 6): expected one of \"none\", \"odd\", \"even\", got \"evn\"");
    CHECK(error_of(with("unit = \"kN\"", "unit = \"tonne\"")) ==
          "source.load.channel[0].unit (line 15): expected a unit: N, kN, lbf, kgf (force) or mm, um, in (length), got \"tonne\"");
    CHECK(error_of(with("port = 4001", "port = 70000")) == "source.ext.port (line 25): expected a TCP port, 1 to 65535, got 70000");
    CHECK(error_of(with("baud = 230400", "baudrate = 230400")).starts_with("source.load.baudrate (line 5): unknown key"));
    CHECK(error_of(with("format = \"binary\"", "format = \"morse\"")) ==
          "source.ext.format (line 27): expected a wire format: one of binary, control, keyvalue, lines, got \"morse\"");
    CHECK(error_of(with("  field = 1\n", "")) ==
          "source.load.channel[0].field: expected the field position of this channel, 0 to 63 (required for format \"lines\")");
    CHECK(error_of(with("source = \"load\"\nack", "source = \"lod\"\nack")) ==
          "output.frame.source: expected the name of a [source.<name>] table, got \"lod\"");
    CHECK(error_of(with("source = \"load\"\nline", "source = \"ext\"\nline")) ==
          "output.lamp.source: expected a serial source (RTS/DTR exist only on serial ports), got \"ext\"");
    CHECK(error_of(with("kind = \"tcp\"", "kind = \"udp\"")) ==
          "source.ext.kind (line 23): expected one of \"serial\", \"tcp\", \"replay\", got \"udp\"");
    CHECK(error_of(with("time_field = 0", "time_field = 0\ntime_unit = \"hours\"")) ==
          "source.load.time_unit (line 12): expected the unit of the device time: \"us\", \"ms\" or \"s\", got \"hours\"");
    // The format's own checks come back under the source's key.
    CHECK(error_of(with("time_field = 0", "counter_field = 0")) ==
          "source.load: lines format: counter_field needs nominal_rate_hz > 0");
}
