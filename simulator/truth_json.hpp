// The ground-truth JSON written by --truth: the result keys of the analysis
// (E_MPa, Rp0.2_MPa, ... with values from the model), the times the run
// reached yield, maximum force and fracture, every command it obeyed and every
// fault it injected. A value the model lacks is left out, never written as null.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "faults.hpp"
#include "machine.hpp"
#include "truth.hpp"

namespace tensile::sim {

struct CommandLog {
    double time_s = 0;
    std::string line;    // as received or scheduled
    std::string answer;  // "#ok ..." or "#error ..."
    std::string from;    // "connection" or "schedule"
};

// One connection of a run with separate links.
struct LinkRecord {
    std::string channels;      // "force" or "force,crosshead"
    std::string target;
    double rate_hz = 0;
    double clock_offset_s = 0;
    double clock_drift_ppm = 0;
    std::uint64_t samples = 0;
    std::uint64_t bytes = 0;   // bytes written to the connection (garbage included)
};

struct RunRecord {
    std::string material;
    std::string description;
    std::uint64_t seed = 0;
    std::string format;
    double rate_hz = 0;
    std::vector<Mark> marks;
    std::optional<double> fracture_s;
    std::optional<double> extensometer_off_s;
    double end_s = 0;
    std::uint64_t samples = 0;
    std::vector<Fault> faults;
    std::vector<std::string> fault_links;  // with separate links: the link's channels, per fault
    std::vector<CommandLog> commands;
    std::vector<LinkRecord> links;         // only with separate links
};

nlohmann::ordered_json truth_json(const MaterialTruth& truth, const RunRecord& run);

}  // namespace tensile::sim
