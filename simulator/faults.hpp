// Faults to inject, each from a spec KIND@START[+DURATION][:PARAM] (seconds):
//   disconnect@T+D      drop the connection at T, lose D s of data, accept a reconnect
//   garbage@T+D:RATE    random bytes between records, RATE bytes/s (default 1000)
//   torn@T+D:SHARE      that share of records cut short (default 0.1), losing their line end
//   nan@T+D:CHANNEL     channel reads nan (binary: the out-of-range count)
//   over@T+D:CHANNEL    channel reads OVER (out of range)
//   sensor-stop@T+D:CHANNEL  channel freezes at its last value
//   stall@T+D           device falls silent for D s, then sends the backlog at once
//   clock-jump@T:SECONDS     device clock jumps by SECONDS (may be negative)
// A bad spec gives an Error naming the part that was wrong and what was expected.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "engine/result.hpp"
#include "random.hpp"
#include "sample.hpp"

namespace tensile::sim {

enum class FaultKind { disconnect, garbage, torn, nan, over, sensor_stop, stall, clock_jump };
const char* name_of(FaultKind kind);

struct Fault {
    FaultKind kind = FaultKind::garbage;
    double start_s = 0;
    double duration_s = 0;
    double amount = 0;                      // garbage rate, torn share, clock jump
    ChannelId channel = ChannelId::force;   // nan, over, sensor-stop
    std::string spec;                       // as given
    // What was done, for the truth file.
    std::uint64_t records_affected = 0;
    std::uint64_t bytes_injected = 0;
    // Torn records, as a reader sees them: a torn record has lost its line
    // end, so it runs into the next whole record, which is lost with it.
    std::uint64_t torn_runs = 0;        // runs of consecutive torn records (one bad line each on a text link)
    std::uint64_t fragment_bytes = 0;   // bytes the torn records left on the wire
    std::uint64_t glued_bytes = 0;      // bytes of the whole records the runs ran into

    [[nodiscard]] bool active(double t) const { return t >= start_s && t < start_s + duration_s; }
};

Result<Fault> parse_fault(std::string_view spec);
const char* name_of(ChannelId channel);

class FaultPlan {
public:
    FaultPlan(std::vector<Fault> faults, std::uint64_t seed, double sample_rate_hz);

    // Sample-level faults: NaN, OVER, frozen channel, clock jumps.
    void apply(Sample& s, double t);
    // Byte-level faults on the record just appended at out[record_start...].
    void after_record(std::string& out, std::size_t record_start, double t);
    [[nodiscard]] bool disconnected(double t) const;  // inside a disconnect window
    [[nodiscard]] bool stalled(double t) const;       // inside a stall window
    // Counts a record lost to a disconnect (for the truth file).
    void count_lost(double t);

    [[nodiscard]] const std::vector<Fault>& faults() const { return faults_; }

private:
    std::vector<Fault> faults_;
    Random rng_;
    double rate_hz_;
    double garbage_credit_ = 0;
    Fault* tearing_ = nullptr;  // the fault that tore the previous record, if it was torn
    ChannelReading frozen_[3]{};
    bool frozen_valid_[3]{};
};

}  // namespace tensile::sim
