// Inline SVG stress–strain curve; see svg_curve.hpp.
#include "svg_curve.hpp"

#include "curve_axes.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

namespace tensile::report {

namespace {

constexpr double width = 760, height = 460;
constexpr double left = 70, right = 20, top = 20, bottom = 50;

std::string fmt(double v) {
    char b[32];
    std::snprintf(b, sizeof b, "%.1f", v);
    return b;
}

}  // namespace

std::string escape_xml(const std::string& text) {
    std::string out;
    out.reserve(text.size());
    for (char c : text) {
        switch (c) {
            case '&': out += "&amp;"; break;
            case '<': out += "&lt;"; break;
            case '>': out += "&gt;"; break;
            case '"': out += "&quot;"; break;
            case '\'': out += "&#39;"; break;
            default: out += c;
        }
    }
    return out;
}

std::string svg_curve(const std::vector<CurvePoint>& curve, const std::vector<CurveMark>& marks, std::size_t max_points) {
    const CurveAxes axes = plan_curve(curve, max_points);
    std::ostringstream s;
    s << "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"curve\" viewBox=\"0 0 " << width << ' ' << height
      << "\" width=\"" << width << "\" height=\"" << height << "\" role=\"img\" aria-label=\"stress-strain curve\">\n";
    if (axes.points.empty()) {
        s << "<text x=\"" << width / 2 << "\" y=\"" << height / 2
          << "\" text-anchor=\"middle\">no frames stored for this run</text>\n</svg>\n";
        return s.str();
    }
    const double x_min = axes.x_min, x_max = axes.x_max, xs = axes.x_step;
    const double y_min = axes.y_min, y_max = axes.y_max, ys = axes.y_step;
    const double pw = width - left - right, ph = height - top - bottom;
    auto X = [&](double v) { return left + (v - x_min) / (x_max - x_min) * pw; };
    auto Y = [&](double v) { return top + ph - (v - y_min) / (y_max - y_min) * ph; };

    s << "<rect class=\"plot\" x=\"" << left << "\" y=\"" << top << "\" width=\"" << pw << "\" height=\"" << ph
      << "\" fill=\"#fbfbf8\" stroke=\"#555\"/>\n<g font-size=\"12\" fill=\"#333\">\n";
    for (double v = x_min; v <= x_max + xs / 2; v += xs)
        s << "<line x1=\"" << fmt(X(v)) << "\" y1=\"" << top << "\" x2=\"" << fmt(X(v)) << "\" y2=\"" << top + ph
          << "\" stroke=\"#ddd\"/><text x=\"" << fmt(X(v)) << "\" y=\"" << top + ph + 16 << "\" text-anchor=\"middle\">"
          << tick_label(v) << "</text>\n";
    for (double v = y_min; v <= y_max + ys / 2; v += ys)
        s << "<line x1=\"" << left << "\" y1=\"" << fmt(Y(v)) << "\" x2=\"" << left + pw << "\" y2=\"" << fmt(Y(v))
          << "\" stroke=\"#ddd\"/><text x=\"" << left - 6 << "\" y=\"" << fmt(Y(v) + 4) << "\" text-anchor=\"end\">"
          << tick_label(v) << "</text>\n";
    s << "<text x=\"" << left + pw / 2 << "\" y=\"" << height - 10 << "\" text-anchor=\"middle\">strain, %</text>\n"
      << "<text x=\"16\" y=\"" << top + ph / 2 << "\" text-anchor=\"middle\" transform=\"rotate(-90 16 " << top + ph / 2
      << ")\">stress, MPa</text>\n</g>\n";

    s << "<polyline class=\"trace\" fill=\"none\" stroke=\"#1f4e79\" stroke-width=\"1.5\" points=\"";
    for (const auto& p : axes.points) s << fmt(X(p.strain_pct)) << ',' << fmt(Y(p.stress_MPa)) << ' ';
    s << "\"/>\n<g class=\"marks\" font-size=\"11\">\n";
    int n = 0;
    for (const auto& m : marks) {
        if (!std::isfinite(m.strain_pct) || !std::isfinite(m.stress_MPa)) continue;
        const double x = X(m.strain_pct), y = Y(m.stress_MPa);
        // Labels alternate above and below so neighbouring events stay readable.
        const double dy = (n++ % 2 == 0) ? -8 : 16;
        // Near the right edge the label goes to the left of its point.
        const bool flip = x > left + 0.85 * pw;
        s << "<circle cx=\"" << fmt(x) << "\" cy=\"" << fmt(y) << "\" r=\"4\" fill=\"#b8502a\"/>"
          << "<text x=\"" << fmt(flip ? x - 6 : x + 6) << "\" y=\"" << fmt(y + dy) << "\" fill=\"#7a2f12\""
          << (flip ? " text-anchor=\"end\"" : "") << ">" << escape_xml(m.label)
          << "</text>\n";
    }
    s << "</g>\n</svg>\n";
    return s.str();
}

}  // namespace tensile::report
