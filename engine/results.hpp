// Final results of a run in standard symbols and units. A value the run did not
// determine is an empty optional, never a guess; warnings say why.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "profile.hpp"

namespace tensile {

enum class StrainSource { extensometer, crosshead };
const char* name_of(StrainSource source);

struct OffsetValue {
    double offset_pct;              // x in Rp x / Rt x
    std::optional<double> MPa;
};

struct RateCompliance {
    double seconds_checked = 0;     // time spent in the phase with a rate known
    double seconds_inside = 0;      // of which inside the band
    [[nodiscard]] double share_inside() const { return seconds_checked > 0 ? seconds_inside / seconds_checked : 0; }
};

struct Results {
    double S0_mm2 = 0;
    double L0_mm = 0;

    std::optional<double> E_MPa;
    std::optional<double> E_r2;
    std::optional<double> E_cv_pct;        // ASTM E111 coefficient of variation of the slope
    std::optional<double> E_window_low_MPa, E_window_high_MPa;
    std::optional<double> toe_strain;      // strain-axis intercept removed from all strains

    std::vector<OffsetValue> Rp;
    std::vector<OffsetValue> Rt;
    std::optional<double> ReH_MPa, ReL_MPa, Ae_pct;
    std::optional<double> Fm_N, Rm_MPa;
    std::optional<double> Ag_pct, Agt_pct, At_pct, A_pct;
    std::optional<double> n_value;
    std::optional<double> fracture_force_N;

    StrainSource Ag_source = StrainSource::extensometer;
    StrainSource At_source = StrainSource::extensometer;

    RateCompliance rate[rate_phase_count];
    std::vector<std::string> warnings;

    [[nodiscard]] std::optional<double> proof(double offset_pct) const;
    [[nodiscard]] std::optional<double> total(double extension_pct) const;
};

}  // namespace tensile
