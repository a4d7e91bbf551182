// Final results of the analyzer: values that need the whole curve (Fm and
// the strain at it, elongations at fracture, the n-value) and a summary of
// what was found live. See analyzer.hpp.
#include <algorithm>
#include <cmath>
#include <cstdio>

#include "analyzer.hpp"
#include "least_squares.hpp"

namespace tensile {

namespace {

std::string fmt(const char* format, double v) {
    char buf[512];
    std::snprintf(buf, sizeof buf, format, v);
    return buf;
}

// The top of the force–strain curve between rows first..last: a cubic fitted
// by least squares (x centred on the raw maximum and scaled), its highest
// stationary point inside the range. The cubic term takes up the curve's
// asymmetry about Fm that would pull a parabola's vertex aside. Empty when the
// fit has no maximum inside the range.
struct Peak {
    double strain, force;
};
std::optional<Peak> fitted_peak(const History& h, std::size_t first, std::size_t last, double x0) {
    double scale = 0;
    for (std::size_t k = first; k <= last; ++k)
        if (std::isfinite(h.strain[k])) scale = std::max(scale, std::abs(h.strain[k] - x0));
    if (!(scale > 0)) return std::nullopt;
    double a[4][5] = {};
    for (std::size_t k = first; k <= last; ++k) {
        if (!std::isfinite(h.strain[k])) continue;
        const double u = (h.strain[k] - x0) / scale, y = h.force_N[k];
        double p[7] = {1, u, u * u, u * u * u, 0, 0, 0};
        for (int j = 4; j < 7; ++j) p[j] = p[j - 1] * u;
        for (int r = 0; r < 4; ++r) {
            for (int c = 0; c < 4; ++c) a[r][c] += p[r + c];
            a[r][4] += p[r] * y;
        }
    }
    for (int col = 0; col < 4; ++col) {  // Gaussian elimination, partial pivoting
        int piv = col;
        for (int r = col + 1; r < 4; ++r)
            if (std::abs(a[r][col]) > std::abs(a[piv][col])) piv = r;
        if (!(std::abs(a[piv][col]) > 1e-300)) return std::nullopt;
        std::swap(a[piv], a[col]);
        for (int r = 0; r < 4; ++r) {
            if (r == col) continue;
            const double m = a[r][col] / a[col][col];
            for (int c = col; c < 5; ++c) a[r][c] -= m * a[col][c];
        }
    }
    double c[4];
    for (int r = 0; r < 4; ++r) c[r] = a[r][4] / a[r][r];
    auto value = [&](double u) { return c[0] + u * (c[1] + u * (c[2] + u * c[3])); };
    const double u_lo = (h.strain[first] - x0) / scale, u_hi = (h.strain[last] - x0) / scale;
    // Roots of c1 + 2·c2·u + 3·c3·u² = 0.
    double roots[2];
    int count = 0;
    if (std::abs(c[3]) < 1e-12 * (std::abs(c[2]) + 1e-300)) {
        if (c[2] != 0) roots[count++] = -c[1] / (2 * c[2]);
    } else {
        const double disc = 4 * c[2] * c[2] - 12 * c[3] * c[1];
        if (disc >= 0) {
            roots[count++] = (-2 * c[2] + std::sqrt(disc)) / (6 * c[3]);
            roots[count++] = (-2 * c[2] - std::sqrt(disc)) / (6 * c[3]);
        }
    }
    std::optional<Peak> best;
    for (int k = 0; k < count; ++k) {
        const double u = roots[k];
        if (u < u_lo || u > u_hi || !(2 * c[2] + 6 * c[3] * u < 0)) continue;
        if (!best || value(u) > best->force) best = Peak{x0 + u * scale, value(u)};
    }
    return best;
}

}  // namespace

Results Analyzer::finish() {
    Results r;
    r.S0_mm2 = geometry_.S0_mm2;
    r.L0_mm = geometry_.L0_mm;
    r.warnings = warnings_;
    if (frames_skipped_ > 0)
        r.warnings.push_back(std::to_string(frames_skipped_) +
                             " frames skipped: no time or force, or time going backwards");
    if (history_.size() < 3) {
        r.warnings.push_back("too few frames to analyse");
        return r;
    }
    const auto& h = history_;
    const std::size_t onset = breaker_.onset_index().value_or(h.size() - 1);
    // An extensometer that lets go at the break is no hand-over.
    if (!crosshead_note_.empty() && lost_at_ && *lost_at_ <= onset) r.warnings.push_back(crosshead_note_);

    // The curve never left the provisional line (a brittle break, or the run
    // stopped early): settle E on what there is.
    if (!modulus_locked_) {
        std::size_t n = std::min(onset + 1, lost_at_.value_or(h.size()));
        if (auto fit = find_modulus(h.strain_upto(n), h.stress_upto(n), h.max_upto(n), profile_)) modulus_ = fit;
        if (modulus_) {
            modulus_locked_ = true;
            std::vector<Event> ignored;
            scan_offsets(modulus_->first + 1, h.size(), ignored);
        }
    }
    if (modulus_) {
        r.E_MPa = modulus_->E();
        r.E_r2 = modulus_->r2;
        r.E_cv_pct = modulus_->cv_pct;
        r.E_window_low_MPa = modulus_->low_MPa;
        r.E_window_high_MPa = modulus_->high_MPa;
        r.toe_strain = modulus_->toe_strain();
        if (modulus_->r2 < profile_.modulus_min_r2)
            r.warnings.push_back(fmt("the modulus fit is poor (r² %.4f): the curve has no clearly straight part above "
                                     "the noise, as with annealed soft alloys; E and the offset strengths that use it "
                                     "are uncertain; consider a fixed modulus window in the profile",
                                     modulus_->r2));
    } else {
        r.warnings.push_back("modulus not determined: no straight rising part found");
    }
    r.Rp = proofs_;
    r.Rt = totals_;
    for (const auto& p : r.Rp)
        if (!p.MPa && modulus_) r.warnings.push_back(fmt("Rp%g not reached", p.offset_pct));

    yield_.finish(h);
    if (const auto& y = yield_.points()) {
        r.ReH_MPa = y->ReH_MPa;
        r.ReL_MPa = y->ReL_MPa;
        if (y->Ae) r.Ae_pct = 100.0 * *y->Ae;
        else r.warnings.push_back("yielding had not ended when the run stopped: Ae not determined");
    }

    // Fm: highest force, after the end of yielding for discontinuous yielding.
    // The raw maximum of a noisy signal sits a few noise SDs above the true
    // top, so the top is fitted (a cubic over the band within δ of the raw
    // maximum) and its peak taken when the fit finds one; a flat top then
    // gives its middle, as ISO 6892-1 asks for a plateau at Fm.
    std::size_t m = force_peak_from();
    for (std::size_t k = m; k <= onset; ++k)
        if (h.force_N[k] > h.force_N[m]) m = k;
    double Fm = h.force_N[m];
    double strain_at_Fm = h.strain[m];
    const double noise = force_noise_N();
    if (std::isfinite(h.strain[m])) {
        // The span from the first to the last frame within the band: noise
        // makes any contiguous walk outwards from the raw maximum stop early.
        const double band = std::max(0.001 * Fm, 6.0 * noise);
        std::size_t lo = m, hi = m;
        for (std::size_t k = force_peak_from(); k <= onset; ++k) {
            if (!std::isfinite(h.strain[k]) || h.force_N[k] < Fm - band) continue;
            lo = std::min(lo, k);
            hi = std::max(hi, k);
        }
        if (hi - lo >= 8)
            if (auto peak = fitted_peak(h, lo, hi, h.strain[m]); peak && peak->force >= Fm - band) {
                Fm = std::min(Fm, peak->force);
                strain_at_Fm = peak->strain;
            }
    }
    r.Fm_N = Fm;
    r.Rm_MPa = Fm / geometry_.S0_mm2;
    if (r.ReH_MPa && *r.Rm_MPa < *r.ReH_MPa)
        r.warnings.push_back("force after yielding stayed below the upper yield force; Fm taken after the end of yielding");

    const double E = modulus_ ? modulus_->E() : absent;
    if (std::isfinite(strain_at_Fm) && modulus_) {
        r.Agt_pct = 100.0 * (strain_at_Fm - toe());
        r.Ag_pct = *r.Agt_pct - 100.0 * *r.Rm_MPa / E;
        r.Ag_source = lost_at_ && *lost_at_ <= m ? StrainSource::crosshead : StrainSource::extensometer;
    }

    if (breaker_.onset_index() && std::isfinite(h.strain[onset])) {
        // At: total extension at the moment of fracture. A: At less the elastic
        // part, the software's estimate of the elongation measured on the pieces.
        r.At_pct = 100.0 * (h.strain[onset] - toe());
        if (modulus_) r.A_pct = *r.At_pct - 100.0 * h.stress_MPa[onset] / E;
        r.At_source = lost_at_ && *lost_at_ <= onset ? StrainSource::crosshead : StrainSource::extensometer;
        r.fracture_force_N = h.force_N[onset];
    } else if (!breaker_.onset_index()) {
        r.warnings.push_back("no fracture detected: At and A not determined");
    } else {
        r.warnings.push_back("no strain at fracture (extensometer lost, no crosshead): At and A not determined");
    }

    // n-value (ISO 10275, regression from memory): ln true stress on ln true
    // plastic strain, over the plastic strain range n_from..n_to, ending at Ag
    // when Ag is smaller.
    if (modulus_ && r.Ag_pct) {
        const double from = profile_.n_from_pct / 100.0;
        const double to = std::min(profile_.n_to_pct, *r.Ag_pct) / 100.0;
        std::vector<double> lx, ly;
        if (to - from >= 0.01) {
            for (std::size_t k = 0; k <= m; ++k) {
                const double e = h.strain[k] - toe();
                if (!std::isfinite(e)) continue;
                const double ep = e - h.stress_MPa[k] / E;
                if (ep < from || ep > to) continue;
                const double true_stress = h.stress_MPa[k] * (1.0 + e);
                const double true_plastic = std::log1p(e) - true_stress / E;
                if (!(true_plastic > 0) || !(true_stress > 0)) continue;
                lx.push_back(std::log(true_plastic));
                ly.push_back(std::log(true_stress));
            }
        }
        if (auto fit = fit_line(lx, ly)) r.n_value = fit->slope;
        else r.warnings.push_back(fmt("n-value not determined: uniform plastic strain %.3g %% does not reach the range", *r.Ag_pct));
    }

    for (int p = 0; p < rate_phase_count; ++p) r.rate[p] = compliance_[p];
    return r;
}

}  // namespace tensile
