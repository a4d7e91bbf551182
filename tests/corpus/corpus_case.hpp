// One case of the regression corpus: its line in cases.txt, the rig config that
// reads its stream, and the run of that stream through the real pipeline
// (parsers, time base, aligner: FramePipeline; then the Analyzer) written as
// the expectation text kept beside the stream.
//
// Error policy: a malformed cases.txt line or a missing file throws
// std::runtime_error naming the case and what was expected; the test reports it.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "engine/event.hpp"
#include "engine/frame.hpp"
#include "engine/results.hpp"
#include "engine/specimen.hpp"

namespace tensile::corpus {

struct CaseSpec {
    std::string name;
    std::string format;               // lines | keyvalue | binary
    std::vector<std::string> checks;  // E, Rp, Rm, ReH, ReL
    std::string simulator_options;
    [[nodiscard]] std::filesystem::path stream(const std::filesystem::path& dir) const {
        return dir / (name + (format == "binary" ? ".bin" : ".txt"));
    }
    [[nodiscard]] std::filesystem::path expected(const std::filesystem::path& dir) const { return dir / (name + ".expected"); }
    [[nodiscard]] std::filesystem::path truth(const std::filesystem::path& dir) const { return dir / (name + ".truth.json"); }
};

std::vector<CaseSpec> load_cases(const std::filesystem::path& manifest);

// The rig config (TOML) of a simulator stream in `format`, as a lab would write it.
std::string rig_config_text(const std::string& format);

struct CaseRun {
    std::string text;      // the expectation text (see corpus_case.cpp for its layout)
    std::string results_json;  // results as tensilectl analyze --json keys
    std::vector<Frame> frames;  // as fed to the analyzer (times from the first frame)
    std::vector<Event> events;
    Results results;
    SpecimenGeometry geometry{};
};

// Feeds the stream through FramePipeline and Analyzer. Arrival times are
// synthesised at a steady byte rate over the run's duration (`duration_s`,
// from the truth file), in chunks as a serial read would deliver them.
CaseRun run_case(const CaseSpec& spec, const std::filesystem::path& dir, double duration_s);

// Token-wise comparison: words must be equal, numbers within `rel` relative
// (or 1e-12 absolute). Returns an empty string when they agree, else the first
// differing line of each.
std::string compare_texts(const std::string& expected, const std::string& actual, double rel);

}  // namespace tensile::corpus
