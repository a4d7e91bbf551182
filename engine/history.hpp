// The curve of a run so far, kept by the analyzer: one row per frame with
// time, force, the strain actually used (extensometer, or crosshead-derived
// after the extensometer is lost), stress, and the running maximum of stress.
// Raw strain here is not toe-corrected; the modulus fit gives the toe later.
//
// Memory stays bounded through a run of any length: past the analyzer's row
// limit, compact() merges the older rows into groups of equal size (each row
// the mean of the frames it stands for) and keeps the newest rows frame by
// frame, so detectors looking back a short way always see every frame. A
// 1 kHz test of several minutes never reaches the limit; a 10 kHz one of a
// quarter of an hour keeps a row every 10 ms or so in its older part, far
// finer than anything the results depend on.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tensile {

// Where the rows of a history went in a compaction: row k is now row map(k).
struct RowMap {
    std::size_t merged = 0;       // old merged rows [0, merged) ...
    std::size_t ratio = 1;        // ... went `ratio` to a new row
    std::size_t single_from = 0;  // old single rows [merged, single_from) ...
    std::size_t group = 1;        // ... went `group` to a new row
    std::size_t kept_at = 0;      // old rows from single_from on start here, one to one
    [[nodiscard]] std::size_t operator()(std::size_t k) const {
        if (k < merged) return k / ratio;
        const std::size_t first_single = (merged + ratio - 1) / ratio;
        if (k < single_from) return first_single + (k - merged) / group;
        return kept_at + (k - single_from);
    }
};

struct History {
    std::vector<double> time_s;
    std::vector<double> force_N;
    std::vector<double> strain;       // engineering strain, fraction, not toe-corrected
    std::vector<double> stress_MPa;   // engineering stress F / S0
    std::vector<double> running_max;  // running maximum of stress_MPa (non-decreasing)
    std::vector<double> extension_mm; // extensometer as read (NaN once lost)
    std::vector<double> crosshead_mm; // crosshead as read (NaN when not fitted)

    void reserve(std::size_t n) {
        for (auto* v : {&time_s, &force_N, &strain, &stress_MPa, &running_max, &extension_mm, &crosshead_mm})
            v->reserve(n);
    }

    [[nodiscard]] std::size_t size() const { return time_s.size(); }
    [[nodiscard]] bool empty() const { return time_s.empty(); }

    void append(double t, double f, double e, double s, double ext, double xh) {
        time_s.push_back(t);
        extension_mm.push_back(ext);
        crosshead_mm.push_back(xh);
        force_N.push_back(f);
        strain.push_back(e);
        stress_MPa.push_back(s);
        running_max.push_back(running_max.empty() || s > running_max.back() ? s : running_max.back());
    }

    // Frames each of the older, merged rows stands for (1 before any compaction).
    [[nodiscard]] std::size_t stride() const { return stride_; }
    // Rows [0, merged_rows()) are merged; later rows are one frame each.
    [[nodiscard]] std::size_t merged_rows() const { return merged_rows_; }

    // Merges older rows so at most `target` rows remain, keeping at least the
    // newest `keep` rows as single frames. Returns where each old row went.
    RowMap compact(std::size_t target, std::size_t keep);

    [[nodiscard]] std::span<const double> strain_upto(std::size_t n) const { return {strain.data(), n}; }
    [[nodiscard]] std::span<const double> stress_upto(std::size_t n) const { return {stress_MPa.data(), n}; }
    [[nodiscard]] std::span<const double> max_upto(std::size_t n) const { return {running_max.data(), n}; }

private:
    std::size_t stride_ = 1;
    std::size_t merged_rows_ = 0;
};

// Linear interpolation between rows i-1 and i at fraction f in [0, 1].
inline double between(const std::vector<double>& v, std::size_t i, double f) {
    return v[i - 1] + f * (v[i] - v[i - 1]);
}

}  // namespace tensile
