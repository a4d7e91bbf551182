// Expanded uncertainty of tensile results from an error budget, in the spirit
// of the informative annex on measurement uncertainty of ISO 6892-1 (1998
// edition; REFERENCES ISO6892-uncert, partly verified, the rest from memory).
//
// The annex combines the material-independent error limits of the
// instruments and of the specimen measurement as a root sum of squares and
// reads the result as an expanded uncertainty at about 95 % (k = 2):
//   ReH, ReL, Rm:  U = √(force² + S0²)
//   Rp, Rt:        U = √(force² + S0² + extensometer² + L0²)
// all in % of the value; an optional strain-rate term m adds as √(U² + m²).
// With class 1 force (ISO 7500-1) and class 1 extensometer (ISO 9513) and 1 %
// for S0 and L0 this gives the published figures: about 1.4 % for ReH, ReL,
// Rm and 2 % for Rp0.2.
//
// Our own extension of the same approach, not from the annex (say so in the
// report): elongations (Ag, Agt, A, At) take √(extensometer² + L0²).
// E, n and Ae get no estimate here.
//
// Error policy: pure arithmetic; inputs are checked by the caller (classes
// and tolerances must be positive).
#pragma once

#include <optional>
#include <string>

namespace tensile::report {

struct UncertaintyInputs {
    double force_class_pct = 1.0;        // ISO 7500-1 class: 0.5, 1, 2, 3 (ISO 6892-1 asks class 1 or better, from memory)
    double extensometer_class_pct = 1.0; // ISO 9513 class: 0.2, 0.5, 1, 2 (class 1 or better for Rp, Rt, ReH, ReL, from memory)
    double S0_tolerance_pct = 1.0;       // error limit of the measured cross-section (the annex's 1 %, from memory)
    double L0_tolerance_pct = 1.0;       // error limit of the marked gauge length (the annex's 1 %, from memory)
    double rate_term_pct = 0.0;          // material-dependent strain-rate term m; 0 when not known
};

enum class BudgetKind { stress_from_force, stress_from_strain, elongation, none };

// Which budget a result key (Rm_MPa, Rp0.2_MPa, Agt_pct...) takes.
BudgetKind budget_of(const std::string& key);

// Relative expanded uncertainty in %, or nothing when no budget applies.
std::optional<double> relative_U_pct(BudgetKind kind, const UncertaintyInputs& in);

// Where the numbers come from, for the report's footnote.
std::string budget_note(const UncertaintyInputs& in);

}  // namespace tensile::report
