// A small page writer over cairo's PDF surface: A4 pages with our margins and
// a footer, a cursor that moves down the page, wrapped text in spans of
// different tones, boxed paragraphs, and tables whose rows flow onto further
// pages with their header repeated. The PDF is written into memory, so the
// caller decides where the bytes go (tensilectl writes a temp file and
// renames it into place).
//
// Fonts come from fontconfig through cairo's simple font API (DejaVu Sans on
// Debian: fonts-dejavu-core), which covers the symbols we print (±, ², –, ≥).
//
// Error policy: text is made valid UTF-8 before cairo sees it; cairo records
// any other first failure in the context or surface, and finish() reports it
// as an Error naming cairo's message. Nothing here throws.
#pragma once

#include <cairo.h>

#include <string>
#include <string_view>
#include <vector>

#include "daemon/report/report_content.hpp"
#include "engine/result.hpp"

namespace tensile::report {

// A rectangle on a page in points (1/72 in), from the page's top-left corner.
struct PageBox {
    double x = 0, y = 0, w = 0, h = 0;
};

struct Rgb {
    double r = 0, g = 0, b = 0;
};

class PdfPages {
public:
    static constexpr double page_w = 595.276, page_h = 841.89;  // A4: 210 mm × 297 mm
    static constexpr double margin_x = 56.7, margin_top = 56.7, margin_bottom = 62.4;  // 20 mm, 22 mm below

    PdfPages(const std::string& title, std::string footer_text);
    ~PdfPages();
    PdfPages(const PdfPages&) = delete;
    PdfPages& operator=(const PdfPages&) = delete;

    cairo_t* cr() { return cr_; }
    int page() const { return page_; }  // 1-based
    double y() const { return y_; }
    void skip(double dy) { y_ += dy; }
    double left() const { return margin_x; }
    double width() const { return page_w - 2 * margin_x; }
    void new_page();
    // Starts a new page unless `height` points are left on this one.
    void need(double height);

    // Wrapped text over the full width; `size` in points.
    void paragraph(const Spans& spans, double size, Rgb colour = {0.13, 0.13, 0.13});
    // Wrapped text in a tinted box with a border, kept on one page.
    void boxed(const Spans& spans, double size, Rgb border, Rgb fill);
    void table(const Table& table, double size);

    // The document's bytes, or the error cairo met on the way.
    Result<std::string> finish();

private:
    struct Word {
        std::string text;  // with its trailing space, if any
        Tone tone = Tone::plain;
        double x = 0;
    };
    using Line = std::vector<Word>;

    void font(Tone tone, double size);
    double advance(const std::string& text);
    std::vector<Line> lay_out(const Spans& spans, double size, double width);
    double line_width(const Line& line, double size);
    void draw_lines(const std::vector<Line>& lines, double x, double y, double size, Rgb colour, bool right_align = false,
                    double width = 0);
    void footer();

    std::string bytes_;
    std::string footer_;
    cairo_surface_t* surface_ = nullptr;
    cairo_t* cr_ = nullptr;
    int page_ = 1;
    double y_ = margin_top;
};

inline double line_height(double size) { return size * 1.35; }

// `text` with each byte that is not part of valid UTF-8 replaced by '?':
// cairo stops drawing the whole document at the first invalid string, and a
// label or material text from a rig may hold anything.
std::string valid_utf8(std::string_view text);

}  // namespace tensile::report
