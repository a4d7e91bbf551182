// The tools that work on stored runs: the error budget against the published
// figures, lot parsing and batch statistics against hand calculations, and,
// on two runs recorded by the demo daemon, `tensilectl report` (HTML and
// PDF), `tensilectl summary` and `tensile-sim replay` end to end.
//
// The replay is read over TCP by a FramePipeline in this test (a second daemon
// cannot be armed without the monitor API yet): the bytes must be those
// stored, in about their original timing, and the frames they give must
// produce the stored results.
#include <catch2/catch.hpp>

#include <arpa/inet.h>
#include <netinet/in.h>
#include <fcntl.h>
#include <poll.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string_view>

#include <nlohmann/json.hpp>

#include "config/daemon_config.hpp"
#include "daemon/offline/specimen_json.hpp"
#include "daemon/report/batch_summary.hpp"
#include "daemon/report/pdf_report.hpp"
#include "daemon/report/uncertainty.hpp"
#include "daemon/storage/store.hpp"
#include "daemon/tensiled/frame_pipeline.hpp"
#include "engine/analyzer.hpp"
#include "pdf_look.hpp"
#include "recorded_runs.hpp"
#include "support/process.hpp"

using namespace tensile;
using namespace tensile::testing;
namespace fs = std::filesystem;


TEST_CASE("tools: the error budget gives the published figures and adds up as a hand calculation") {
    using namespace tensile::report;
    UncertaintyInputs class1;  // defaults: class 1 force and extensometer, 1 % S0 and L0
    // ISO6892-uncert (ISO 6892-1:1998 informative annex, partly verified): about
    // ±1.4 % for ReH, ReL, Rm and ±2 % for Rp0.2 with class 1 instruments.
    CHECK(*relative_U_pct(budget_of("Rm_MPa"), class1) == Approx(1.4).margin(0.02));
    CHECK(*relative_U_pct(budget_of("ReH_MPa"), class1) == Approx(1.4).margin(0.02));
    CHECK(*relative_U_pct(budget_of("Rp0.2_MPa"), class1) == Approx(2.0).margin(0.001));
    // Same source: a strain-rate term m adds as √(2² + m²); m = 1.5 gives 2.5 (hand calculation).
    UncertaintyInputs with_rate = class1;
    with_rate.rate_term_pct = 1.5;
    CHECK(*relative_U_pct(budget_of("Rp0.2_MPa"), with_rate) == Approx(2.5).epsilon(1e-12));
    // Hand calculation, class 0.5 force and 0.5 % S0: √(0.25 + 0.25) = 0.70711 %.
    UncertaintyInputs fine = class1;
    fine.force_class_pct = 0.5;
    fine.S0_tolerance_pct = 0.5;
    CHECK(*relative_U_pct(budget_of("Rm_MPa"), fine) == Approx(0.7071068).epsilon(1e-6));
    // Our own extension for elongations: √(1² + 1²), marked as ours in the note.
    CHECK(*relative_U_pct(budget_of("A_pct"), class1) == Approx(std::sqrt(2.0)));
    CHECK_FALSE(relative_U_pct(budget_of("E_MPa"), class1));
    CHECK_THAT(budget_note(class1), Catch::Contains("from memory") && Catch::Contains("our own extension"));
}

TEST_CASE("tools: material and lot are split out of the material text") {
    using tensile::report::split_lot;
    auto a = split_lot("Harbourline Metals lot 7, structural plate S355-like, upper/lower yield");
    CHECK(a.lot == "7");
    CHECK(a.material == "Harbourline Metals, structural plate S355-like, upper/lower yield");
    auto b = split_lot("harbourline-s355-lot7");
    CHECK(b.lot == "7");
    CHECK(b.material == "harbourline-s355");
    auto c = split_lot("S355 plate, Lot: A12-3");
    CHECK(c.lot == "A12-3");
    CHECK(c.material == "S355 plate");
    auto d = split_lot("pilot sheet");  // "lot" inside a word is no lot
    CHECK(d.lot.empty());
    CHECK(d.material == "pilot sheet");
}

TEST_CASE("tools: batch statistics are the sample mean and standard deviation") {
    using namespace tensile::report;
    const std::size_t q = summary_quantities().size();
    auto run = [&](std::int64_t id, const char* lot, double rm) {
        SummaryRun r{id, 0, {"S355 plate", lot}, std::vector<std::optional<double>>(q)};
        r.values[4] = rm;  // Rm_MPa
        return r;
    };
    // Hand calculation: 500, 505, 510 → mean 505, s = √((25 + 0 + 25)/2) = 5.
    auto b = summarise_runs({run(1, "7", 500), run(2, "7", 505), run(3, "7", 510), run(4, "8", 490)});
    REQUIRE(b.groups.size() == 2);
    CHECK(b.groups[0].what.lot == "7");
    CHECK(b.groups[0].stats[4].n == 3);
    CHECK(b.groups[0].stats[4].mean == Approx(505));
    CHECK(b.groups[0].stats[4].sd == Approx(5));
    CHECK(b.groups[1].stats[4].n == 1);
    CHECK(std::isnan(b.groups[1].stats[4].sd));  // one value has no spread
    CHECK(b.groups[0].stats[0].n == 0);           // E absent: left out, not zero
}

TEST_CASE("tools: tensilectl report writes a self-contained HTML record of each run") {
    auto store = open_db();
    for (std::int64_t id : {1, 2}) {
        const fs::path out = recorded() / ("run-" + std::to_string(id) + ".html");
        const auto r = run_command(bin("tensilectl") + " report " + std::to_string(id) + " --db " + db().string() + " -o " +
                                   out.string());
        INFO(r.out);
        REQUIRE(r.code == 0);
        const std::string html = slurp(out);
        // Self-contained: no scripts, stylesheets, images or links to fetch.
        CHECK_THAT(html, !Catch::Contains("<script") && !Catch::Contains("<link") && !Catch::Contains("src=") &&
                             !Catch::Contains("href=") && !Catch::Contains("url("));
        CHECK_THAT(html, Catch::Contains("<style>") && Catch::Contains("<svg"));
        CHECK_THAT(html, Catch::Contains("no interlock") && Catch::Contains("accredited") &&
                             Catch::Contains("local codes") && Catch::Contains("extensometer off"));
        CHECK_THAT(html, Catch::Contains("Strain rate per phase") && Catch::Contains("Not verified yet"));
        // The plot is not blank: a long polyline spanning most of the plot area.
        // (plain searches: std::regex recurses once per character and runs
        // out of stack on a points list this long)
        const auto trace = html.find("class=\"trace\"");
        REQUIRE(trace != std::string::npos);
        const auto open = html.find("points=\"", trace);
        REQUIRE(open != std::string::npos);
        REQUIRE(html.find('>', trace) > open);  // the same element
        const auto first = open + std::string_view("points=\"").size();
        const auto close = html.find('"', first);
        REQUIRE(close != std::string::npos);
        std::istringstream pts(html.substr(first, close - first));
        double xmin = 1e9, xmax = -1e9, ymin = 1e9, ymax = -1e9, x, y;
        char comma;
        int n = 0;
        while (pts >> x >> comma >> y) {
            xmin = std::min(xmin, x), xmax = std::max(xmax, x), ymin = std::min(ymin, y), ymax = std::max(ymax, y);
            ++n;
        }
        CHECK(n > 200);
        CHECK(xmax - xmin > 400);  // of a 670-wide plot
        CHECK(ymax - ymin > 250);  // of a 390-high plot
        CHECK_THAT(html, Catch::Contains("<circle"));  // events marked
        // Rm's expanded uncertainty by hand: Rm × √(1² + 1²) / 100 with the defaults (ISO6892-uncert).
        auto rec = store.load_run(id);
        REQUIRE(rec);
        REQUIRE(rec->results_json);
        const double rm = nlohmann::json::parse(*rec->results_json).at("Rm_MPa").get<double>();
        char want[64];
        std::snprintf(want, sizeof want, "± %.3g", rm * std::sqrt(2.0) / 100);
        CHECK_THAT(html, Catch::Contains(want));
    }
    // Verification status comes from the verifications table.
    REQUIRE(run_command(bin("tensilectl") + " verify 1 --quiet --db " + db().string()).code == 0);
    const fs::path out = recorded() / "verified.html";
    REQUIRE(run_command(bin("tensilectl") + " report 1 --db " + db().string() + " -o " + out.string()).code == 0);
    CHECK_THAT(slurp(out), Catch::Contains("Latest: <span class=\"good\">identical</span>"));
}

TEST_CASE("tools: tensilectl report writes an A4 PDF record of each run, with the curve drawn") {
    auto store = open_db();
    for (std::int64_t id : {1, 2}) {
        const fs::path out = recorded() / ("run-" + std::to_string(id) + ".pdf");
        const auto r = run_command(bin("tensilectl") + " report " + std::to_string(id) + " --db " + db().string() + " -o " +
                                   out.string());
        INFO(r.out);
        REQUIRE(r.code == 0);
        CHECK(slurp(out).starts_with("%PDF-"));
        const auto info = run_command("pdfinfo " + out.string());
        CHECK_THAT(info.out, Catch::Contains("595.276 x 841.89 pts (A4)"));  // poppler's own words for A4
        // Where the curve is: our layout, as the library reports it for the same run.
        auto laid = report::pdf_report(store, id, {});
        REQUIRE(laid);
        const auto look = look_at_plot(out, laid->curve_page, laid->plot);
        INFO(look.why);
        REQUIRE(look.rendered);
        INFO("trace in " << look.trace_columns << " of " << look.plot_w_px << " columns, " << look.ink << " inked");
        CHECK(look.trace_columns > look.plot_w_px / 2);
        CHECK(look.ink > 3 * look.plot_w_px / 2);  // see stored_corpus_test.cpp for the measured range
        CHECK(look.control_nonwhite == 0);
        const std::string text = pdf_text(out);
        auto rec = store.load_run(id);
        REQUIRE(rec);
        REQUIRE(rec->results_json);
        const double rm = nlohmann::json::parse(*rec->results_json).at("Rm_MPa").get<double>();
        char want[80];
        // Value as the table prints it (%.6g), and its U by hand: Rm × √(1² + 1²) / 100 (ISO6892-uncert).
        std::snprintf(want, sizeof want, "Rm %.6g MPa ± %.3g", rm, rm * std::sqrt(2.0) / 100);
        CHECK_THAT(text, Catch::Contains(want));
        CHECK_THAT(text, Catch::Contains("This software is no interlock: it never replaces the frame's own limits") &&
                             Catch::Contains("extensometer off") && Catch::Contains("Strain rate per phase") &&
                             Catch::Contains("force class 1 (ISO 7500-1)"));
        // Run 1 was verified by the HTML case above when it ran first.
        CHECK_THAT(text, Catch::Contains("Not verified yet") || Catch::Contains("Latest: identical"));
    }
    // --format wins over the extension; events and the note are there too.
    const fs::path as_pdf = recorded() / "run-1.record";
    REQUIRE(run_command(bin("tensilectl") + " report 1 --format pdf --db " + db().string() + " -o " + as_pdf.string()).code == 0);
    CHECK(slurp(as_pdf).starts_with("%PDF-"));
    const fs::path as_html = recorded() / "run-1.print.pdf";
    REQUIRE(run_command(bin("tensilectl") + " report 1 --format html --db " + db().string() + " -o " + as_html.string()).code == 0);
    CHECK(slurp(as_html).starts_with("<!DOCTYPE html>"));
}

TEST_CASE("tools: report and summary refuse bad input with one message and exit 2") {
    const std::string base = bin("tensilectl");
    auto r = run_command(base + " report 99 --db " + db().string() + " -o " + (recorded() / "x.html").string());
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("run 99"));
    r = run_command(base + " report 1 --db " + db().string() + " -o " + (recorded() / "x.txt").string());
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("x.txt") && Catch::Contains(".html or .pdf") && Catch::Contains("--format html|pdf"));
    CHECK_FALSE(fs::exists(recorded() / "x.txt"));
    r = run_command(base + " report 1 --db " + db().string() + " --format svg -o " + (recorded() / "x.svg").string());
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("--format"));
    // A failed report leaves an earlier file of that name as it was, and no temp file.
    const fs::path keep = recorded() / "keep.pdf";
    std::ofstream(keep) << "earlier";
    r = run_command(base + " report 99 --db " + db().string() + " -o " + keep.string());
    CHECK(r.code == 2);
    CHECK(slurp(keep) == "earlier");
    r = run_command(base + " report 1 --db " + db().string() + " -o " + (recorded() / "no-such-folder" / "x.pdf").string());
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("no-such-folder") && Catch::Contains("cannot create"));
    // Never renamed over something that is not a regular file (a pipe of
    // our own here, so a regression cannot replace a device of the machine).
    const fs::path pipe = recorded() / "pipe.pdf";
    REQUIRE(::mkfifo(pipe.c_str(), 0600) == 0);
    r = run_command(base + " report 1 --db " + db().string() + " -o " + pipe.string());
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("not a regular file"));
    CHECK(fs::is_fifo(pipe));
    fs::remove(pipe);
    r = run_command(base + " report 1 --db " + db().string() + " -o " + recorded().string() + " --format html");
    CHECK(r.code == 2);
    CHECK(fs::is_directory(recorded()));
    for (const auto& e : fs::directory_iterator(recorded())) CHECK_THAT(e.path().filename().string(), !Catch::Contains(".part-"));
    r = run_command(base + " report 1 --db " + (recorded() / "none.db").string() + " -o x.html");
    CHECK(r.code == 2);
    r = run_command(base + " report 1 --db " + db().string() + " -o x.html --force-class 7");
    CHECK(r.code == 2);
    r = run_command(base + " summary --db " + db().string() + " --from 2024-13-01");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("--from") && Catch::Contains("YYYY-MM-DD"));
}

TEST_CASE("tools: tensilectl summary lists the runs with statistics per material and lot") {
    const auto r = run_command(bin("tensilectl") + " summary --db " + db().string() + " --from 2000-01-01 --to 2999-12-31");
    INFO(r.out);
    REQUIRE(r.code == 0);
    CHECK_THAT(r.out, Catch::Contains("2 runs with results") && Catch::Contains("Rm_MPa") && Catch::Contains("Harbourline"));
    const auto none = run_command(bin("tensilectl") + " summary --db " + db().string() + " --from 2000-01-01 --to 2000-01-02");
    CHECK(none.code == 0);
    CHECK_THAT(none.out, Catch::Contains("0 runs with results"));
}

TEST_CASE("tools: tensile-sim replay streams a stored run's bytes in their timing, and they give its results") {
    auto store = open_db();
    const std::int64_t id = 1;
    auto rec = store.load_run(id);
    REQUIRE(rec);
    std::string stored_bytes;
    double first = INFINITY, last = -INFINITY;
    REQUIRE(store.for_each_raw_chunk(id, [&](const storage::RawChunk& c) {
        if (c.source != "frame") return;  // the demo's data link (its commands go on a serial line beside it)
        stored_bytes += c.bytes;
        for (const auto& a : c.arrivals) first = std::min(first, a.time_s), last = std::max(last, a.time_s);
    }));
    REQUIRE(!stored_bytes.empty());

    FILE* sim = popen((bin("tensile-sim") + " replay --db " + db().string() + " --run 1 --source frame --tcp 127.0.0.1:0 --speed 1").c_str(), "r");
    REQUIRE(sim);
    char line[256] = {};
    REQUIRE(std::fgets(line, sizeof line, sim));
    int port = 0;
    REQUIRE(std::sscanf(line, "tcp 127.0.0.1:%d", &port) == 1);
    const int fd = ::socket(AF_INET, SOCK_STREAM, 0);
    sockaddr_in addr{};
    addr.sin_family = AF_INET;
    addr.sin_port = htons(static_cast<std::uint16_t>(port));
    addr.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    REQUIRE(::connect(fd, reinterpret_cast<sockaddr*>(&addr), sizeof addr) == 0);

    // Read as the daemon would, stamping each read with the local clock.
    struct Piece {
        double t;
        std::string bytes;
    };
    std::vector<Piece> pieces;
    const auto t0 = std::chrono::steady_clock::now();
    char buf[4096];
    while (true) {
        pollfd p{fd, POLLIN, 0};
        if (::poll(&p, 1, 15000) <= 0) break;
        const ssize_t n = ::recv(fd, buf, sizeof buf, 0);
        if (n <= 0) break;
        pieces.push_back({std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count(), std::string(buf, static_cast<std::size_t>(n))});
    }
    ::close(fd);
    CHECK(pclose(sim) == 0);
    std::string got;
    for (const auto& p : pieces) got += p.bytes;
    CHECK(got == stored_bytes);  // the very bytes stored
    // Original timing: not faster than recorded; on a loaded machine it may lag a little.
    REQUIRE(!pieces.empty());
    const double span = last - first, took = pieces.back().t - pieces.front().t;
    CHECK(took >= 0.95 * span - 0.05);
    CHECK(took <= span + 3.0);

    // The replayed bytes through the run's own config give its frames and results.
    FramePipeline pipeline(load_daemon_config_text(rec->config_snapshot, "/"));
    std::vector<drivers::AlignedFrame> aligned;
    for (const auto& p : pieces) pipeline.feed(0, std::as_bytes(std::span(p.bytes.data(), p.bytes.size())), p.t, aligned);
    std::map<std::string, double> c;
    auto counters = store.load_counters(id);
    REQUIRE(counters);
    for (const auto& r : *counters)
        if (r.source == "run") c[r.name] = r.value;
    auto stored = store.load_frames(id);
    REQUIRE(stored);
    REQUIRE(!stored->empty());
    // The first frame of the run: the replayed frame whose tared values match it.
    const Frame& s0 = stored->front();
    std::size_t from = aligned.size();
    for (std::size_t k = 0; k < aligned.size() && from == aligned.size(); ++k) {
        const auto& f = aligned[k].frame;
        if (f.force_N - c["tare_force_N"] == s0.force_N && f.crosshead_mm - c["tare_crosshead_mm"] == s0.crosshead_mm) from = k;
    }
    REQUIRE(from < aligned.size());
    const auto spec = nlohmann::json::parse(rec->specimen_json);
    auto profile = profile_from_json(nlohmann::json::parse(rec->profile_json));
    REQUIRE(profile);
    Analyzer analyzer({spec.at("S0_mm2").get<double>(), spec.at("L0_mm").get<double>(), spec.value("parallel_length_mm", 0.0)}, *profile);
    std::optional<double> removed_after;
    for (const auto& e : rec->events)
        if (e.kind == EventKind::extensometer_lost && e.label == "removed by the operator") removed_after = e.time_s;
    std::vector<Event> events;
    bool removed = false;
    const double shift = aligned[from].frame.time_s - s0.time_s;
    for (std::size_t k = from; k < aligned.size() && k - from < stored->size(); ++k) {
        Frame f = aligned[k].frame;
        f.time_s -= shift;
        f.force_N -= c["tare_force_N"];
        f.extension_mm -= c["tare_extension_mm"];
        f.crosshead_mm -= c["tare_crosshead_mm"];
        if (removed_after && !removed && f.time_s > *removed_after) {
            analyzer.note_extensometer_removed(events);
            removed = true;
        }
        analyzer.push(f, events);
    }
    const Results now = analyzer.finish();
    // Force and crosshead are the same bits frame by frame; the extensometer
    // is paired with the force by time in the aligner, and a live read has
    // its own arrival times, so a few frames pair differently (the demo
    // records at 20x speed, tens of frames per millisecond of host time).
    std::size_t same = 0, n = 0;
    for (std::size_t k = from; k < aligned.size() && k - from < stored->size(); ++k, ++n) {
        const auto& a = aligned[k].frame;
        const auto& b = (*stored)[k - from];
        const double ext = a.extension_mm - c["tare_extension_mm"];
        same += a.force_N - c["tare_force_N"] == b.force_N &&
                (std::abs(ext - b.extension_mm) < 1e-9 || (std::isnan(ext) && std::isnan(b.extension_mm)));
    }
    CHECK(n + 2 >= stored->size());
    CHECK(same >= 0.9 * static_cast<double>(n));
    const auto want = nlohmann::json::parse(*rec->results_json);
    // Results from force alone agree to 1e-4; those that use the extensometer
    // (E, Rp0.2) within 1 %, for the pairing above.
    CHECK(*now.Rm_MPa == Approx(want.at("Rm_MPa").get<double>()).epsilon(1e-4));
    CHECK(*now.Fm_N == Approx(want.at("Fm_N").get<double>()).epsilon(1e-4));
    CHECK(*now.E_MPa == Approx(want.at("E_MPa").get<double>()).epsilon(1e-2));
    if (want.at("Rp0.2_MPa").is_number()) CHECK(*now.proof(0.2) == Approx(want.at("Rp0.2_MPa").get<double>()).epsilon(1e-2));
}

TEST_CASE("tools: tensile-sim replay refuses bad input with one message and exit 2") {
    auto r = run_command(bin("tensile-sim") + " replay --db " + db().string() + " --run 42 --out /dev/null");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("--run 42"));
    r = run_command(bin("tensile-sim") + " replay --db " + db().string() + " --run 1");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("--tcp HOST:PORT, --pty or --out FILE"));
    r = run_command(bin("tensile-sim") + " replay --run 1 --out /dev/null");
    CHECK(r.code == 2);
    // The demo's runs have a data link and a command line: which one is asked for.
    r = run_command(bin("tensile-sim") + " replay --db " + db().string() + " --run 1 --out /dev/null");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("several sources (frame, frame-commands)") && Catch::Contains("--source"));
    // --fast to a file: the same bytes, at once.
    const fs::path out = recorded() / "replayed.txt";
    REQUIRE(run_command(bin("tensile-sim") + " replay --db " + db().string() + " --run 2 --source frame --fast --out " + out.string()).code == 0);
    CHECK(fs::file_size(out) > 10000);
}

TEST_CASE("tools: tensile-sim replay serves a stored run on a pseudo-terminal like a serial port") {
    auto store = open_db();
    std::string stored_bytes;
    REQUIRE(store.for_each_raw_chunk(2, [&](const storage::RawChunk& c) {
        if (c.source == "frame") stored_bytes += c.bytes;
    }));
    FILE* sim = popen((bin("tensile-sim") + " replay --db " + db().string() + " --run 2 --source frame --pty --fast").c_str(), "r");
    REQUIRE(sim);
    char line[256] = {};
    REQUIRE(std::fgets(line, sizeof line, sim));
    char path[200] = {};
    REQUIRE(std::sscanf(line, "pty %199s", path) == 1);
    const int fd = ::open(path, O_RDONLY | O_NOCTTY);
    REQUIRE(fd >= 0);
    std::string got;
    char buf[4096];
    while (got.size() < stored_bytes.size()) {
        pollfd p{fd, POLLIN, 0};
        if (::poll(&p, 1, 5000) <= 0) break;
        const ssize_t n = ::read(fd, buf, sizeof buf);
        if (n <= 0) break;
        got.append(buf, static_cast<std::size_t>(n));
    }
    ::close(fd);
    CHECK(pclose(sim) == 0);
    INFO("got " << got.size() << " of " << stored_bytes.size() << " bytes");
    const auto mismatch = std::mismatch(got.begin(), got.end(), stored_bytes.begin(), stored_bytes.end());
    INFO("first difference at byte " << (mismatch.first - got.begin()));
    CHECK(got == stored_bytes);  // raw mode: no byte translated, none lost
}
