// The per-run HTML record; see run_report.hpp. Lays out report_content.hpp
// with our own plain style; every text is escaped on the way out.
#include "run_report.hpp"

#include <sstream>

namespace tensile::report {

namespace {

const char* style = R"css(
body{font-family:system-ui,sans-serif;margin:24px auto;max-width:900px;color:#222;line-height:1.4}
h1{font-size:1.5em;margin-bottom:0}h2{font-size:1.1em;border-bottom:1px solid #bbb;margin-top:1.6em}
table{border-collapse:collapse;margin:6px 0}td,th{padding:3px 10px;border-bottom:1px solid #e2e2e2;text-align:left}
td.n{text-align:right;font-variant-numeric:tabular-nums}.sub{color:#555}
.caution{border:2px solid #9a6b00;background:#fff8e6;padding:8px 14px;margin:14px 0}
.fine{font-size:.85em;color:#444}.bad{color:#a31515;font-weight:bold}.good{color:#1d6b2a;font-weight:bold}
@media print{.caution{break-inside:avoid}svg{max-width:100%}}
)css";

const char* class_of(Tone t) {
    switch (t) {
        case Tone::good: return "good";
        case Tone::bad: return "bad";
        default: return "";
    }
}

void spans(std::ostringstream& o, const Spans& ss) {
    for (const auto& s : ss) {
        const std::string t = escape_xml(s.text);
        switch (s.tone) {
            case Tone::plain: o << t; break;
            case Tone::strong: o << "<strong>" << t << "</strong>"; break;
            case Tone::code: o << "<code>" << t << "</code>"; break;
            case Tone::good:
            case Tone::bad: o << "<span class=\"" << class_of(s.tone) << "\">" << t << "</span>"; break;
        }
    }
}

void table(std::ostringstream& o, const Table& t) {
    o << "<table" << (t.name.empty() ? "" : " class=\"" + t.name + "\"") << ">\n";
    if (!t.columns.empty()) {
        o << "<tr>";
        for (const auto& c : t.columns) o << "<th>" << escape_xml(c) << "</th>";
        o << "</tr>\n";
    }
    for (const auto& row : t.rows) {
        o << "<tr>";
        for (std::size_t i = 0; i < row.size(); ++i) {
            const Cell& c = row[i];
            // A key/value table has its keys in the first column as headers.
            const char* tag = t.columns.empty() && i == 0 ? "th" : "td";
            std::string cls = c.number ? "n" : "";
            if (c.tone == Tone::good || c.tone == Tone::bad) cls += (cls.empty() ? "" : " ") + std::string(class_of(c.tone));
            o << '<' << tag << (cls.empty() ? "" : " class=\"" + cls + "\"") << '>' << escape_xml(c.text) << "</" << tag << '>';
        }
        o << "</tr>\n";
    }
    o << "</table>\n";
}

}  // namespace

Result<std::string> html_report(storage::Store& store, std::int64_t run, const ReportOptions& options) {
    auto data = gather_report_data(store, run);
    if (!data) return Error{data.error()};
    const ReportContent c = report_content(*data, run, options);
    std::ostringstream o;
    o << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>" << escape_xml(c.short_title)
      << "</title>\n<style>" << style << "</style>\n</head>\n<body>\n<h1>" << escape_xml(c.title) << "</h1>\n<p class=\"sub\">"
      << escape_xml(c.subtitle) << "</p>\n";
    for (const auto& b : c.blocks) {
        switch (b.kind) {
            case Block::Kind::heading: o << "<h2>"; spans(o, b.spans); o << "</h2>\n"; break;
            case Block::Kind::text: o << "<p>"; spans(o, b.spans); o << "</p>\n"; break;
            case Block::Kind::fine: o << "<p class=\"fine\">"; spans(o, b.spans); o << "</p>\n"; break;
            case Block::Kind::caution: o << "<div class=\"caution\">"; spans(o, b.spans); o << "</div>\n"; break;
            case Block::Kind::table: table(o, b.table); break;
            case Block::Kind::curve: o << svg_curve(c.curve, c.marks); break;
        }
    }
    o << "</body>\n</html>\n";
    return o.str();
}

}  // namespace tensile::report
