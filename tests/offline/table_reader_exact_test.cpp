// Exactness of the table reader against the C library's strtod (C locale,
// correctly rounded: the independent reference here), over every kind of cell
// a lab file may hold and wherever a row falls in the text: plain numbers of
// 1 to 15 digits, long mantissas, exponents, signs, leading zeros, decimal
// commas, empty cells, CRLF, a missing last newline, rows shifted through
// every alignment, and the text cut at every byte. Bad cells must still be
// refused with the line and column named.
#include <catch2/catch.hpp>

#include <clocale>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <iomanip>
#include <string>
#include <vector>

#include "daemon/offline/pipelined_scan.hpp"
#include "daemon/offline/table_reader.hpp"

using namespace tensile;

namespace {

// A small fixed generator, so a failure reproduces.
struct Lcg {
    std::uint64_t s;
    unsigned next(unsigned n) {
        s = s * 6364136223846793005ull + 1442695040888963407ull;
        return static_cast<unsigned>((s >> 33) % n);
    }
};

std::string digits(Lcg& g, unsigned n) {
    std::string d;
    for (unsigned i = 0; i < n; ++i) d += static_cast<char>('0' + g.next(10));
    return d;
}

// One cell, written with '.' as the point; the caller swaps in ','.
std::string cell(Lcg& g) {
    const unsigned kind = g.next(12);
    std::string sign = g.next(3) == 0 ? "-" : "";
    if (kind == 0) return "";                                                // empty: absent
    if (kind == 1) return sign + digits(g, 1 + g.next(15));                  // integer
    if (kind == 2) return sign + digits(g, 16 + g.next(10));                 // long integer
    if (kind == 3) return sign + digits(g, 1 + g.next(8)) + "." + digits(g, 10 + g.next(14));  // long mantissa
    if (kind == 4) return sign + digits(g, 1 + g.next(4)) + "." + digits(g, g.next(6)) + (g.next(2) ? "e" : "E") +
                          (g.next(3) == 0 ? "-" : g.next(2) ? "+" : "") + digits(g, 1 + g.next(2));  // exponent
    if (kind == 5) return "+" + digits(g, 1 + g.next(5)) + "." + digits(g, g.next(6));       // explicit plus
    if (kind == 6) return sign + "000" + digits(g, g.next(4)) + "." + digits(g, 1 + g.next(8));  // leading zeros
    if (kind == 7) return sign + digits(g, 1 + g.next(6)) + ".";                           // "5."
    if (kind == 8) return sign + "." + digits(g, 1 + g.next(8));                           // ".5"
    const unsigned whole = g.next(8), fraction = g.next(16 - whole);                       // plain, <= 15 digits
    return sign + (whole ? digits(g, whole) : "0") + "." + digits(g, fraction);
}

double reference(std::string c) {
    for (auto& ch : c) if (ch == ',') ch = '.';
    return std::strtod(c.c_str(), nullptr);
}

bool same(double a, double b) {
    if (std::isnan(a) || std::isnan(b)) return std::isnan(a) && std::isnan(b);
    return std::memcmp(&a, &b, sizeof a) == 0;
}

struct Written {
    std::string text;
    std::vector<std::vector<std::string>> rows;  // the cells of each data row
};

// `rows` data rows of four cells after a header; CRLF on some lines, a
// comment now and then, extra columns on some rows.
Written write(Lcg& g, std::size_t rows, char sep, bool decimal_comma, std::size_t pad) {
    Written w;
    w.text = "# " + std::string(pad, 'p') + "\n";
    const std::string s(1, sep);
    w.text += "time_s" + s + "force_N" + s + "extension_mm" + s + "crosshead_mm\n";
    for (std::size_t i = 0; i < rows; ++i) {
        std::vector<std::string> r;
        for (int c = 0; c < 4; ++c) {
            std::string v = i == 0 ? "1.5" : cell(g);  // the first row sets the decimal mark
            if (decimal_comma)
                for (auto& ch : v) if (ch == '.') ch = ',';
            r.push_back(v);
        }
        // A row of tabs alone is a blank line to the reader, not a row.
        if (r[0].empty() && r[1].empty() && r[2].empty() && r[3].empty()) r[0] = "0";
        w.text += r[0] + s + r[1] + s + r[2] + s + r[3];
        if (g.next(7) == 0) w.text += s + "note" + s + "1.5e300";
        w.text += g.next(5) == 0 ? "\r\n" : "\n";
        if (g.next(50) == 0) w.text += "# comment\n\n";
        w.rows.push_back(r);
    }
    return w;
}

void check_all(const Written& w, const Table& t) {
    REQUIRE(t.frames.size() == w.rows.size());
    for (std::size_t i = 0; i < w.rows.size(); ++i) {
        const Frame& f = t.frames[i];
        const double got[4] = {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm};
        for (std::size_t c = 0; c < 4; ++c) {
            const double want = w.rows[i][c].empty() ? std::nan("") : reference(w.rows[i][c]);
            if (!same(got[c], want))
                FAIL_CHECK(std::setprecision(17) << "row " << i << " column " << c + 1 << " cell '" << w.rows[i][c] << "': read "
                                  << got[c] << ", strtod gives " << want);
        }
    }
}

}  // namespace

TEST_CASE("every kind of cell reads to strtod's double, with each separator and decimal mark") {
    std::setlocale(LC_NUMERIC, "C");
    struct Kind {
        char sep;
        bool decimal_comma;
    };
    Lcg g{12345};
    for (const Kind k : {Kind{',', false}, Kind{';', false}, Kind{';', true}, Kind{'\t', false}, Kind{'\t', true}}) {
        INFO("separator " << int(k.sep) << (k.decimal_comma ? " with decimal comma" : ""));
        const Written w = write(g, 3000, k.sep, k.decimal_comma, 0);
        const auto t = read_table(w.text);
        REQUIRE(t);
        check_all(w, *t);
    }
}

TEST_CASE("rows read the same at every alignment in the text and with the text cut at every byte") {
    Lcg g{777};
    for (std::size_t pad = 0; pad < 70; ++pad) {
        const Written w = write(g, 12, ',', false, pad);
        const auto t = read_table(w.text);
        REQUIRE(t);
        check_all(w, *t);
    }
    // Cut anywhere: either the rows read so far plus a shorter last row, or
    // a clear refusal of the last line, never a wrong value.
    const Written w = write(g, 20, ';', true, 3);
    const std::size_t body = w.text.find('\n', w.text.find('\n') + 1) + 1;  // after the header
    for (std::size_t cut = body + 1; cut <= w.text.size(); ++cut) {
        const std::string text = w.text.substr(0, cut);
        const auto t = read_table(text);
        INFO("cut at byte " << cut << " of " << w.text.size());
        if (!t) {
            CHECK_THAT(t.error(), Catch::Contains("columns") || Catch::Contains("is not a number"));
            continue;
        }
        // The same rows as far as they were read; the last may be shortened.
        REQUIRE(t->frames.size() <= w.rows.size());
        for (std::size_t i = 0; i + 1 < t->frames.size(); ++i) {
            const Frame& f = t->frames[i];
            const double got[4] = {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm};
            for (std::size_t c = 0; c < 4; ++c)
                CHECK(same(got[c], w.rows[i][c].empty() ? std::nan("") : reference(w.rows[i][c])));
        }
    }
}

TEST_CASE("the two-thread reader gives the same frames and the same refusal as the one-thread reader") {
    Lcg g{4242};
    const Written w = write(g, 40000, ',', false, 0);  // past the first small chunks and several full ones
    struct Collect : FrameSink {
        std::vector<Frame> frames;
        void take(const Frame& f) override { frames.push_back(f); }
    } piped;
    const auto info = scan_table_pipelined(w.text, {}, piped);
    REQUIRE(info);
    const auto t = read_table(w.text);
    REQUIRE(t);
    REQUIRE(piped.frames.size() == t->frames.size());
    CHECK(std::memcmp(piped.frames.data(), t->frames.data(), piped.frames.size() * sizeof(Frame)) == 0);
    check_all(w, *t);

    const std::string bad = w.text + "1,2,x3,4\n";
    Collect ignored;
    const auto refused = scan_table_pipelined(bad, {}, ignored);
    const auto refused_too = read_table(bad);
    REQUIRE_FALSE(refused);
    REQUIRE_FALSE(refused_too);
    CHECK(refused.error() == refused_too.error());
    CHECK_THAT(refused.error(), Catch::Contains("column 3") && Catch::Contains("'x3'"));
}

TEST_CASE("bad cells in any of the ways a plain number can go wrong are named by line and column") {
    std::string text = "time_s;force_N;extension_mm\n";
    for (int i = 0; i < 300; ++i) text += std::to_string(i) + ",5;1" + std::to_string(i) + ",25;0,25\r\n";
    // Line 302 is the bad one (header on line 1).
    // Each also refused by strtod or out of a double's range; the C standard's
    // strtod grammar allows one optional sign, so "+-1" and the like are not numbers.
    for (const std::string bad : {"1e", "1e+", "+", "1,2,3", "1 2", "- 1", "1e5x", "0x1p3", "inf", "1e400", "+-1", "-+1",
                                  "++1", "--1"}) {
        INFO("cell '" << bad << "'");
        const auto r = read_table(text + "300,5;" + bad + ";0,25\r\n");
        REQUIRE_FALSE(r);
        CHECK_THAT(r.error(), Catch::Contains("line 302, column 2 (force)") &&
                                  Catch::Contains("expected a decimal number such as 1523.4, or an empty cell"));
    }
    const auto lonely = read_table(text + "300,5");
    REQUIRE_FALSE(lonely);
    CHECK_THAT(lonely.error(), Catch::Contains("line 302: 1 columns, but extension is column 3"));
}
