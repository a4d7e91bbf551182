// The test piece: its cross-section (rectangular, round, tube, or S0 given),
// gauge length L0 (given, or proportional 5.65·√S0 / 11.3·√S0 per ISO 6892-1)
// and parallel length Lc. All lengths in mm, areas in mm². Bad dimensions are
// reported by check(), which names the field and what was expected.
#pragma once

#include <optional>
#include <string>

#include "result.hpp"

namespace tensile {

enum class SectionShape { given_area, rectangular, round, tube };

struct Specimen {
    std::string label;             // free text: specimen id, lot, material
    std::string material;
    SectionShape shape = SectionShape::given_area;
    double width_mm = 0;           // rectangular
    double thickness_mm = 0;       // rectangular
    double diameter_mm = 0;        // round; outer diameter for a tube
    double wall_mm = 0;            // tube
    double area_mm2 = 0;           // given_area
    double gauge_length_mm = 0;    // L0; 0 with a proportional factor set means 'compute'
    double proportional_factor = 0;  // 5.65 or 11.3 when L0 is proportional
    double parallel_length_mm = 0;   // Lc; 0 when unknown

    [[nodiscard]] double cross_section_mm2() const;
    [[nodiscard]] double original_gauge_length_mm() const;
};

// Checks the dimensions; on success gives the specimen with S0 and L0 worked out.
struct SpecimenGeometry {
    double S0_mm2;
    double L0_mm;
    double Lc_mm;  // 0 when unknown
};
Result<SpecimenGeometry> check(const Specimen& specimen);

// ISO 6892-1 proportional gauge length: k·√S0 (k = 5.65 or 11.3).
double proportional_gauge_length(double S0_mm2, double k = 5.65);

}  // namespace tensile
