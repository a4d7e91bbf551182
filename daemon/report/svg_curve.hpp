// The stress–strain curve of a run as inline SVG: axes with round-number
// ticks, the curve as one polyline (thinned to at most `max_points` so a long
// run stays a small file), and the detected events as marked, labelled points.
//
// Error policy: non-finite points are skipped; an empty curve gives an SVG
// that says so instead of failing.
#pragma once

#include <string>
#include <vector>

namespace tensile::report {

struct CurvePoint {
    double strain_pct;
    double stress_MPa;
};

struct CurveMark {
    double strain_pct;
    double stress_MPa;
    std::string label;
};

std::string svg_curve(const std::vector<CurvePoint>& curve, const std::vector<CurveMark>& marks,
                      std::size_t max_points = 2000);

// Text made safe for HTML and SVG.
std::string escape_xml(const std::string& text);

}  // namespace tensile::report
