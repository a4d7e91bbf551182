// The stress–strain curve drawn with cairo as vector graphics into a box on
// a PDF page: the same axes, ticks and thinned points as the HTML record's
// SVG (curve_axes.hpp), events as marked and labelled points.
//
// Error policy: non-finite points and marks are skipped; an empty curve
// draws the empty plot with a sentence saying no frames were stored.
#pragma once

#include <cairo.h>

#include <vector>

#include "daemon/report/pdf_pages.hpp"
#include "daemon/report/svg_curve.hpp"

namespace tensile::report {

// Where the plot itself (inside the axes) sits in a figure box: room on the
// left for the stress ticks and title, below for the strain ticks and title.
PageBox plot_area(const PageBox& figure);

// The trace's colour, a dark blue; tests look for it in the rendered page.
inline constexpr Rgb trace_colour{0.12, 0.31, 0.47};

void draw_curve(cairo_t* cr, const std::vector<CurvePoint>& curve, const std::vector<CurveMark>& marks,
                const PageBox& figure);

}  // namespace tensile::report
