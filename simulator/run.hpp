// One simulated test from start to end: advance the machine sample by sample,
// read the sensors, inject faults, encode, hand batches to the sinks, take
// commands from the connections, a control port or the schedule, pace by the
// wall clock when asked. Returns the record the truth file is made from. A
// peer that goes away is waited for (fast mode) or looked for between batches
// (realtime mode).
//
// A run has one link (all channels on one connection) or several (each its
// own channels, sample rate and device clock: separate instruments). Samples
// of all links are taken in time order from the one machine. Commands are
// answered on the link they came from when its format carries text, and on
// the control port when they came from there (the only way for binary).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "encoders.hpp"
#include "faults.hpp"
#include "links.hpp"
#include "machine.hpp"
#include "sensors.hpp"
#include "sinks.hpp"
#include "truth.hpp"
#include "truth_json.hpp"

namespace tensile::sim {

struct Scheduled {
    double time_s = 0;
    std::string line;  // a command line, as the daemon would send it
};

struct RunSettings {
    Format format = Format::lines;
    std::string line_end = "\n";
    double rate_hz = 1000;
    std::uint64_t seed = 1;
    bool realtime = false;
    double speed = 1;
    double after_end_s = 0.5;     // data still streamed after fracture or stop
    double max_time_s = 1800;     // a held test never ends by itself
    std::vector<Scheduled> schedule;
    std::optional<double> extensometer_off_strain;
    bool separate_links = false;  // --link: channels on connections of their own
};

struct RunInputs {
    const MaterialCurve* curve = nullptr;
    MaterialTruth truth;
    SpecimenGeometry geometry{};
    MachineConfig machine;
    SensorConfig sensors;
    std::vector<Fault> faults;
};

struct LinkOut {
    ChannelSet channels = all_channels;
    double rate_hz = 0;         // 0: the run's rate
    DeviceClock clock;
    Sink* sink = nullptr;
    std::string target;         // for the truth file: "tcp 127.0.0.1:7701", "pty /dev/pts/3", "file x.txt"
};

// `links` in the order given: the first takes the answers to scheduled
// commands. `control` (may be null) is a text-only command connection.
RunRecord run_test(const RunInputs& in, const RunSettings& settings, std::vector<LinkOut> links, Sink* control = nullptr);
inline RunRecord run_test(const RunInputs& in, const RunSettings& settings, Sink& sink) {
    return run_test(in, settings, {LinkOut{all_channels, 0, {}, &sink, ""}}, nullptr);
}

}  // namespace tensile::sim
