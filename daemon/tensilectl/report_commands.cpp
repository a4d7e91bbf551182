// `tensilectl report RUN --db FILE -o FILE.html|FILE.pdf [--format html|pdf]
// [budget inputs]` writes the record of one run, as self-contained HTML or as
// an A4 PDF (the format from --format, else from the file name's extension);
// `tensilectl summary --db FILE
// [--from DATE] [--to DATE] [--material TEXT]` prints results of many runs
// with mean and standard deviation per material and lot.
//
// Error policy: bad options, a missing database or run, or an unwritable
// output give one message naming what was wrong and what was expected, exit 2.
// The record goes to a temp file beside the target, renamed into place once
// complete, so a failure never leaves a half-written record under its name.
#include "report_commands.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>

#include "daemon/report/batch_summary.hpp"
#include "daemon/report/pdf_report.hpp"
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
    std::string db, out, format;
    report::UncertaintyInputs budget;
};

// "html" or "pdf" from --format, else from the extension; empty: neither.
std::string format_of(const ReportArgs& a) {
    if (!a.format.empty()) return a.format;
    std::string ext = std::filesystem::path(a.out).extension().string();
    std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
    if (ext == ".html" || ext == ".htm") return "html";
    if (ext == ".pdf") return "pdf";
    return "";
}

// Writes beside the target, syncs, and renames: readers (and a machine that
// loses power) see the old file or the whole new one, never a part. Returns
// what went wrong, or an empty string.
std::string write_in_place(const std::string& path, const std::string& bytes) {
    const std::filesystem::path target(path);
    // Renaming over a device, a pipe or a folder would replace it: only a
    // new or a regular file is ours to put a record in.
    std::error_code st;
    const auto status = std::filesystem::symlink_status(target, st);
    if (!st && std::filesystem::exists(status) && !std::filesystem::is_regular_file(status))
        return "exists and is not a regular file; expected a new file name or a file to replace";
    const std::filesystem::path temp =
        target.parent_path() / ("." + target.filename().string() + ".part-" + std::to_string(::getpid()));
    const int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    if (fd < 0)
        return "cannot create '" + temp.string() + "': " + std::strerror(errno) + " (expected a folder we may write in)";
    std::size_t done = 0;
    int failed = 0;
    while (done < bytes.size() && !failed) {
        const ssize_t n = ::write(fd, bytes.data() + done, bytes.size() - done);
        if (n < 0 && errno == EINTR) continue;
        if (n <= 0) failed = n < 0 ? errno : ENOSPC;
        else done += static_cast<std::size_t>(n);
    }
    if (!failed && ::fsync(fd) != 0) failed = errno;
    ::close(fd);
    if (failed) {
        std::filesystem::remove(temp);
        return "cannot write '" + temp.string() + "': " + std::strerror(failed);
    }
    std::error_code ec;
    std::filesystem::rename(temp, target, ec);
    if (ec) {
        std::filesystem::remove(temp);
        return "cannot put the file in place: " + ec.message();
    }
    return "";
}

int run_report(const ReportArgs& a) {
    const std::string format = format_of(a);
    if (format.empty()) {
        std::cerr << "tensilectl report: -o '" << a.out
                  << "': cannot tell the format from the file name; expected a name ending in .html or .pdf, "
                     "or --format html|pdf\n";
        return 2;
    }
    auto store = open_store(a.db, "report");
    if (!store) return 2;
    report::ReportOptions options;
    options.budget = a.budget;
    options.generated_unix_s = std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
    std::string bytes;
    if (format == "pdf") {
        auto pdf = report::pdf_report(*store, a.run, options);
        if (!pdf) {
            std::cerr << "tensilectl report: " << pdf.error() << '\n';
            return 2;
        }
        bytes = std::move(pdf->bytes);
    } else {
        auto html = report::html_report(*store, a.run, options);
        if (!html) {
            std::cerr << "tensilectl report: " << html.error() << '\n';
            return 2;
        }
        bytes = std::move(*html);
    }
    if (const std::string failed = write_in_place(a.out, bytes); !failed.empty()) {
        std::cerr << "tensilectl report: -o '" << a.out << "': " << failed << '\n';
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
    auto* rep = app.add_subcommand("report", "Write the record of one stored run as HTML or PDF (curve, results with uncertainty, events)");
    rep->add_option("run", r->run, "Run id")->required()->check(CLI::PositiveNumber);
    rep->add_option("--db", r->db, "The daemon's database (default: $TENSILED_DB)");
    rep->add_option("-o,--out", r->out, "Output file, .html or .pdf")->required();
    rep->add_option("--format", r->format, "html or pdf (default: from the output file's extension)")
        ->check(CLI::IsMember({"html", "pdf"}));
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
