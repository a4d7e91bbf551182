// `tensilectl analyze`: reads a table, builds the specimen and profile from the
// options, runs the analyzer frame by frame and prints results (text or JSON).
// Bad input (file, options, cells) ends with one message on stderr naming what
// was wrong and what was expected, and exit code 2.
#include "analyze_command.hpp"

#include <algorithm>
#include <cerrno>
#include <cstdint>
#include <cstring>
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <iostream>
#include <memory>
#include <sstream>

#include "daemon/offline/results_json.hpp"
#include "daemon/offline/pipelined_scan.hpp"
#include "engine/analyzer.hpp"
#include "engine/specimen.hpp"

namespace tensile::ctl {

namespace {

struct AnalyzeOptions {
    std::string file;
    double area = 0, width = 0, thickness = 0, diameter = 0, wall = 0;
    double gauge_length = 0, proportional = 0, parallel_length = 0;
    std::string columns, force_unit, length_unit, time_unit = "s", stress_unit = "MPa";
    double rate_hz = 0;
    std::vector<double> offsets{0.2};
    std::vector<double> totals{0.5};
    std::string modulus_window;
    double extensometer_range = 0;
    bool json = false;
    bool events = false;
};

struct BadInput {
    std::string message;
};

Specimen specimen_from(const AnalyzeOptions& o) {
    Specimen s;
    const int shapes = (o.area > 0) + (o.width > 0 || o.thickness > 0) + (o.diameter > 0);
    if (shapes != 1)
        throw BadInput{"give the cross-section one way: --area, or --width with --thickness, or --diameter "
                       "(with --wall for a tube)"};
    if (o.area > 0) {
        s.shape = SectionShape::given_area;
        s.area_mm2 = o.area;
    } else if (o.width > 0 || o.thickness > 0) {
        s.shape = SectionShape::rectangular;
        s.width_mm = o.width;
        s.thickness_mm = o.thickness;
    } else {
        s.shape = o.wall > 0 ? SectionShape::tube : SectionShape::round;
        s.diameter_mm = o.diameter;
        s.wall_mm = o.wall;
    }
    if ((o.gauge_length > 0) == (o.proportional > 0))
        throw BadInput{"give the gauge length one way: --gauge-length MM, or --proportional 5.65 (or 11.3)"};
    s.gauge_length_mm = o.gauge_length;
    s.proportional_factor = o.proportional;
    s.parallel_length_mm = o.parallel_length;
    return s;
}

Profile profile_from(const AnalyzeOptions& o) {
    Profile p;
    p.proof_offsets_pct = o.offsets;
    p.total_extensions_pct = o.totals;
    for (double x : o.offsets)
        if (!(x > 0 && x < 20)) throw BadInput{"--offset " + std::to_string(x) + ": expected a plastic extension in % between 0 and 20, e.g. 0.2"};
    for (double x : o.totals)
        if (!(x > 0 && x < 50)) throw BadInput{"--total " + std::to_string(x) + ": expected a total extension in % between 0 and 50, e.g. 0.5"};
    if (!o.modulus_window.empty()) {
        StressWindow w;
        char colon = 0;
        std::istringstream in(o.modulus_window);
        if (!(in >> w.low_MPa >> colon >> w.high_MPa) || colon != ':' || !(w.low_MPa >= 0) || !(w.high_MPa > w.low_MPa) ||
            !in.eof())
            throw BadInput{"--modulus-window '" + o.modulus_window + "': expected LOW:HIGH in MPa with LOW < HIGH, e.g. 40:160"};
        p.modulus_window = w;
    }
    p.extensometer_range_mm = o.extensometer_range;
    return p;
}

TableLayout layout_from(const AnalyzeOptions& o) {
    TableLayout layout;
    if (!o.columns.empty()) {
        auto parsed = parse_column_spec(o.columns);
        if (!parsed) throw BadInput{parsed.error()};
        layout = *parsed;
    }
    if (!o.force_unit.empty()) {
        layout.force_unit = parse_force_unit(o.force_unit);
        if (!layout.force_unit) throw BadInput{"--force-unit '" + o.force_unit + "': expected N, kN, lbf or kgf"};
    }
    if (!o.length_unit.empty()) {
        layout.length_unit = parse_length_unit(o.length_unit);
        if (!layout.length_unit) throw BadInput{"--length-unit '" + o.length_unit + "': expected mm, um or in"};
    }
    if (o.time_unit == "ms") layout.time_scale = 0.001;
    else if (o.time_unit == "min") layout.time_scale = 60;
    else if (o.time_unit != "s") throw BadInput{"--time-unit '" + o.time_unit + "': expected s, ms or min"};
    if (o.rate_hz > 0) layout.rate_hz = o.rate_hz;
    return layout;
}

// The file mapped read-only: no copy of a long recording in memory.
class MappedFile {
public:
    explicit MappedFile(const std::string& path) {
        const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
        if (fd < 0) throw BadInput{"cannot open '" + path + "': " + std::strerror(errno)};
        struct stat st {};
        if (::fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
            ::close(fd);
            throw BadInput{"'" + path + "' is not a regular file; expected a recorded run (CSV)"};
        }
        size_ = static_cast<std::size_t>(st.st_size);
        if (size_ > 0) {
            data_ = ::mmap(nullptr, size_, PROT_READ, MAP_PRIVATE, fd, 0);
            if (data_ == MAP_FAILED) {
                const int err = errno;
                ::close(fd);
                throw BadInput{"cannot read '" + path + "': " + std::strerror(err)};
            }
            ::madvise(data_, size_, MADV_SEQUENTIAL);
        }
        ::close(fd);
    }
    ~MappedFile() {
        if (data_ && data_ != MAP_FAILED) ::munmap(data_, size_);
    }
    MappedFile(const MappedFile&) = delete;
    MappedFile& operator=(const MappedFile&) = delete;
    [[nodiscard]] std::string_view text() const { return {static_cast<const char*>(data_), size_}; }

    // Lets the kernel drop the pages before `offset` from this process's
    // resident memory, so a long file read once never sits in memory whole.
    // Safe even if they are read again: a read-only private mapping of a file
    // pages back in from the file. Done in steps of at least `step` bytes:
    // each call also makes the kernel interrupt the analysis thread's core to
    // flush its address cache (TLB), so a few large calls cost far less than
    // many small ones, for at most `step` more resident memory.
    static constexpr std::size_t step = 8 * 1024 * 1024;
    void release_before(std::size_t offset) {
        static const auto page = static_cast<std::size_t>(::sysconf(_SC_PAGESIZE));
        const std::size_t end = std::min(offset, size_) / page * page;
        if (end >= released_ + step) {
            ::madvise(static_cast<char*>(data_) + released_, end - released_, MADV_DONTNEED);
            released_ = end;
        }
        populate_upto(offset + step / 4);
    }

    // Maps the file's pages in up to `offset` in one call per MB or so
    // (MADV_POPULATE_READ, Linux 5.14+), instead of one page fault per 64 KB
    // as the reader walks in: on a virtual machine a fault costs microseconds.
    // Only 2 MB ahead of the reader: each page mapped in ahead is
    // resident memory, and a whole step (8 MB) ahead put peak memory past the
    // size of a 38 MB file.
    void populate_upto(std::size_t offset) {
#ifdef MADV_POPULATE_READ
        static const auto page = static_cast<std::size_t>(::sysconf(_SC_PAGESIZE));
        const std::size_t end = std::min(offset, size_) / page * page;
        if (end >= populated_ + step / 8 || (end == size_ / page * page && end > populated_)) {
            ::madvise(static_cast<char*>(data_) + populated_, end - populated_, MADV_POPULATE_READ);
            populated_ = end;
        }
#endif
    }

private:
    void* data_ = nullptr;
    std::size_t size_ = 0;
    std::size_t released_ = 0;
    std::size_t populated_ = 0;
};

// The analyzer's history is about 15 MB of fresh memory (History: 2^18 rows
// of seven columns). Mapped in by page faults, one per 4 KB page, that work
// fell on the analysis thread, the one that sets the pace. The reading
// thread has time to spare, so it maps the rows in a little ahead of the
// analyzer (MADV_POPULATE_WRITE, one call per column and slice). Only the
// address ranges are kept, taken before reading starts; mapping a page in
// never changes what is in it, so the analyzer may be writing there
// meanwhile, and a range that is no longer the history's (the vector grew
// after all) is merely mapped or refused. Kernels before Linux 5.14 refuse
// the call and nothing changes.
class HistoryMapper {
public:
    explicit HistoryMapper(const History& h) {
        for (const auto* v : {&h.time_s, &h.force_N, &h.strain, &h.stress_MPa, &h.running_max, &h.extension_mm,
                              &h.crosshead_mm})
            columns_.push_back({reinterpret_cast<std::uintptr_t>(v->data()), v->capacity()});
        rows_ = columns_.front().rows;
    }
    // Maps rows [0, rows) in, from where the last call stopped.
    void map_upto(std::size_t rows) {
#ifdef MADV_POPULATE_WRITE
        static const auto page = static_cast<std::uintptr_t>(::sysconf(_SC_PAGESIZE));
        rows = std::min(rows, rows_);
        if (rows <= mapped_) return;
        for (const auto& c : columns_) {
            if (c.rows != rows_) continue;
            const std::uintptr_t from = (c.start + mapped_ * sizeof(double)) / page * page;
            const std::uintptr_t to = c.start + rows * sizeof(double);
            ::madvise(reinterpret_cast<void*>(from), to - from, MADV_POPULATE_WRITE);
        }
        mapped_ = rows;
#else
        (void)rows;
#endif
    }

private:
    struct Column {
        std::uintptr_t start;
        std::size_t rows;
    };
    std::vector<Column> columns_;
    std::size_t rows_ = 0, mapped_ = 0;
};

struct AnalyzerSink : FrameSink {
    Analyzer& analyzer;
    std::vector<Event>& events;
    AnalyzerSink(Analyzer& a, std::vector<Event>& e) : analyzer(a), events(e) {}
    void take(const Frame& f) override { analyzer.push(f, events); }
    void take_all(std::span<const Frame> frames) override {
        for (const auto& f : frames) analyzer.push(f, events);
    }
};

// Hands frames to the analyzer and gives the mapped file's pages back as
// soon as the reading thread has passed them, so memory stays flat whatever
// the file's size; meanwhile it maps the analyzer's history in ahead of it.
struct ReleasingSink : FrameSink {
    static constexpr std::size_t margin = 1024 * 1024;  // the reader may still be in the line before
    static constexpr std::size_t rows_ahead = 65536;      // the reader's lead: up to four chunks of 16384
    FrameSink& inner;
    MappedFile& file;
    HistoryMapper& history;
    std::size_t frames_read = 0;
    ReleasingSink(FrameSink& s, MappedFile& f, HistoryMapper& h) : inner(s), file(f), history(h) {}
    void take(const Frame& f) override { inner.take(f); }
    void take_all(std::span<const Frame> frames) override { inner.take_all(frames); }
    // On the reading thread, every 16384 rows (scan_table).
    void passed(std::size_t offset) override {
        if (offset > margin) file.release_before(offset - margin);
        frames_read += 16384;
        history.map_upto(frames_read + rows_ahead);
    }
};

int run(const AnalyzeOptions& o) {
    const auto geometry = check(specimen_from(o));
    if (!geometry) throw BadInput{geometry.error()};
    const auto stress_unit = parse_stress_unit(o.stress_unit);
    if (!stress_unit) throw BadInput{"--stress-unit '" + o.stress_unit + "': expected MPa, ksi or psi"};
    const auto profile = profile_from(o);
    auto layout = layout_from(o);
    layout.area_mm2 = geometry->S0_mm2;  // for tables of stress and strain
    layout.gauge_length_mm = geometry->L0_mm;

    MappedFile file(o.file);
    const std::size_t rows = estimate_rows(file.text());
    Analyzer analyzer(*geometry, profile);
    analyzer.reserve(rows);
    HistoryMapper mapper(analyzer.history());
    std::vector<Event> events;
    AnalyzerSink analysing(analyzer, events);
    ReleasingSink sink(analysing, file, mapper);
    // Rows stream straight into the analyzer; on a bad row nothing is printed
    // but the message.
    auto table = scan_table_pipelined(file.text(), layout, sink);
    if (!table) throw BadInput{o.file + ": " + table.error()};
    const Results results = analyzer.finish();
    // A recording whose force never rises is no test: refuse it rather than
    // print a table of blanks.
    const auto& force = analyzer.history().force_N;
    const auto [low, high] = std::minmax_element(force.begin(), force.end());
    if (force.empty() || !(*high > 0) || !(*high - *low > 0.01 * *high) || !results.E_MPa)
        throw BadInput{o.file + ": no rise in force (highest " + std::to_string(force.empty() ? 0.0 : *high) +
                       " N): expected a recorded tensile test whose force climbs from near zero"};

    if (o.json) {
        auto j = to_json(results);
        j["frames"] = table->frames;
        if (o.events) j["events"] = to_json(events);
        std::cout << j.dump(2) << '\n';
        return 0;
    }
    std::cout << o.file << ": " << table->frames << " frames";
    for (const auto& note : table->notes) std::cout << ", " << note;
    std::cout << '\n';
    if (o.events) {
        for (const auto& e : events) {
            char buf[160];
            std::snprintf(buf, sizeof buf, "  %9.3f s  %-26s %-8s %9.2f MPa at %7.3f %%\n", e.time_s, name_of(e.kind),
                          e.label.c_str(), e.stress_MPa, 100.0 * e.strain);
            std::cout << buf;
        }
    }
    std::cout << results_text(results, *stress_unit);
    return 0;
}

}  // namespace

void add_analyze_command(CLI::App& app, int& exit_code) {
    auto o = std::make_shared<AnalyzeOptions>();
    auto* cmd = app.add_subcommand("analyze", "Analyse a recorded run (CSV: time_s,force_N,extension_mm,crosshead_mm)");
    cmd->add_option("file", o->file, "Recorded run: delimited text with a header")->required();
    auto* section = cmd->add_option_group("cross-section", "Specimen cross-section (one way)");
    section->add_option("--area", o->area, "S0 in mm²");
    section->add_option("--width", o->width, "Width of a flat specimen, mm");
    section->add_option("--thickness", o->thickness, "Thickness of a flat specimen, mm");
    section->add_option("--diameter", o->diameter, "Diameter of a round specimen (outer diameter of a tube), mm");
    section->add_option("--wall", o->wall, "Wall thickness of a tube, mm");
    cmd->add_option("--gauge-length", o->gauge_length, "L0 in mm");
    cmd->add_option("--proportional", o->proportional, "Proportional gauge length k·√S0 (k = 5.65 or 11.3)");
    cmd->add_option("--parallel-length", o->parallel_length, "Lc in mm (for strain from the crosshead)");
    cmd->add_option("--columns", o->columns, "Column numbers, e.g. time=1,force=2,extension=3,crosshead=4");
    cmd->add_option("--force-unit", o->force_unit, "Force unit when the header has none: N, kN, lbf, kgf");
    cmd->add_option("--length-unit,--extension-unit", o->length_unit,
                    "Extension/crosshead unit when the header has none: mm, um, in");
    cmd->add_option("--time-unit", o->time_unit, "Time unit: s, ms, min");
    cmd->add_option("--rate", o->rate_hz, "Sample rate in Hz, for files without a time column");
    cmd->add_option("--offset", o->offsets, "Proof offsets Rp x in % (repeat for several)");
    cmd->add_option("--total", o->totals, "Total extensions Rt x in % (repeat for several)");
    cmd->add_option("--modulus-window", o->modulus_window, "Fixed stress window for E, LOW:HIGH in MPa (default: automatic)");
    cmd->add_option("--extensometer-range", o->extensometer_range, "Extensometer travel in mm; beyond it the reading counts as lost");
    cmd->add_option("--stress-unit", o->stress_unit, "Stress unit of the printed table: MPa, ksi, psi");
    cmd->add_flag("--json", o->json, "Print results as JSON");
    cmd->add_flag("--events", o->events, "List the events too");
    cmd->callback([o, &exit_code] {
        try {
            exit_code = run(*o);
        } catch (const BadInput& bad) {
            std::cerr << "tensilectl analyze: " << bad.message << '\n';
            exit_code = 2;
        }
    });
}

}  // namespace tensile::ctl
