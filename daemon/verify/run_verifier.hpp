// Verification of a stored run: today's code against the answers stored when
// the run was made (ISO/IEC 17025 asks labs to show validated software gives
// the same results after every update).
//
//  1. Integrity: the SHA-256 over the run's raw bytes and frames, taken when
//     the run closed, is taken again; a difference means the stored data
//     changed after the fact.
//  2. Results: the stored frames go through today's engine with the stored
//     specimen and profile (the extensometer hand-over applied where it was);
//     every event and result is compared with what was stored. Identical is
//     the goal; a relative tolerance can be given.
//  3. Raw bytes, when stored: re-parsed with today's parsers, time bases and
//     aligner under the stored config, tared as the run was, and compared
//     with the stored frames; the results of those frames are compared too.
//     The live time base had seen data from before arming, so times and
//     interpolated values may differ in the last digits: this check uses a
//     tolerance of its own and says so.
//
// Error policy: everything is a value; a run that cannot be verified (still
// live, unreadable specimen or profile) gives an outcome saying why.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "daemon/storage/store.hpp"

namespace tensile {

struct VerifyOptions {
    double tolerance_rel = 0;     // 0: identical
    bool raw = true;              // also re-parse raw bytes when stored
    double raw_tolerance_rel = 1e-4;
};

struct VerifyRow {
    std::string quantity;
    std::optional<double> stored, now;
    bool ok = true;
};

struct VerifyReport {
    std::int64_t run = 0;
    std::string outcome;          // identical, within tolerance, mismatch, data changed, not verifiable
    bool integrity_checked = false;
    bool integrity_ok = true;
    std::vector<VerifyRow> rows;  // results and events
    std::vector<VerifyRow> raw_rows;
    std::vector<std::string> notes;
    [[nodiscard]] bool passed() const { return outcome == "identical" || outcome == "within tolerance"; }
};

VerifyReport verify_run(storage::Store& store, std::int64_t run, const VerifyOptions& options = {});

// Files the outcome in the run's verification history.
storage::Status record_verification(storage::Store& store, const VerifyReport& report);

// A table for people: quantity, stored, now, difference.
std::string report_text(const VerifyReport& report);

}  // namespace tensile
