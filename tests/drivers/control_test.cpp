// The command-port format (`control` in wire-formats.md): answers go to the
// message handler whole, anything else on the port is a bad record, any split
// of the bytes gives the same; and the rig config takes a control source
// without channels and refuses one with channels, naming the key.
#include <catch2/catch.hpp>

#include "drivers/source_config.hpp"
#include "parser_harness.hpp"

using namespace drv_test;

namespace {
FormatConfig control_format() {
    FormatConfig c;
    c.format = "control";
    return c;
}
}  // namespace

TEST_CASE("control: answers are messages, other lines are bad records", "[control]") {
    const std::string stream = "#ok hold\r\n#error unknown command 'hodl'\n1234,5.0 N\n\n#ok resume\r";
    const Run r = run_whole(control_format(), stream);
    CHECK(r.samples.empty());
    CHECK(r.messages == std::vector<std::string>{"#ok hold", "#error unknown command 'hodl'", "#ok resume"});
    CHECK(r.counters.stream.device_messages == 3);
    CHECK(r.counters.stream.bad_records == 1);
    CHECK(r.counters.stream.resync_bytes == 10);  // "1234,5.0 N"
    CHECK(r.counters.stream.bytes == stream.size());
}

TEST_CASE("control: every split and byte-at-a-time give the same, a cut answer is torn", "[control][split]") {
    check_split_invariance(control_format(), "#ok hold\n#ok stop\r\nnoise\n#ok pi");
    const Run cut = run_whole(control_format(), "#ok hold\n#ok pi", true);
    CHECK(cut.messages == std::vector<std::string>{"#ok hold"});
    CHECK(cut.counters.stream.bad_records == 1);
    CHECK(cut.counters.stream.resync_bytes == 6);
}

TEST_CASE("control: a source without channels loads, one with channels is refused by name", "[control][config]") {
    const std::string ok = "[source.ctl]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = 4002\nformat = \"control\"\n";
    const auto d = load_drivers(toml::parse(ok), builtin_formats());
    REQUIRE(d.sources.size() == 1);
    CHECK(d.sources[0].format.channels.empty());
    std::string error;
    try {
        (void)load_drivers(toml::parse(ok + "  [[source.ctl.channel]]\n  name = \"force\"\n  unit = \"N\"\n"), builtin_formats());
    } catch (const ConfigError& e) {
        error = e.what();
    }
    CHECK(error.starts_with("source.ctl.channel"));
    CHECK(error.find("no [[source.ctl.channel]] tables") != std::string::npos);
    const std::string lines_without = "[source.ld]\nkind = \"tcp\"\nhost = \"h\"\nport = 1\nformat = \"lines\"\n";
    CHECK_THROWS_AS(load_drivers(toml::parse(lines_without), builtin_formats()), ConfigError);  // data formats still need channels
}
