// The axes and the thinned trace of a stress–strain curve, shared by the SVG
// (svg_curve.cpp) and PDF (pdf_curve.cpp) drawings so both show the same
// ranges, ticks and points.
//
// Error policy: pure; non-finite points are dropped; an empty curve gives an
// empty `points` and the caller says so in its drawing.
#pragma once

#include <cstddef>
#include <vector>

#include "svg_curve.hpp"

namespace tensile::report {

struct CurveAxes {
    std::vector<CurvePoint> points;  // finite points, thinned (see plan_curve)
    double x_min = 0, x_max = 1, x_step = 1;  // strain, %; ticks every x_step from x_min
    double y_min = 0, y_max = 1, y_step = 1;  // stress, MPa
};

// Round-number axes over the curve, and at most `max_points` of its points:
// thinned by a stride keeping the highest stress of each stride, so peaks
// such as ReH and Fm stay on the drawn line.
CurveAxes plan_curve(const std::vector<CurvePoint>& curve, std::size_t max_points);

// A tick's label: "%g", with -0 shown as 0.
std::string tick_label(double v);

}  // namespace tensile::report
