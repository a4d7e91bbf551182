// The PDF stress–strain curve; see pdf_curve.hpp.
#include "pdf_curve.hpp"

#include <cmath>

#include "daemon/report/curve_axes.hpp"

namespace tensile::report {

namespace {

void text_at(cairo_t* cr, const std::string& text, double x, double y, double anchor) {
    const std::string t = valid_utf8(text);
    cairo_text_extents_t e;
    cairo_text_extents(cr, t.c_str(), &e);
    cairo_move_to(cr, x - anchor * e.x_advance, y);
    cairo_show_text(cr, t.c_str());
}

}  // namespace

PageBox plot_area(const PageBox& f) { return {f.x + 46, f.y + 6, f.w - 46 - 8, f.h - 6 - 34}; }

void draw_curve(cairo_t* cr, const std::vector<CurvePoint>& curve, const std::vector<CurveMark>& marks, const PageBox& figure) {
    // Up to 4000 points: vector lines stay sharp when zoomed, and the file small.
    const CurveAxes a = plan_curve(curve, 4000);
    const PageBox p = plot_area(figure);
    cairo_save(cr);
    cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, 8);
    if (a.points.empty()) {
        cairo_set_source_rgb(cr, 0.33, 0.33, 0.33);
        cairo_rectangle(cr, p.x, p.y, p.w, p.h);
        cairo_set_line_width(cr, 0.8);
        cairo_stroke(cr);
        text_at(cr, "no frames stored for this run", p.x + p.w / 2, p.y + p.h / 2, 0.5);
        cairo_restore(cr);
        return;
    }
    auto X = [&](double v) { return p.x + (v - a.x_min) / (a.x_max - a.x_min) * p.w; };
    auto Y = [&](double v) { return p.y + p.h - (v - a.y_min) / (a.y_max - a.y_min) * p.h; };

    cairo_set_line_width(cr, 0.4);
    for (double v = a.x_min; v <= a.x_max + a.x_step / 2; v += a.x_step) {
        cairo_set_source_rgb(cr, 0.85, 0.85, 0.85);
        cairo_move_to(cr, X(v), p.y);
        cairo_line_to(cr, X(v), p.y + p.h);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
        text_at(cr, tick_label(v), X(v), p.y + p.h + 11, 0.5);
    }
    for (double v = a.y_min; v <= a.y_max + a.y_step / 2; v += a.y_step) {
        cairo_set_source_rgb(cr, 0.85, 0.85, 0.85);
        cairo_move_to(cr, p.x, Y(v));
        cairo_line_to(cr, p.x + p.w, Y(v));
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
        text_at(cr, tick_label(v), p.x - 4, Y(v) + 3, 1.0);
    }
    cairo_set_source_rgb(cr, 0.33, 0.33, 0.33);
    cairo_set_line_width(cr, 0.8);
    cairo_rectangle(cr, p.x, p.y, p.w, p.h);
    cairo_stroke(cr);
    cairo_set_font_size(cr, 9);
    cairo_set_source_rgb(cr, 0.13, 0.13, 0.13);
    text_at(cr, "strain, %", p.x + p.w / 2, p.y + p.h + 26, 0.5);
    cairo_save(cr);
    cairo_translate(cr, figure.x + 10, p.y + p.h / 2);
    cairo_rotate(cr, -M_PI / 2);
    text_at(cr, "stress, MPa", 0, 0, 0.5);
    cairo_restore(cr);

    // The trace is clipped to the plot, so a stray point cannot draw over the ticks.
    cairo_save(cr);
    cairo_rectangle(cr, p.x, p.y, p.w, p.h);
    cairo_clip(cr);
    cairo_set_source_rgb(cr, trace_colour.r, trace_colour.g, trace_colour.b);
    cairo_set_line_width(cr, 1.1);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_move_to(cr, X(a.points.front().strain_pct), Y(a.points.front().stress_MPa));
    for (const auto& pt : a.points) cairo_line_to(cr, X(pt.strain_pct), Y(pt.stress_MPa));
    cairo_stroke(cr);
    cairo_restore(cr);

    cairo_set_font_size(cr, 7.5);
    std::vector<PageBox> taken;  // labels placed so far
    auto overlaps = [&](const PageBox& r) {
        for (const auto& t : taken)
            if (r.x < t.x + t.w && t.x < r.x + r.w && r.y < t.y + t.h && t.y < r.y + r.h) return true;
        return false;
    };
    for (const auto& m : marks) {
        if (!std::isfinite(m.strain_pct) || !std::isfinite(m.stress_MPa)) continue;
        const double x = X(m.strain_pct), y = Y(m.stress_MPa);
        cairo_new_path(cr);  // no line from the last label to this point
        cairo_set_source_rgb(cr, 0.72, 0.31, 0.16);
        cairo_arc(cr, x, y, 2.6, 0, 2 * M_PI);
        cairo_fill(cr);
        // Events close together (Rp0.2, Rt0.5, the extensometer taken off)
        // would print over each other: try places above and below the point
        // until the label is clear of those placed, left of points near the
        // right edge.
        const std::string label = valid_utf8(m.label);
        cairo_text_extents_t e;
        cairo_text_extents(cr, label.c_str(), &e);
        const bool flip = x > p.x + 0.8 * p.w;
        const double lx = flip ? x - 4 - e.x_advance : x + 4;
        PageBox r{lx, y - 5 - 7.5, e.x_advance, 8};
        for (double dy : {-5.0, 11.0, -14.0, 20.0, -23.0, 29.0}) {
            r.y = y + dy - 7.5;
            if (!overlaps(r)) break;
        }
        taken.push_back(r);
        cairo_set_source_rgb(cr, 0.48, 0.18, 0.07);
        cairo_move_to(cr, r.x, r.y + 7.5);
        cairo_show_text(cr, label.c_str());
    }
    cairo_restore(cr);
}

}  // namespace tensile::report
