// The drivers' part of the rig config: sources with their format and channels,
// and outputs. The daemon's config loader hands us the parsed TOML root; we
// read the [source.<name>] and [output.<name>] tables:
//
//   [source.load]                 kind = "serial" | "tcp" | "replay"
//   path = "/dev/ttyUSB0"         baud, data_bits, parity, stop_bits, flow, rts, dtr
//   host = "10.0.0.5"  port = 4001  connect_timeout_ms, silence_timeout_ms
//   file = "run.cap"   original_timing = true  speed = 1.0
//   retry_min_ms = 100  retry_max_ms = 1000  latency_ms = 1.5
//   format = "lines"    separator = ","  time_field = 0  counter_field, field_count,
//   time_key = "t"  counter_key  max_line = 512  nominal_rate_hz  keep_nan
//   [[source.load.channel]]       name, unit, field | key, scale, offset, min, max
//   [output.frame]                kind = "command", source, ack_timeout_ms, retries
//   [output.lamp]                 kind = "relay", source (a serial source), line = "rts" | "dtr"
//
// Error policy: start-up only, so errors are exceptions. The first bad entry
// throws ConfigError with one message naming the key path, the line, what was
// expected and what was found. Unknown keys are errors too (typos must not be
// silently ignored on a machine that applies force).
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

#include <toml++/toml.h>

#include "format_config.hpp"
#include "outputs.hpp"
#include "parser_registry.hpp"
#include "replay_source.hpp"
#include "serial_source.hpp"
#include "tcp_source.hpp"
#include "time_base.hpp"

namespace tensile::drivers {

class ConfigError : public std::runtime_error {
public:
    ConfigError(std::string key, const std::string& message) : std::runtime_error(message), key_(std::move(key)) {}
    [[nodiscard]] const std::string& key() const { return key_; }

private:
    std::string key_;
};

enum class SourceKind { serial, tcp, replay };

struct SourceConfig {
    std::string name;
    SourceKind kind = SourceKind::serial;
    SerialSourceConfig serial;  // kind == serial
    TcpSourceConfig tcp;        // kind == tcp
    ReplaySourceConfig replay;  // kind == replay
    FormatConfig format;
    TimeBaseConfig time;
};

enum class OutputKind { command, relay };

struct OutputConfig {
    std::string name;
    OutputKind kind = OutputKind::command;
    std::string source;
    CommandConfig command;  // kind == command
    ModemLine line = ModemLine::rts;  // kind == relay
};

struct DriversConfig {
    std::vector<SourceConfig> sources;
    std::vector<OutputConfig> outputs;
};

// `path` is the key path for messages, e.g. "source.load".
SourceConfig load_source(const toml::table& t, const std::string& path, const ParserRegistry& formats);
OutputConfig load_output(const toml::table& t, const std::string& path);
// Reads `source` and `output` of the root; checks outputs name existing sources
// and that parsers can be built from each format (same message style).
DriversConfig load_drivers(const toml::table& root, const ParserRegistry& formats);

}  // namespace tensile::drivers
