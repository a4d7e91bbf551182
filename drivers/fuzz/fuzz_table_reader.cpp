// Fuzz target for the CSV reader of `tensilectl analyze`
// (daemon/offline/table_reader): each input is read as a table with the
// header-driven layout, as a table without a time column at a known rate,
// with a specimen (stress and strain may stand in for force and extension),
// and through the pipelined reader the command uses (two threads, bounded
// queue). The first line is also tried as a --columns spec. Every input must
// end in frames or one message; the two readers must agree on the outcome
// and the frame count. An exception escaping, a crash or a sanitizer report
// is a bug.
#include <cstdint>
#include <string_view>

#include "daemon/offline/pipelined_scan.hpp"
#include "daemon/offline/table_reader.hpp"

namespace {

struct CountingSink : tensile::FrameSink {
    std::size_t frames = 0;
    void take(const tensile::Frame&) override { ++frames; }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    const std::string_view text(reinterpret_cast<const char*>(data), size);
    const auto whole = tensile::read_table(text);
    if (!whole && whole.error().empty()) __builtin_trap();

    CountingSink sink;
    const auto piped = tensile::scan_table_pipelined(text, {}, sink);
    if (static_cast<bool>(whole) != static_cast<bool>(piped)) __builtin_trap();
    if (whole && (whole->frames.size() != piped->frames || sink.frames != piped->frames)) __builtin_trap();
    if (!whole && whole.error() != piped.error()) __builtin_trap();

    tensile::TableLayout by_rate;
    by_rate.rate_hz = 1000;
    (void)tensile::read_table(text, by_rate);

    // With the specimen known, stress and strain columns stand in for force
    // and extension (the other path through the reader).
    tensile::TableLayout specimen;
    specimen.area_mm2 = 80;
    specimen.gauge_length_mm = 50;
    (void)tensile::read_table(text, specimen);

    const auto first_line = text.substr(0, text.find('\n'));
    if (auto spec = tensile::parse_column_spec(first_line)) (void)tensile::read_table(text.substr(first_line.size()), *spec);
    (void)tensile::estimate_rows(text);
    return 0;
}
