// The per-run report: everything a reviewer needs about one stored run in one
// self-contained HTML file (inline CSS, inline SVG curve, no external assets):
// specimen, profile, rig, results with expanded uncertainty, events,
// strain-rate compliance per phase, the curve with events marked, the
// verification status, and the safety and responsibility note. The words
// and numbers come from report_content.hpp, shared with the PDF record.
//
// The curve is drawn from the stored frames run through today's analyzer
// (with the hand-over applied where the run had it), i.e. the same strain the
// results were computed on.
//
// Error policy: a run that cannot be read gives an Error naming the run and
// what was missing; parts that are absent (no results yet, no verification)
// are shown as absent in the report, never invented.
#pragma once

#include <cstdint>
#include <string>

#include "daemon/storage/store.hpp"
#include "report_content.hpp"

namespace tensile::report {

Result<std::string> html_report(storage::Store& store, std::int64_t run, const ReportOptions& options);

}  // namespace tensile::report
