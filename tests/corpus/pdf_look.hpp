// Looking at a PDF record the way a reader would, with poppler's command-line
// tools (Debian poppler-utils): the curve page rendered to PNG by `pdftoppm
// -png -r 50` and counted pixel by pixel (PNG read back with cairo), and the
// text taken out by `pdftotext -layout` (rows of a table stay on one line). Test-only.
#pragma once

#include <cairo.h>

#include <array>
#include <cctype>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include "daemon/report/pdf_pages.hpp"
#include "support/process.hpp"

namespace tensile::testing {

struct PlotLook {
    bool rendered = false;
    std::string why;          // what went wrong, when not rendered
    int plot_w_px = 0;        // the plot rectangle's width in pixels
    long nonwhite = 0;        // non-white pixels inside the plot rectangle (grid lines count)
    long ink = 0;             // pixels darker than the light grey grid: trace, marks, labels
    int trace_columns = 0;    // pixel columns of the plot holding a trace-blue pixel
    long control_pixels = 0;  // pixels of the blank control strip (right page margin beside the plot)
    long control_nonwhite = 0;
};

// Renders `page` of `pdf` at 50 dpi and looks inside `plot` (points from the
// page's top-left corner) and in the right margin beside it, which our
// layout leaves empty.
inline PlotLook look_at_plot(const std::filesystem::path& pdf, int page, const report::PageBox& plot) {
    PlotLook look;
    const std::filesystem::path prefix = pdf.parent_path() / (pdf.stem().string() + "-curve");
    const auto ran = run_command("pdftoppm -png -r 50 -f " + std::to_string(page) + " -l " + std::to_string(page) +
                                 " -singlefile '" + pdf.string() + "' '" + prefix.string() + "'");
    if (ran.code != 0) {
        look.why = "pdftoppm failed: " + ran.out;
        return look;
    }
    const std::string png = prefix.string() + ".png";
    cairo_surface_t* img = cairo_image_surface_create_from_png(png.c_str());
    if (cairo_surface_status(img) != CAIRO_STATUS_SUCCESS) {
        look.why = "cannot read " + png;
        cairo_surface_destroy(img);
        return look;
    }
    cairo_surface_flush(img);
    const int w = cairo_image_surface_get_width(img), h = cairo_image_surface_get_height(img);
    const int stride = cairo_image_surface_get_stride(img);
    const unsigned char* data = cairo_image_surface_get_data(img);
    const auto format = cairo_image_surface_get_format(img);
    // A4 at 50 dpi is 413.4 × 584.6 pixels, rounded up by pdftoppm; anything else is not our page.
    if (w < 413 || w > 414 || h < 584 || h > 585 || (format != CAIRO_FORMAT_RGB24 && format != CAIRO_FORMAT_ARGB32)) {
        look.why = "unexpected image " + std::to_string(w) + "×" + std::to_string(h);
        cairo_surface_destroy(img);
        return look;
    }
    const double px = 50.0 / 72.0;  // pixels per point
    auto pixel = [&](int x, int y) {
        const auto v = *reinterpret_cast<const std::uint32_t*>(data + y * stride + 4 * x);  // native-endian xRGB
        return std::array<int, 3>{static_cast<int>((v >> 16) & 0xff), static_cast<int>((v >> 8) & 0xff), static_cast<int>(v & 0xff)};
    };
    auto white = [](const std::array<int, 3>& c) { return c[0] > 245 && c[1] > 245 && c[2] > 245; };
    // Inside the frame line of the plot (1 pixel in), so the axes' box is not counted.
    const int x0 = static_cast<int>(plot.x * px) + 2, x1 = static_cast<int>((plot.x + plot.w) * px) - 2;
    const int y0 = static_cast<int>(plot.y * px) + 2, y1 = static_cast<int>((plot.y + plot.h) * px) - 2;
    look.plot_w_px = x1 - x0;
    for (int x = x0; x < x1; ++x) {
        bool trace = false;
        for (int y = y0; y < y1; ++y) {
            const auto c = pixel(x, y);
            look.nonwhite += !white(c);
            look.ink += c[0] < 190 || c[1] < 190 || c[2] < 190;
            // The trace's dark blue, however thinned by anti-aliasing, is
            // bluer than red by a margin; the grey grid and the rust event
            // marks are not.
            trace = trace || (c[2] - c[0] > 25 && c[2] < 235);
        }
        look.trace_columns += trace;
    }
    const int cx0 = static_cast<int>((report::PdfPages::page_w - report::PdfPages::margin_x + 8) * px);
    const int cx1 = static_cast<int>((report::PdfPages::page_w - 8) * px);
    for (int x = cx0; x < cx1; ++x)
        for (int y = y0; y < y1; ++y) {
            ++look.control_pixels;
            look.control_nonwhite += !white(pixel(x, y));
        }
    cairo_surface_destroy(img);
    std::filesystem::remove(png);
    look.rendered = true;
    return look;
}

// The PDF's text with every run of white space made one space, so sentences
// that wrapped onto several lines can be searched for whole.
inline std::string pdf_text(const std::filesystem::path& pdf) {
    const auto ran = run_command("pdftotext -layout -enc UTF-8 '" + pdf.string() + "' -");
    if (ran.code != 0) return "pdftotext failed: " + ran.out;
    std::string out;
    for (char c : ran.out) {
        const bool space = std::isspace(static_cast<unsigned char>(c)) != 0;
        if (space && (out.empty() || out.back() == ' ')) continue;
        out += space ? ' ' : c;
    }
    return out;
}

}  // namespace tensile::testing
