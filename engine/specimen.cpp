// Cross-section and gauge length of a specimen; see specimen.hpp.
#include "specimen.hpp"

#include <cmath>
#include <numbers>

namespace tensile {

double proportional_gauge_length(double S0_mm2, double k) { return k * std::sqrt(S0_mm2); }

double Specimen::cross_section_mm2() const {
    switch (shape) {
        case SectionShape::given_area: return area_mm2;
        case SectionShape::rectangular: return width_mm * thickness_mm;
        case SectionShape::round: return std::numbers::pi / 4.0 * diameter_mm * diameter_mm;
        case SectionShape::tube: {
            const double inner = diameter_mm - 2.0 * wall_mm;
            return std::numbers::pi / 4.0 * (diameter_mm * diameter_mm - inner * inner);
        }
    }
    return 0;
}

double Specimen::original_gauge_length_mm() const {
    if (proportional_factor > 0) return proportional_gauge_length(cross_section_mm2(), proportional_factor);
    return gauge_length_mm;
}

namespace {
bool positive(double v) { return std::isfinite(v) && v > 0; }
std::string expected_positive(const char* field, double v) {
    return std::string(field) + " must be a positive length in mm, got " + std::to_string(v);
}
}  // namespace

Result<SpecimenGeometry> check(const Specimen& s) {
    switch (s.shape) {
        case SectionShape::given_area:
            if (!positive(s.area_mm2)) return Error{"area (S0) must be a positive area in mm², got " + std::to_string(s.area_mm2)};
            break;
        case SectionShape::rectangular:
            if (!positive(s.width_mm)) return Error{expected_positive("width", s.width_mm)};
            if (!positive(s.thickness_mm)) return Error{expected_positive("thickness", s.thickness_mm)};
            break;
        case SectionShape::round:
            if (!positive(s.diameter_mm)) return Error{expected_positive("diameter", s.diameter_mm)};
            break;
        case SectionShape::tube:
            if (!positive(s.diameter_mm)) return Error{expected_positive("outer diameter", s.diameter_mm)};
            if (!positive(s.wall_mm)) return Error{expected_positive("wall", s.wall_mm)};
            if (2 * s.wall_mm >= s.diameter_mm)
                return Error{"wall must be less than half the outer diameter, got wall " + std::to_string(s.wall_mm) +
                             " mm for outer diameter " + std::to_string(s.diameter_mm) + " mm"};
            break;
    }
    if (s.proportional_factor != 0 && !positive(s.proportional_factor))
        return Error{"proportional gauge-length factor must be positive (5.65 or 11.3), got " +
                     std::to_string(s.proportional_factor)};
    const double S0 = s.cross_section_mm2();
    const double L0 = s.original_gauge_length_mm();
    if (!positive(L0)) return Error{"gauge length (L0) must be a positive length in mm, got " + std::to_string(L0)};
    if (s.parallel_length_mm < 0 || !std::isfinite(s.parallel_length_mm))
        return Error{"parallel length (Lc) must be a positive length in mm or 0 for unknown, got " +
                     std::to_string(s.parallel_length_mm)};
    return SpecimenGeometry{S0, L0, s.parallel_length_mm};
}

}  // namespace tensile
