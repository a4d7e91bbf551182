// Every corpus case stored as a run in a fresh database, the way the recorder
// leaves one (frames, events, results, SHA-256 at the close): `verify` must
// find it identical, a changed result must be a mismatch on its row, and
// `report` must give a self-contained HTML record with a drawn curve, and a
// PDF record whose curve page, rendered by poppler, shows the trace inside
// the plot and whose text holds Rm and the safety note.
// The raw bytes are not stored here (no arrival times of a live link), so
// these runs are verified from their frames, as imported runs are.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <unistd.h>

#include <nlohmann/json.hpp>

#include "corpus_case.hpp"
#include "daemon/offline/results_json.hpp"
#include "daemon/offline/specimen_json.hpp"
#include "daemon/report/pdf_report.hpp"
#include "daemon/report/report_data.hpp"
#include "daemon/report/run_report.hpp"
#include "daemon/storage/frame_codec.hpp"
#include "daemon/storage/store.hpp"
#include "daemon/verify/run_verifier.hpp"
#include "pdf_look.hpp"

using namespace tensile;
using namespace tensile::corpus;
namespace fs = std::filesystem;

namespace {

const fs::path corpus_dir = fs::path(TENSILE_SOURCE_DIR) / "tests" / "corpus";

std::string slurp(const fs::path& p) {
    std::ifstream in(p, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

std::int64_t store_case(storage::Store& store, const CaseSpec& spec, const CaseRun& run, const nlohmann::json& truth) {
    storage::NewRun n;
    nlohmann::json specimen{{"S0_mm2", run.geometry.S0_mm2}, {"L0_mm", run.geometry.L0_mm}, {"label", spec.name},
                            {"material", truth.value("description", spec.name)}};
    n.specimen_json = specimen.dump();
    n.material = truth.value("description", spec.name);
    n.profile_json = to_json(Profile{}).dump();
    n.state = storage::RunState::running;
    n.cause = "corpus case";
    n.created_unix_s = 1.7e9;
    auto id = store.create_run(n);
    REQUIRE(id);
    constexpr std::size_t per_chunk = 4096;
    for (std::size_t at = 0, seq = 0; at < run.frames.size(); at += per_chunk, ++seq) {
        const std::size_t count = std::min(per_chunk, run.frames.size() - at);
        const std::span<const Frame> part(run.frames.data() + at, count);
        storage::FrameChunkRow row;
        row.run_id = *id;
        row.seq = static_cast<std::int64_t>(seq);
        row.first_index = static_cast<std::int64_t>(at);
        row.frame_count = static_cast<std::int64_t>(count);
        row.first_time_s = part.front().time_s;
        row.last_time_s = part.back().time_s;
        row.data = storage::encode_frames(part);
        REQUIRE(store.write_frame_chunk(row));
    }
    for (const auto& e : run.events) REQUIRE(store.add_event(*id, e));
    REQUIRE(store.set_results(*id, run.results));
    REQUIRE(store.finish_run(*id, storage::RunState::finished, "corpus case stored", 1.7e9 + 100));
    return *id;
}

}  // namespace

TEST_CASE("corpus: every case stored as a run verifies identical and gets a report") {
    const fs::path dir = fs::temp_directory_path() / ("tensiled-corpus-store-" + std::to_string(::getpid()));
    fs::remove_all(dir);
    fs::create_directories(dir);
    auto store = storage::Store::open((dir / "corpus.db").string());
    REQUIRE(store);
    for (const auto& c : load_cases(corpus_dir / "cases.txt")) {
        DYNAMIC_SECTION(c.name) {
            const auto truth = nlohmann::json::parse(slurp(c.truth(corpus_dir)));
            const auto run = run_case(c, corpus_dir, truth.at("times").at("end_s").get<double>());
            const auto id = store_case(*store, c, run, truth);

            const auto report = verify_run(*store, id);
            INFO(report_text(report));
            CHECK(report.outcome == "identical");

            auto html = report::html_report(*store, id, {});
            REQUIRE(html);
            CHECK_THAT(*html, Catch::Contains("<svg") && Catch::Contains("class=\"trace\"") &&
                                  Catch::Contains("no interlock") && !Catch::Contains("<script") &&
                                  !Catch::Contains("href="));
            // The curve is drawn: its polyline has many points.
            const auto at = html->find("class=\"trace\"");
            const auto pts = html->find("points=\"", at);
            const auto end = html->find('"', pts + 8);
            CHECK(std::count(html->begin() + static_cast<long>(pts), html->begin() + static_cast<long>(end), ',') > 500);

            auto pdf = report::pdf_report(*store, id, {});
            REQUIRE(pdf);
            CHECK(pdf->bytes.starts_with("%PDF-"));
            REQUIRE(pdf->curve_page >= 2);  // the curve opens a page of its own after the results
            CHECK(pdf->curve_page <= pdf->pages);
            const fs::path file = dir / (c.name + ".pdf");
            std::ofstream(file, std::ios::binary) << pdf->bytes;
            const auto look = testing::look_at_plot(file, pdf->curve_page, pdf->plot);
            INFO(look.why);
            REQUIRE(look.rendered);
            INFO("plot " << look.plot_w_px << " px wide, " << look.nonwhite << " non-white, " << look.ink << " inked, trace in "
                         << look.trace_columns << " columns; control " << look.control_nonwhite << " of "
                         << look.control_pixels << " non-white");
            // The trace runs across most of the plot (the axis ends at the
            // next round strain after fracture) and inks a fair share of it.
            CHECK(look.trace_columns > look.plot_w_px / 2);
            CHECK(look.nonwhite > 2 * look.plot_w_px);
            // Darker than the grid: with the trace 517–721 pixels over the
            // corpus, with it left out (tried once) 183–330.
            CHECK(look.ink > 3 * look.plot_w_px / 2);
            // The control: the right margin beside the plot is white, so
            // the counts above can tell ink from an empty page.
            CHECK(look.control_pixels > 1000);
            CHECK(look.control_nonwhite == 0);
            const std::string text = testing::pdf_text(file);
            char rm[32];
            std::snprintf(rm, sizeof rm, "%.6g", run.results.Rm_MPa.value());  // as the results table prints it
            CHECK_THAT(text, Catch::Contains(std::string("Rm ") + rm + " MPa"));
            CHECK_THAT(text, Catch::Contains("This software is no interlock: it never replaces the frame's own limits, "
                                             "guards and emergency stop"));
            CHECK_THAT(text, Catch::Contains("stores elastic energy that is released at fracture") &&
                                 Catch::Contains("accredited procedures") && Catch::Contains("local codes"));
        }
    }
    // A long events table flows onto further pages, its header repeated on
    // each. The run's own events plus 160 rate events like those of a speed
    // control hunting about a band's edge (made-up times, structure only).
    // Catch runs this body once per case section; once is enough here.
    static bool long_table_done = false;
    if (!long_table_done) {
        long_table_done = true;
        auto data = report::gather_report_data(*store, 1);
        REQUIRE(data);
        const auto short_pdf = report::pdf_record(*data, 1, {});
        REQUIRE(short_pdf);
        for (int k = 0; k < 160; ++k)
            data->run.events.push_back({k % 2 ? EventKind::rate_in_range : EventKind::rate_out_of_range, 10.0 + k,
                                        0, 0, 0, 0.0025, "swing " + std::to_string(k + 1)});
        // A label with a byte that is no UTF-8 (a rig may send anything):
        // cairo would stop drawing at it, so it is shown as '?'.
        data->run.events.push_back({EventKind::extensometer_lost, 200, 0, 0, 0, 0, "odd \xff\xc3 byte\x01"});
        const auto long_pdf = report::pdf_record(*data, 1, {});
        REQUIRE(long_pdf);
        CHECK(long_pdf->curve_page == short_pdf->curve_page);  // the curve stays where it was
        CHECK(long_pdf->pages >= short_pdf->pages + 3);        // 160 rows at about 50 a page
        const fs::path file = dir / "long.pdf";
        std::ofstream(file, std::ios::binary) << long_pdf->bytes;
        const std::string text = testing::pdf_text(file);
        std::size_t headers = 0;
        for (auto at = text.find("time, s event stress, MPa"); at != std::string::npos; at = text.find("time, s event stress, MPa", at + 1))
            ++headers;
        CHECK(headers >= 4);
        CHECK_THAT(text, Catch::Contains("swing 1 ") && Catch::Contains("swing 160 "));
        // Nothing after the events is lost: the rate table and the verification follow.
        CHECK(text.find("swing 160 ") < text.find("Strain rate per phase"));
        CHECK(text.find("Strain rate per phase") < text.find("Verification"));
        CHECK_THAT(text, Catch::Contains("odd ?? byte?"));
    }
    // Valid UTF-8 passes unchanged (the symbols the record prints); each
    // stray byte becomes '?' (UTF-8 as in RFC 3629: no overlong forms, no surrogates).
    CHECK(report::valid_utf8("± ² – ≥ √ µ 𝜎") == "± ² – ≥ √ µ 𝜎");
    CHECK(report::valid_utf8("a\xc0\xaf" "b") == "a??b");       // overlong '/'
    CHECK(report::valid_utf8("\xed\xa0\x80") == "???");       // a UTF-16 surrogate
    CHECK(report::valid_utf8("cut \xe2\x88") == "cut ??");    // sequence cut short
    CHECK(report::valid_utf8("two\nlines\tand\x07") == "two lines and?");

    // A stored result moved after the fact: verify names its row.
    REQUIRE(store->db().exec("UPDATE runs SET results = json_set(results, '$.Rm_MPa', json_extract(results, '$.Rm_MPa') + 2) WHERE id = 1"));
    const auto moved = verify_run(*store, 1);
    CHECK(moved.outcome == "mismatch");
    bool named = false;
    for (const auto& r : moved.rows) named = named || (r.quantity == "Rm_MPa" && !r.ok);
    CHECK(named);
    fs::remove_all(dir);
}
