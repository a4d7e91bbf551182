// libFuzzer target for one wire-format parser (FUZZ_FORMAT picks which).
// Besides "no crash, no sanitizer report", it checks the property every parser
// promises: feeding the input whole or split at a point taken from the input
// gives the same samples and counters. A difference aborts.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "drivers/parser_registry.hpp"

using namespace tensile::drivers;

namespace {

FormatConfig config() {
    FormatConfig f;
    f.format = FUZZ_FORMAT;
    f.max_line = 128;
    ChannelSpec force;
    force.name = "force";
    force.field = 1;
    force.key = "F";
    force.scale = f.format == "binary" ? 0.001 : 1.0;
    force.min = -1e6;
    force.max = 1e6;
    ChannelSpec ext;
    ext.name = "extension";
    ext.unit = tensile::LengthUnit::millimetre;
    ext.field = 2;
    ext.key = "ext";
    ext.scale = f.format == "binary" ? 0.0001 : 1.0;
    if (f.format != "control") f.channels = {force, ext};  // a command port carries no channels
    if (f.format == "lines") f.time_field = 0;
    return f;
}

bool same(const std::vector<Sample>& a, const std::vector<Sample>& b) {
    if (a.size() != b.size()) return false;
    for (std::size_t i = 0; i < a.size(); ++i) {
        const bool v = (std::isnan(a[i].value) && std::isnan(b[i].value)) || a[i].value == b[i].value;
        if (!v || a[i].channel != b[i].channel || a[i].flags != b[i].flags || a[i].stamp != b[i].stamp) return false;
    }
    return true;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    static const ParserRegistry formats = builtin_formats();
    static const FormatConfig cfg = config();
    const auto bytes = std::as_bytes(std::span<const std::uint8_t>(data, size));

    auto whole = formats.make(cfg);
    std::vector<Sample> a;
    whole->feed(bytes, a);
    whole->break_stream();

    auto split = formats.make(cfg);
    std::vector<Sample> b;
    const std::size_t cut = size ? (data[0] * 7919u) % (size + 1) : 0;
    split->feed(bytes.first(cut), b);
    split->feed(bytes.subspan(cut), b);
    split->break_stream();

    if (!same(a, b) || !(whole->counters() == split->counters())) std::abort();
    return 0;
}
