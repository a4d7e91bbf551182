// The curve of a run so far, kept by the analyzer: one row per frame with
// time, force, the strain actually used (extensometer, or crosshead-derived
// after the extensometer is lost), stress, and the running maximum of stress.
// Raw strain here is not toe-corrected; the modulus fit gives the toe later.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tensile {

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

    [[nodiscard]] std::span<const double> strain_upto(std::size_t n) const { return {strain.data(), n}; }
    [[nodiscard]] std::span<const double> stress_upto(std::size_t n) const { return {stress_MPa.data(), n}; }
    [[nodiscard]] std::span<const double> max_upto(std::size_t n) const { return {running_max.data(), n}; }
};

// Linear interpolation between rows i-1 and i at fraction f in [0, 1].
inline double between(const std::vector<double>& v, std::size_t i, double f) {
    return v[i - 1] + f * (v[i] - v[i - 1]);
}

}  // namespace tensile
