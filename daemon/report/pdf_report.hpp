// The per-run record as a PDF (A4, made with cairo): the same content as the
// HTML record (report_content.hpp: specimen, run, profile, rig and
// instrument classes, results with expanded uncertainty, the stress–strain
// curve as vector graphics with events marked, events, strain rate per
// phase, verification, the safety and responsibility note). The curve starts
// a page of its own so its plot always sits at the same place on that page.
//
// Error policy: as html_report (a run that cannot be read is an Error naming
// it); a cairo failure is an Error with cairo's message. The bytes are
// returned, never written here: the caller puts them in place.
#pragma once

#include <cstdint>
#include <string>

#include "daemon/report/pdf_pages.hpp"
#include "daemon/report/report_content.hpp"
#include "daemon/storage/store.hpp"

namespace tensile::report {

struct PdfRecord {
    std::string bytes;
    int pages = 0;
    int curve_page = 0;  // 1-based
    PageBox plot;        // the plot inside the axes on that page, in points from its top-left corner
};

Result<PdfRecord> pdf_report(storage::Store& store, std::int64_t run, const ReportOptions& options);

// The same from gathered data (tests and other callers that have it already).
Result<PdfRecord> pdf_record(const ReportData& data, std::int64_t run, const ReportOptions& options);

}  // namespace tensile::report
