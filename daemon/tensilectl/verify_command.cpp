// `tensilectl verify RUN... | --all | --from DATE --to DATE`: prints a table per
// run (quantity, stored, now, difference), files each outcome in the run's
// verification history, and exits 1 when any run did not pass (2 on bad input).
#include "verify_command.hpp"

#include <ctime>
#include <iostream>
#include <memory>

#include "daemon/verify/run_verifier.hpp"

namespace tensile::ctl {

namespace {

struct VerifyArgs {
    std::vector<std::int64_t> runs;
    bool all = false;
    std::string from, to;
    std::string db;
    double tolerance = 0;
    bool no_raw = false;
    bool quiet = false;
};

// "YYYY-MM-DD" as UTC midnight, in Unix seconds.
std::optional<double> parse_date(const std::string& text) {
    std::tm tm{};
    if (text.size() != 10 || !strptime(text.c_str(), "%Y-%m-%d", &tm)) return std::nullopt;
    return static_cast<double>(timegm(&tm));
}

int run(const VerifyArgs& a) {
    std::string db = a.db;
    if (db.empty())
        if (const char* env = std::getenv("TENSILED_DB")) db = env;
    if (db.empty()) {
        std::cerr << "tensilectl verify: give the database with --db FILE (or TENSILED_DB)\n";
        return 2;
    }
    storage::OpenOptions open;
    open.create = false;
    auto store = storage::Store::open(db, open);
    if (!store) {
        std::cerr << "tensilectl verify: " << store.error() << '\n';
        return 2;
    }
    std::vector<std::int64_t> runs = a.runs;
    if (a.all || !a.from.empty() || !a.to.empty()) {
        storage::RunFilter filter;
        filter.limit = 1000000;
        if (!a.from.empty()) {
            filter.from_unix_s = parse_date(a.from);
            if (!filter.from_unix_s) {
                std::cerr << "tensilectl verify: --from '" << a.from << "': expected a date YYYY-MM-DD\n";
                return 2;
            }
        }
        if (!a.to.empty()) {
            auto to = parse_date(a.to);
            if (!to) {
                std::cerr << "tensilectl verify: --to '" << a.to << "': expected a date YYYY-MM-DD\n";
                return 2;
            }
            filter.to_unix_s = *to + 86400;  // the whole last day
        }
        auto list = store->list_runs(filter);
        if (!list) {
            std::cerr << "tensilectl verify: " << list.error() << '\n';
            return 2;
        }
        for (const auto& r : *list)
            if (!storage::is_live(r.state)) runs.push_back(r.id);
    }
    if (runs.empty()) {
        std::cerr << "tensilectl verify: no runs to verify; give run ids, --all, or --from/--to\n";
        return 2;
    }
    VerifyOptions options;
    options.tolerance_rel = a.tolerance;
    options.raw = !a.no_raw;
    int failed = 0;
    for (auto id : runs) {
        const auto report = verify_run(*store, id, options);
        if (!a.quiet || !report.passed()) std::cout << report_text(report) << '\n';
        else std::cout << "run " << id << ": " << report.outcome << '\n';
        if (auto s = record_verification(*store, report); !s)
            std::cerr << "tensilectl verify: could not file the outcome of run " << id << ": " << s.error() << '\n';
        failed += !report.passed();
    }
    std::cout << runs.size() - static_cast<std::size_t>(failed) << " of " << runs.size() << " runs passed\n";
    return failed ? 1 : 0;
}

}  // namespace

void add_verify_command(CLI::App& app, int& exit_code) {
    auto a = std::make_shared<VerifyArgs>();
    auto* cmd = app.add_subcommand("verify", "Re-check stored runs with today's parsers and engine");
    cmd->add_option("runs", a->runs, "Run ids");
    cmd->add_flag("--all", a->all, "Every finished run");
    cmd->add_option("--from", a->from, "Runs created on or after this date (YYYY-MM-DD, UTC)");
    cmd->add_option("--to", a->to, "Runs created on or before this date (YYYY-MM-DD, UTC)");
    cmd->add_option("--db", a->db, "The daemon's database (default: $TENSILED_DB)");
    cmd->add_option("--tolerance", a->tolerance, "Accept relative differences up to this (default 0: identical)")
        ->check(CLI::Range(0.0, 0.5));
    cmd->add_flag("--no-raw", a->no_raw, "Skip re-parsing the stored raw bytes");
    cmd->add_flag("--quiet", a->quiet, "One line per run that passed");
    cmd->callback([a, &exit_code] { exit_code = run(*a); });
}

}  // namespace tensile::ctl
