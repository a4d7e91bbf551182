// `tensilectl report RUN --db FILE -o FILE.html [budget inputs]` writes the
// self-contained HTML record of one run; `tensilectl summary --db FILE
// [--from DATE] [--to DATE] [--material TEXT]` prints results of many runs
// with mean and standard deviation per material and lot.
//
// Error policy: bad options, a missing database or run, or an unwritable
// output give one message naming what was wrong and what was expected, exit 2.
// PDF output needs cairo, which this build does not have: asking for a .pdf
// says so and exits 2 rather than writing something else.
#include "report_commands.hpp"

#include <chrono>
#include <ctime>
#include <fstream>
#include <iostream>
#include <memory>

#include "daemon/report/batch_summary.hpp"
#include "daemon/report/run_report.hpp"

namespace tensile::ctl {

namespace {

std::optional<storage::Store> open_store(std::string db, const char* command) {
    if (db.empty())
        if (const char* env = std::getenv("TENSILED_DB")) db = env;
    if (db.empty()) {
        std::cerr << "tensilectl " << command << ": give the database with --db FILE (or TENSILED_DB)\n";
        return std::nullopt;
    }
    storage::OpenOptions open;
    open.create = false;
    auto store = storage::Store::open(db, open);
    if (!store) {
        std::cerr << "tensilectl " << command << ": --db: " << store.error() << '\n';
        return std::nullopt;
    }
    return std::move(*store);
}

// "YYYY-MM-DD" as UTC midnight, in Unix seconds.
std::optional<double> parse_date(const std::string& text) {
    std::tm tm{};
    const char* end = text.size() == 10 ? strptime(text.c_str(), "%Y-%m-%d", &tm) : nullptr;
    if (!end || *end) return std::nullopt;
    return static_cast<double>(timegm(&tm));
}

struct ReportArgs {
    std::int64_t run = 0;
    std::string db, out;
    report::UncertaintyInputs budget;
};

int run_report(const ReportArgs& a) {
    if (a.out.ends_with(".pdf")) {
        std::cerr << "tensilectl report: -o '" << a.out
                  << "': PDF needs cairo, which this build does not have; expected an .html file name\n";
        return 2;
    }
    auto store = open_store(a.db, "report");
    if (!store) return 2;
    report::ReportOptions options;
    options.budget = a.budget;
    options.generated_unix_s = std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
    auto html = report::html_report(*store, a.run, options);
    if (!html) {
        std::cerr << "tensilectl report: " << html.error() << '\n';
        return 2;
    }
    std::ofstream f(a.out, std::ios::binary);
    f << *html;
    f.close();
    if (!f) {
        std::cerr << "tensilectl report: -o '" << a.out << "': cannot write the file\n";
        return 2;
    }
    std::cout << "run " << a.run << ": " << a.out << '\n';
    return 0;
}

struct SummaryArgs {
    std::string db, from, to, material;
};

int run_summary(const SummaryArgs& a) {
    storage::RunFilter filter;
    filter.limit = 1000000;
    filter.material_contains = a.material;
    if (!a.from.empty()) {
        filter.from_unix_s = parse_date(a.from);
        if (!filter.from_unix_s) {
            std::cerr << "tensilectl summary: --from '" << a.from << "': expected a date YYYY-MM-DD\n";
            return 2;
        }
    }
    if (!a.to.empty()) {
        const auto to = parse_date(a.to);
        if (!to) {
            std::cerr << "tensilectl summary: --to '" << a.to << "': expected a date YYYY-MM-DD\n";
            return 2;
        }
        filter.to_unix_s = *to + 86400;  // the whole last day
    }
    if (filter.from_unix_s && filter.to_unix_s && *filter.from_unix_s >= *filter.to_unix_s) {
        std::cerr << "tensilectl summary: --from '" << a.from << "' is after --to '" << a.to << "'; expected from <= to\n";
        return 2;
    }
    auto store = open_store(a.db, "summary");
    if (!store) return 2;
    auto b = report::summarise(*store, filter);
    if (!b) {
        std::cerr << "tensilectl summary: " << b.error() << '\n';
        return 2;
    }
    std::cout << report::summary_text(*b);
    return 0;
}

}  // namespace

void add_report_commands(CLI::App& app, int& exit_code) {
    auto r = std::make_shared<ReportArgs>();
    auto* rep = app.add_subcommand("report", "Write the HTML record of one stored run (curve, results with uncertainty, events)");
    rep->add_option("run", r->run, "Run id")->required()->check(CLI::PositiveNumber);
    rep->add_option("--db", r->db, "The daemon's database (default: $TENSILED_DB)");
    rep->add_option("-o,--out", r->out, "Output file, .html")->required();
    rep->add_option("--force-class", r->budget.force_class_pct, "Force-measuring class, ISO 7500-1 (default 1)")
        ->check(CLI::IsMember({0.5, 1.0, 2.0, 3.0}));
    rep->add_option("--extensometer-class", r->budget.extensometer_class_pct, "Extensometer class, ISO 9513 (default 1)")
        ->check(CLI::IsMember({0.2, 0.5, 1.0, 2.0}));
    rep->add_option("--s0-tolerance-pct", r->budget.S0_tolerance_pct, "Error limit of S0 in % (default 1)")
        ->check(CLI::Range(0.0, 20.0));
    rep->add_option("--l0-tolerance-pct", r->budget.L0_tolerance_pct, "Error limit of L0 in % (default 1)")
        ->check(CLI::Range(0.0, 20.0));
    rep->add_option("--rate-term-pct", r->budget.rate_term_pct, "Strain-rate term of the material in % (default 0)")
        ->check(CLI::Range(0.0, 20.0));
    rep->callback([r, &exit_code] { exit_code = run_report(*r); });

    auto s = std::make_shared<SummaryArgs>();
    auto* sum = app.add_subcommand("summary", "Results of many runs with mean and standard deviation per material and lot");
    sum->add_option("--db", s->db, "The daemon's database (default: $TENSILED_DB)");
    sum->add_option("--from", s->from, "Runs created on or after this date (YYYY-MM-DD, UTC)");
    sum->add_option("--to", s->to, "Runs created on or before this date (YYYY-MM-DD, UTC)");
    sum->add_option("--material", s->material, "Only runs whose material text contains this");
    sum->callback([s, &exit_code] { exit_code = run_summary(*s); });
}

}  // namespace tensile::ctl
