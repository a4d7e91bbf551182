// Results of many stored runs side by side, with mean and sample standard
// deviation per material and lot. The lot is read from the material text
// ("... lot 7 ...", "lot: A12", "...-lot7"); runs without one form their own
// group. Only runs with stored results count; values a run did not determine
// are left out of that quantity's statistics, never taken as zero.
//
// Error policy: store errors come back as an Error; unreadable results of one
// run are skipped and counted in `skipped`.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "daemon/storage/store.hpp"

namespace tensile::report {

// Material and lot split out of the material text.
struct MaterialLot {
    std::string material;
    std::string lot;  // empty: none found
};
MaterialLot split_lot(const std::string& text);

struct SummaryRun {
    std::int64_t id = 0;
    double created_unix_s = 0;
    MaterialLot what;
    std::vector<std::optional<double>> values;  // one per summary_quantities()
};

struct SummaryGroup {
    MaterialLot what;
    std::size_t runs = 0;
    struct Stat {
        std::size_t n = 0;
        double mean = 0, sd = 0;  // sd: NaN when n < 2
    };
    std::vector<Stat> stats;  // one per summary_quantities()
};

struct BatchSummary {
    std::vector<SummaryRun> runs;
    std::vector<SummaryGroup> groups;
    std::size_t skipped = 0;
};

// The result keys summarised, in column order.
const std::vector<std::string>& summary_quantities();

Result<BatchSummary> summarise(storage::Store& store, const storage::RunFilter& filter);
BatchSummary summarise_runs(std::vector<SummaryRun> runs);  // the statistics alone
std::string summary_text(const BatchSummary& summary);

}  // namespace tensile::report
