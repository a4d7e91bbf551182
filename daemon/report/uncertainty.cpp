// Error budget arithmetic; see uncertainty.hpp for the source and its status.
#include "uncertainty.hpp"

#include <cmath>
#include <cstdio>

namespace tensile::report {

BudgetKind budget_of(const std::string& key) {
    if (key == "ReH_MPa" || key == "ReL_MPa" || key == "Rm_MPa" || key == "Fm_N") return BudgetKind::stress_from_force;
    if (key.rfind("Rp", 0) == 0 || key.rfind("Rt", 0) == 0) return BudgetKind::stress_from_strain;
    if (key == "Ag_pct" || key == "Agt_pct" || key == "A_pct" || key == "At_pct") return BudgetKind::elongation;
    return BudgetKind::none;
}

std::optional<double> relative_U_pct(BudgetKind kind, const UncertaintyInputs& in) {
    const double f = in.force_class_pct, e = in.extensometer_class_pct, s = in.S0_tolerance_pct, l = in.L0_tolerance_pct;
    double sq = 0;
    switch (kind) {
        case BudgetKind::stress_from_force: sq = f * f + s * s; break;
        case BudgetKind::stress_from_strain: sq = f * f + s * s + e * e + l * l; break;
        case BudgetKind::elongation: sq = e * e + l * l; break;
        case BudgetKind::none: return std::nullopt;
    }
    // The strain-rate term belongs to the material, so only to strengths.
    if (kind != BudgetKind::elongation) sq += in.rate_term_pct * in.rate_term_pct;
    return std::sqrt(sq);
}

std::string budget_note(const UncertaintyInputs& in) {
    char buf[900];
    std::snprintf(buf, sizeof buf,
                  "Expanded uncertainty U (k = 2, about 95 %%) from an error budget after the informative annex on "
                  "uncertainty of ISO 6892-1 (1998 edition): root sum of squares of force class %.3g %% (ISO 7500-1), "
                  "S0 tolerance %.3g %%, and for proof and total-extension strengths also extensometer class %.3g %% "
                  "(ISO 9513) and L0 tolerance %.3g %%; strain-rate term %.3g %%. With class 1 instruments and 1 %% "
                  "tolerances this gives about 1.4 %% for ReH, ReL, Rm and 2 %% for Rp0.2, the annex's figures "
                  "(partly verified; the class-to-limit mapping and the 1 %% tolerances are from memory). "
                  "Elongations use extensometer class and L0 tolerance only: our own extension of the approach, "
                  "not in the annex. E, n and Ae are not estimated. The lab's own budget under its accredited "
                  "procedures takes precedence.",
                  in.force_class_pct, in.S0_tolerance_pct, in.extensometer_class_pct, in.L0_tolerance_pct, in.rate_term_pct);
    return buf;
}

}  // namespace tensile::report
