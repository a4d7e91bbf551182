// The per-run PDF record; see pdf_report.hpp. Our own plain layout: title,
// the caution box, then the content's blocks in order on A4 pages.
#include "pdf_report.hpp"

#include "daemon/report/pdf_curve.hpp"

namespace tensile::report {

namespace {

constexpr double body = 9.5, small = 7.5, table_size = 8.5;
constexpr double figure_h = 315;  // the curve's figure box, full width

}  // namespace

Result<PdfRecord> pdf_record(const ReportData& data, std::int64_t run, const ReportOptions& options) {
    const ReportContent c = report_content(data, run, options);
    PdfRecord rec;
    PdfPages pages(c.short_title, "tensiled run " + std::to_string(run) + " · " + data.run.summary.material);
    pages.paragraph({{c.title, Tone::strong}}, 16);
    pages.paragraph({{c.subtitle}}, body, {0.33, 0.33, 0.33});
    bool first_heading = true;
    for (std::size_t i = 0; i < c.blocks.size(); ++i) {
        const Block& b = c.blocks[i];
        const bool curve_next = i + 1 < c.blocks.size() && c.blocks[i + 1].kind == Block::Kind::curve;
        switch (b.kind) {
            case Block::Kind::heading:
                if (curve_next) pages.new_page();  // the curve and its heading open a page
                else {
                    pages.skip(first_heading ? 2 : 8);
                    pages.need(42);  // no heading alone at a page's foot
                }
                first_heading = false;
                pages.paragraph({{b.spans.empty() ? "" : b.spans.front().text, Tone::strong}}, 11.5);
                break;
            case Block::Kind::text: pages.paragraph(b.spans, body); break;
            case Block::Kind::fine: pages.paragraph(b.spans, small, {0.27, 0.27, 0.27}); break;
            case Block::Kind::caution: pages.boxed(b.spans, body, {0.6, 0.42, 0.0}, {1.0, 0.97, 0.9}); break;
            case Block::Kind::table: pages.table(b.table, table_size); break;
            case Block::Kind::curve: {
                const PageBox figure{pages.left(), pages.y(), pages.width(), figure_h};
                draw_curve(pages.cr(), c.curve, c.marks, figure);
                rec.curve_page = pages.page();
                rec.plot = plot_area(figure);
                pages.skip(figure_h + 12);
                break;
            }
        }
    }
    rec.pages = pages.page();
    auto bytes = pages.finish();
    if (!bytes) return Error{bytes.error()};
    rec.bytes = std::move(*bytes);
    return rec;
}

Result<PdfRecord> pdf_report(storage::Store& store, std::int64_t run, const ReportOptions& options) {
    auto data = gather_report_data(store, run);
    if (!data) return Error{data.error()};
    return pdf_record(*data, run, options);
}

}  // namespace tensile::report
