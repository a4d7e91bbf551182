// Wires one source to one parser and one time base: bytes in, stamped samples
// out, with the parser told whenever the stream breaks. This is the glue the
// daemon repeats per source; it holds no policy of its own.
//
// Samples are handed to `on_samples` synchronously, in arrival order, from the
// io_context thread; the consumer must not block (queue them, bounded).
// Fault totals are logged every `report_every_s` at most, and only when they
// changed, never once per bad byte. The source's handlers point back here, so
// stop() and let the io_context finish (or destroy it) before destroying this.
#pragma once

#include <functional>
#include <memory>
#include <span>
#include <vector>

#include <spdlog/spdlog.h>

#include "byte_source.hpp"
#include "parser.hpp"
#include "time_base.hpp"

namespace tensile::drivers {

// One line naming what went wrong since `before` ("" when nothing did).
std::string describe_new_faults(const ParserCounters& before, const ParserCounters& now, const FormatConfig& cfg);

class Acquisition {
public:
    struct Handlers {
        std::function<void(std::span<const Sample>)> on_samples;
        std::function<void(const GapEvent&)> on_gap;
        std::function<void(SourceState)> on_state;
        std::function<void(std::string_view)> on_message;  // `#` lines: acknowledgements, banners
    };

    Acquisition(std::shared_ptr<ByteSource> source, std::unique_ptr<Parser> parser, TimeBaseConfig time,
                std::shared_ptr<spdlog::logger> log = nullptr, double report_every_s = 5.0);

    void start(Handlers h);
    void stop() { source_->stop(); }

    [[nodiscard]] const ParserCounters& counters() const { return parser_->counters(); }
    [[nodiscard]] ByteSource& source() { return *source_; }
    [[nodiscard]] const TimeBase& time_base() const { return time_; }

private:
    void on_bytes(std::span<const std::byte> bytes, double arrival_s);
    void report(double now_s);

    std::shared_ptr<ByteSource> source_;
    std::unique_ptr<Parser> parser_;
    TimeBase time_;
    std::shared_ptr<spdlog::logger> log_;
    double report_every_s_;
    double last_report_s_ = -1e300;
    ParserCounters reported_;
    Handlers handlers_;
    std::vector<Sample> batch_;
};

}  // namespace tensile::drivers
