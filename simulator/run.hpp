// One simulated test from start to end: advance the machine sample by sample,
// read the sensors, inject faults, encode, hand batches to the sink, take
// commands from the connection or the schedule, pace by the wall clock when
// asked. Returns the record the truth file is made from. A peer that goes away
// is waited for (fast mode) or looked for between batches (realtime mode).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "encoders.hpp"
#include "faults.hpp"
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
};

struct RunInputs {
    const MaterialCurve* curve = nullptr;
    MaterialTruth truth;
    SpecimenGeometry geometry{};
    MachineConfig machine;
    SensorConfig sensors;
    std::vector<Fault> faults;
};

RunRecord run_test(const RunInputs& in, const RunSettings& settings, Sink& sink);

}  // namespace tensile::sim
