// Two-variable least squares for the crosshead model; see crosshead_strain.hpp.
#include "crosshead_strain.hpp"

#include <cmath>

namespace tensile {

std::optional<CrossheadModel> fit_crosshead_model(std::span<const double> ext, std::span<const double> xh,
                                                  std::span<const double> force, std::size_t first,
                                                  std::size_t last, double fallback_a) {
    double n = 0, me = 0, mx = 0, mf = 0;
    for (std::size_t i = first; i < last; ++i) {
        if (!std::isfinite(ext[i]) || !std::isfinite(xh[i]) || !std::isfinite(force[i])) continue;
        n += 1;
        me += ext[i];
        mx += xh[i];
        mf += force[i];
    }
    if (n < 10) return std::nullopt;
    me /= n;
    mx /= n;
    mf /= n;
    double see = 0, sff = 0, sef = 0, sex = 0, sfx = 0;
    for (std::size_t i = first; i < last; ++i) {
        if (!std::isfinite(ext[i]) || !std::isfinite(xh[i]) || !std::isfinite(force[i])) continue;
        const double de = ext[i] - me, df = force[i] - mf, dx = xh[i] - mx;
        see += de * de;
        sff += df * df;
        sef += de * df;
        sex += de * dx;
        sfx += df * dx;
    }
    if (!(see > 0) || !(sff > 0)) return std::nullopt;
    CrossheadModel m;
    // When extension and force are almost collinear (elastic data only), the
    // two slopes can't be separated; take a from the geometry and fit C alone.
    const double correlation = sef / std::sqrt(see * sff);
    if (std::abs(correlation) < 0.995) {
        const double det = see * sff - sef * sef;
        m.a = (sex * sff - sfx * sef) / det;
        m.C = (sfx * see - sex * sef) / det;
    }
    if (!(m.a > 0.2) || !std::isfinite(m.C) || std::abs(correlation) >= 0.995) {
        m.a = fallback_a;
        m.C = (sfx - m.a * sef) / sff;
        m.from_fit = false;
    }
    m.b = mx - m.a * me - m.C * mf;
    return m;
}

}  // namespace tensile
