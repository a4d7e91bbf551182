// The cairo page writer; see pdf_pages.hpp. Layout is our own and plain:
// one column, rules under table rows, no logos or colour bands.
#include "pdf_pages.hpp"

#include <cairo-pdf.h>

#include <algorithm>

namespace tensile::report {

namespace {

cairo_status_t append(void* closure, const unsigned char* data, unsigned int length) {
    static_cast<std::string*>(closure)->append(reinterpret_cast<const char*>(data), length);
    return CAIRO_STATUS_SUCCESS;
}

Rgb colour_of(Tone tone, Rgb plain) {
    if (tone == Tone::good) return {0.11, 0.42, 0.16};
    if (tone == Tone::bad) return {0.64, 0.08, 0.08};
    return plain;
}

constexpr double cell_pad = 4;

}  // namespace

std::string valid_utf8(std::string_view text) {
    std::string out;
    out.reserve(text.size());
    for (std::size_t i = 0; i < text.size();) {
        const auto c = static_cast<unsigned char>(text[i]);
        std::size_t n = c < 0x80 ? 1 : (c >> 5) == 0x6 ? 2 : (c >> 4) == 0xE ? 3 : (c >> 3) == 0x1E ? 4 : 0;
        bool ok = n > 0 && i + n <= text.size() && !(n == 2 && c < 0xC2) && !(n == 4 && c > 0xF4);
        for (std::size_t k = 1; ok && k < n; ++k) ok = (static_cast<unsigned char>(text[i + k]) & 0xC0) == 0x80;
        if (ok && n == 3) {  // no overlong forms, no UTF-16 surrogates
            const auto c1 = static_cast<unsigned char>(text[i + 1]);
            ok = !(c == 0xE0 && c1 < 0xA0) && !(c == 0xED && c1 >= 0xA0);
        }
        if (ok && n == 4) {
            const auto c1 = static_cast<unsigned char>(text[i + 1]);
            ok = !(c == 0xF0 && c1 < 0x90) && !(c == 0xF4 && c1 >= 0x90);
        }
        if (ok && n == 1 && c < 0x20) {  // control characters have no glyph; line breaks and tabs become spaces
            out += c == '\n' || c == '\r' || c == '\t' ? ' ' : '?';
            ++i;
        } else if (ok) {
            out.append(text.substr(i, n));
            i += n;
        } else {
            out += '?';
            ++i;
        }
    }
    return out;
}

PdfPages::PdfPages(const std::string& title, std::string footer_text) : footer_(std::move(footer_text)) {
    surface_ = cairo_pdf_surface_create_for_stream(append, &bytes_, page_w, page_h);
    cairo_pdf_surface_set_metadata(surface_, CAIRO_PDF_METADATA_TITLE, valid_utf8(title).c_str());
    cairo_pdf_surface_set_metadata(surface_, CAIRO_PDF_METADATA_CREATOR, "tensilectl " TENSILED_VERSION);
    cr_ = cairo_create(surface_);
    footer();
}

PdfPages::~PdfPages() {
    if (cr_) cairo_destroy(cr_);
    if (surface_) cairo_surface_destroy(surface_);
}

void PdfPages::font(Tone tone, double size) {
    const bool mono = tone == Tone::code;
    const bool bold = tone == Tone::strong || tone == Tone::good || tone == Tone::bad;
    cairo_select_font_face(cr_, mono ? "DejaVu Sans Mono" : "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr_, size);
}

double PdfPages::advance(const std::string& text) {
    cairo_text_extents_t e;
    cairo_text_extents(cr_, valid_utf8(text).c_str(), &e);
    return e.x_advance;
}

void PdfPages::footer() {
    font(Tone::plain, 7);
    cairo_set_source_rgb(cr_, 0.4, 0.4, 0.4);
    cairo_move_to(cr_, margin_x, page_h - 30);
    cairo_show_text(cr_, valid_utf8(footer_ + " · page " + std::to_string(page_)).c_str());
}

void PdfPages::new_page() {
    cairo_show_page(cr_);
    ++page_;
    y_ = margin_top;
    footer();
}

void PdfPages::need(double height) {
    if (y_ + height > page_h - margin_bottom && y_ > margin_top) new_page();
}

// Words keep their trailing space; a line may break only after a space, so
// spans that touch ("(" then a command) stay together.
std::vector<PdfPages::Line> PdfPages::lay_out(const Spans& spans, double size, double width) {
    std::vector<Line> groups;
    Line group;
    for (const auto& s : spans) {
        std::string w;
        for (char c : valid_utf8(s.text)) {
            if (c != ' ' && c != '\n') {
                w += c;
                continue;
            }
            if (!w.empty()) group.push_back({w, s.tone});
            w.clear();
            if (!group.empty()) {
                group.back().text += ' ';
                groups.push_back(std::move(group));
                group.clear();
            }
        }
        if (!w.empty()) group.push_back({w, s.tone});
    }
    if (!group.empty()) groups.push_back(std::move(group));

    std::vector<Line> lines(1);
    double x = 0;
    for (auto& g : groups) {
        double full = 0;
        for (const auto& w : g) {
            font(w.tone, size);
            full += advance(w.text);
        }
        font(g.back().tone, size);
        const double trimmed = g.back().text.ends_with(' ') ? full - advance(" ") : full;
        if (x > 0 && x + trimmed > width) {
            lines.emplace_back();
            x = 0;
        }
        if (trimmed > width && g.size() == 1) {
            // One word wider than the column (a SHA-256): cut it at character
            // boundaries, never inside a UTF-8 sequence.
            std::string piece;
            for (std::size_t i = 0; i < g[0].text.size(); ++i) {
                const char c = g[0].text[i];
                if ((static_cast<unsigned char>(c) & 0xC0) != 0x80 && !piece.empty() && advance(piece + c) > width) {
                    lines.back().push_back({piece, g[0].tone, 0});
                    lines.emplace_back();
                    piece.clear();
                }
                piece += c;
            }
            lines.back().push_back({piece, g[0].tone, 0});
            x = advance(piece);
            continue;
        }
        for (auto& w : g) {
            font(w.tone, size);
            w.x = x;
            x += advance(w.text);
            lines.back().push_back(std::move(w));
        }
    }
    return lines;
}

double PdfPages::line_width(const Line& line, double size) {
    if (line.empty()) return 0;
    const Word& last = line.back();
    font(last.tone, size);
    std::string t = last.text;
    while (t.ends_with(' ')) t.pop_back();
    return last.x + advance(t);
}

void PdfPages::draw_lines(const std::vector<Line>& lines, double x, double y, double size, Rgb colour, bool right_align,
                          double width) {
    for (std::size_t i = 0; i < lines.size(); ++i) {
        const double shift = right_align ? width - line_width(lines[i], size) : 0;
        for (const auto& w : lines[i]) {
            font(w.tone, size);
            const Rgb c = colour_of(w.tone, colour);
            cairo_set_source_rgb(cr_, c.r, c.g, c.b);
            cairo_move_to(cr_, x + shift + w.x, y + static_cast<double>(i) * line_height(size) + size);
            cairo_show_text(cr_, w.text.c_str());
        }
    }
}

void PdfPages::paragraph(const Spans& spans, double size, Rgb colour) {
    // Line by line, so a long paragraph flows onto the next page.
    for (const auto& line : lay_out(spans, size, width())) {
        need(line_height(size));
        draw_lines({line}, left(), y_, size, colour);
        y_ += line_height(size);
    }
    y_ += size * 0.6;
}

void PdfPages::boxed(const Spans& spans, double size, Rgb border, Rgb fill) {
    const double pad = 8;
    const auto lines = lay_out(spans, size, width() - 2 * pad);
    const double h = static_cast<double>(lines.size()) * line_height(size) + 2 * pad;
    need(h);
    cairo_rectangle(cr_, left(), y_, width(), h);
    cairo_set_source_rgb(cr_, fill.r, fill.g, fill.b);
    cairo_fill_preserve(cr_);
    cairo_set_source_rgb(cr_, border.r, border.g, border.b);
    cairo_set_line_width(cr_, 1.5);
    cairo_stroke(cr_);
    draw_lines(lines, left() + pad, y_ + pad, size, {0.13, 0.13, 0.13});
    y_ += h + 10;
}

void PdfPages::table(const Table& t, double size) {
    const bool pairs = t.columns.empty();
    std::size_t n = t.columns.size();
    for (const auto& r : t.rows) n = std::max(n, r.size());
    if (n == 0) return;
    auto cell_tone = [&](std::size_t col, const Cell& c) { return pairs && col == 0 ? Tone::strong : c.tone; };

    // Natural widths; columns wider than a fair share give up room, in
    // proportion to their width, and wrap.
    std::vector<double> natural(n, 0);
    for (std::size_t i = 0; i < t.columns.size(); ++i) {
        font(Tone::strong, size);
        natural[i] = advance(t.columns[i]) + 2 * cell_pad;
    }
    for (const auto& r : t.rows)
        for (std::size_t i = 0; i < r.size(); ++i) {
            font(cell_tone(i, r[i]), size);
            natural[i] = std::max(natural[i], advance(r[i].text) + 2 * cell_pad);
        }
    std::vector<double> w = natural;
    double total = 0;
    for (double x : natural) total += x;
    if (total > width()) {
        std::vector<bool> fixed(n, false);
        double room = width();
        for (bool changed = true; changed;) {
            changed = false;
            std::size_t flex = 0;
            for (std::size_t i = 0; i < n; ++i) flex += !fixed[i];
            for (std::size_t i = 0; i < n && flex; ++i)
                if (!fixed[i] && natural[i] <= room / static_cast<double>(flex)) {
                    fixed[i] = true, room -= natural[i], changed = true;
                    break;
                }
        }
        double flex_sum = 0;
        for (std::size_t i = 0; i < n; ++i)
            if (!fixed[i]) flex_sum += natural[i];
        for (std::size_t i = 0; i < n; ++i)
            if (!fixed[i]) w[i] = room * natural[i] / flex_sum;
    }

    struct Laid {
        std::vector<std::vector<Line>> cells;
        double h = 0;
    };
    auto lay_row = [&](const std::vector<Cell>& cells, bool header) {
        Laid l{std::vector<std::vector<Line>>(cells.size()), 0};
        std::size_t most = 1;
        for (std::size_t i = 0; i < cells.size(); ++i) {
            const Tone tone = header ? Tone::strong : cell_tone(i, cells[i]);
            l.cells[i] = lay_out({{cells[i].text, tone}}, size, w[i] - 2 * cell_pad);
            most = std::max(most, l.cells[i].size());
        }
        l.h = static_cast<double>(most) * line_height(size) + 2 * 2.5;
        return l;
    };
    auto paint_row = [&](const std::vector<Cell>& cells, const Laid& l, bool header) {
        if (header) {
            cairo_rectangle(cr_, left(), y_, width(), l.h);
            cairo_set_source_rgb(cr_, 0.93, 0.93, 0.92);
            cairo_fill(cr_);
        }
        double x = left();
        for (std::size_t i = 0; i < cells.size(); ++i) {
            draw_lines(l.cells[i], x + cell_pad, y_ + 2.5, size, {0.13, 0.13, 0.13}, cells[i].number && !header,
                       w[i] - 2 * cell_pad);
            x += w[i];
        }
        y_ += l.h;
        cairo_set_source_rgb(cr_, 0.82, 0.82, 0.82);
        cairo_set_line_width(cr_, 0.5);
        cairo_move_to(cr_, left(), y_);
        cairo_line_to(cr_, left() + width(), y_);
        cairo_stroke(cr_);
    };
    std::vector<Cell> header;
    for (const auto& c : t.columns) header.push_back({c});
    const Laid head = lay_row(header, true);
    if (!pairs) {
        need(head.h + 2 * line_height(size) + 5);  // a header never stands alone at a page's foot
        paint_row(header, head, true);
    }
    for (const auto& r : t.rows) {
        const Laid l = lay_row(r, false);
        const int before = page_;
        need(l.h);
        // A table that flows onto a new page repeats its header there.
        if (page_ != before && !pairs) paint_row(header, head, true);
        paint_row(r, l, false);
    }
    y_ += size * 0.8;
}

Result<std::string> PdfPages::finish() {
    const cairo_status_t drawing = cairo_status(cr_);
    cairo_destroy(cr_);
    cr_ = nullptr;
    cairo_surface_finish(surface_);
    const cairo_status_t status = cairo_surface_status(surface_);
    cairo_surface_destroy(surface_);
    surface_ = nullptr;
    if (drawing != CAIRO_STATUS_SUCCESS) return Error{std::string("cairo could not draw the PDF: ") + cairo_status_to_string(drawing)};
    if (status != CAIRO_STATUS_SUCCESS) return Error{std::string("cairo could not make the PDF: ") + cairo_status_to_string(status)};
    return std::move(bytes_);
}

}  // namespace tensile::report
