// What the report shows, gathered from the store in one pass so the HTML
// writer is a pure function of it. See run_report.hpp.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "daemon/storage/store.hpp"
#include "engine/profile.hpp"
#include "svg_curve.hpp"

namespace tensile::report {

struct VerificationRow {
    double unix_s = 0;
    std::string software_version, outcome;
};

struct SourceLine {
    std::string name, kind, format, channels;
};

struct ReportData {
    storage::RunRecord run;
    nlohmann::json specimen = nlohmann::json::object();
    nlohmann::json results = nlohmann::json::object();  // empty object: none stored
    std::optional<Profile> profile;
    std::string rig_name;
    std::vector<SourceLine> sources;
    std::string config_note;  // why the rig is not shown, when it is not
    std::vector<CurvePoint> curve;
    std::vector<CurveMark> marks;
    std::vector<VerificationRow> verifications;  // newest first
};

Result<ReportData> gather_report_data(storage::Store& store, std::int64_t run);

}  // namespace tensile::report
