// Store queries: run lists and records, frames by time range (decoded), raw
// chunks for re-parsing, and min/max buckets for plots. Frames are decoded one
// chunk at a time, so reading a long run needs memory for one chunk only
// (unless the caller collects them). Errors are values; a damaged chunk stops
// the read with an error naming the run and chunk.
#include <algorithm>
#include <cmath>

#include "frame_codec.hpp"
#include "store.hpp"

namespace tensile::storage {
namespace {

template <class F>
Status each_row(Stmt& stmt, F&& row) {
    for (;;) {
        auto more = stmt.step();
        if (!more) return Error{more.error()};
        if (!*more) return Done{};
        row(stmt);
    }
}

std::optional<EventKind> parse_event_kind(const std::string& name) {
    for (int k = 0; k <= static_cast<int>(EventKind::rate_in_range); ++k)
        if (name == name_of(static_cast<EventKind>(k))) return static_cast<EventKind>(k);
    return std::nullopt;
}

constexpr const char* summary_columns =
    "id, material, state, state_cause, created_unix_s, started_unix_s, finished_unix_s, results IS NOT NULL, "
    "coalesce(digest_sha256, '')";

RunSummary read_summary(const Stmt& s) {
    RunSummary r;
    r.id = s.int64(0);
    r.material = s.text(1);
    // A state name this version doesn't know can only come from a newer writer; show it as closed.
    r.state = parse_run_state(s.text(2)).value_or(RunState::aborted);
    r.state_cause = s.text(3);
    r.created_unix_s = s.real(4);
    r.started_unix_s = s.opt_real(5);
    r.finished_unix_s = s.opt_real(6);
    r.has_results = s.int64(7) != 0;
    r.digest_sha256 = s.text(8);
    return r;
}

double nan_min(double a, double b) { return std::isnan(a) ? b : std::isnan(b) ? a : std::min(a, b); }
double nan_max(double a, double b) { return std::isnan(a) ? b : std::isnan(b) ? a : std::max(a, b); }

}  // namespace

Result<std::vector<RunSummary>> Store::list_runs(const RunFilter& f) {
    // Absent filters are bound as NULL and switch their clause off, so the SQL
    // text never depends on input.
    auto stmt = db_.prepare(std::string("SELECT ") + summary_columns +
                            " FROM runs WHERE (?1 IS NULL OR created_unix_s >= ?1) AND (?2 IS NULL OR created_unix_s <= ?2)"
                            " AND (?3 IS NULL OR state = ?3) AND (?4 = '' OR instr(lower(material), lower(?4)) > 0)"
                            " ORDER BY created_unix_s DESC, id DESC LIMIT ?5");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, f.from_unix_s).bind(2, f.to_unix_s);
    if (f.state) stmt->bind(3, name_of(*f.state));
    stmt->bind(4, f.material_contains).bind(5, f.limit);
    std::vector<RunSummary> out;
    if (auto s = each_row(*stmt, [&](const Stmt& row) { out.push_back(read_summary(row)); }); !s) return Error{s.error()};
    return out;
}

Result<RunRecord> Store::load_run(std::int64_t run) {
    RunRecord rec;
    auto stmt = db_.prepare(std::string("SELECT ") + summary_columns +
                            ", specimen, profile, config_snapshot, software_version, results FROM runs WHERE id = ?");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, run);
    auto row = stmt->step();
    if (!row) return Error{row.error()};
    if (!*row) return Error{"no run " + std::to_string(run)};
    rec.summary = read_summary(*stmt);
    rec.specimen_json = stmt->text(9);
    rec.profile_json = stmt->text(10);
    rec.config_snapshot = stmt->text(11);
    rec.software_version = stmt->text(12);
    if (!stmt->is_null(13)) rec.results_json = stmt->text(13);

    auto states = db_.prepare("SELECT state, cause, unix_s FROM state_changes WHERE run_id = ? ORDER BY id");
    if (!states) return Error{states.error()};
    states->bind(1, run);
    auto s1 = each_row(*states, [&](const Stmt& r) {
        rec.states.push_back({parse_run_state(r.text(0)).value_or(RunState::aborted), r.text(1), r.real(2)});
    });
    if (!s1) return Error{s1.error()};

    auto events = db_.prepare(
        "SELECT kind, label, time_s, frame, stress_MPa, strain, value FROM events WHERE run_id = ? ORDER BY id");
    if (!events) return Error{events.error()};
    events->bind(1, run);
    std::string unknown;
    auto s2 = each_row(*events, [&](const Stmt& r) {
        auto kind = parse_event_kind(r.text(0));
        if (!kind) { unknown = r.text(0); return; }
        rec.events.push_back(Event{*kind, r.real(2), static_cast<std::uint64_t>(r.int64(3)), r.real(4), r.real(5),
                                   r.real(6), r.text(1)});
    });
    if (!s2) return Error{s2.error()};
    if (!unknown.empty()) return Error{"run " + std::to_string(run) + " has an event kind this version does not know: " + unknown};

    auto alarms = load_alarms(run);
    if (!alarms) return Error{alarms.error()};
    rec.alarms = std::move(*alarms);

    auto count = db_.prepare("SELECT coalesce(sum(frame_count), 0) FROM frame_chunks WHERE run_id = ?");
    if (!count) return Error{count.error()};
    count->bind(1, run);
    if (auto r = count->step(); !r) return Error{r.error()};
    rec.frame_count = static_cast<std::uint64_t>(count->int64(0));
    return rec;
}

Result<std::vector<AlarmRecord>> Store::load_alarms(std::optional<std::int64_t> run) {
    auto stmt = db_.prepare(
        "SELECT run_id, unix_s, kind, message FROM alarms WHERE (?1 IS NULL AND run_id IS NULL) OR run_id = ?1 ORDER BY id");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, run);
    std::vector<AlarmRecord> out;
    auto s = each_row(*stmt, [&](const Stmt& r) {
        AlarmRecord a;
        if (!r.is_null(0)) a.run_id = r.int64(0);
        a.unix_s = r.real(1);
        a.kind = r.text(2);
        a.message = r.text(3);
        out.push_back(std::move(a));
    });
    if (!s) return Error{s.error()};
    return out;
}

Result<std::vector<CounterRecord>> Store::load_counters(std::int64_t run) {
    auto stmt = db_.prepare("SELECT source, name, value, unix_s FROM counters WHERE run_id = ? ORDER BY id");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, run);
    std::vector<CounterRecord> out;
    auto s = each_row(*stmt, [&](const Stmt& r) { out.push_back({run, r.text(0), r.text(1), r.real(2), r.real(3)}); });
    if (!s) return Error{s.error()};
    return out;
}

Status Store::for_each_frame(std::int64_t run, double from_s, double to_s, const std::function<void(const Frame&)>& visit) {
    const bool whole = from_s == -all_time && to_s == all_time;
    auto stmt = db_.prepare(
        "SELECT seq, data FROM frame_chunks WHERE run_id = ?1 AND (?2 OR (last_time_s >= ?3 AND first_time_s <= ?4)) ORDER BY seq");
    if (!stmt) return Error{stmt.error()};
    // Infinite bounds go in as huge finite values: SQLite keeps them, but be plain.
    stmt->bind(1, run).bind(2, whole ? 1 : 0).bind(3, std::max(from_s, -1e300)).bind(4, std::min(to_s, 1e300));
    std::vector<Frame> frames;
    for (;;) {
        auto more = stmt->step();
        if (!more) return Error{more.error()};
        if (!*more) return Done{};
        frames.clear();
        auto n = decode_frames(stmt->blob(1), frames);
        if (!n) return Error{"run " + std::to_string(run) + ", frame chunk " + std::to_string(stmt->int64(0)) + ": " + n.error()};
        for (const Frame& f : frames)
            if (whole || (f.time_s >= from_s && f.time_s <= to_s)) visit(f);
    }
}

Result<std::vector<Frame>> Store::load_frames(std::int64_t run, double from_s, double to_s) {
    std::vector<Frame> out;
    if (auto s = for_each_frame(run, from_s, to_s, [&](const Frame& f) { out.push_back(f); }); !s) return Error{s.error()};
    return out;
}

Status Store::for_each_raw_chunk(std::int64_t run, const std::function<void(const RawChunk&)>& visit) {
    auto stmt = db_.prepare("SELECT source, seq, bytes, arrivals, codec FROM raw_chunks WHERE run_id = ? ORDER BY source, seq");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, run);
    for (;;) {
        auto more = stmt->step();
        if (!more) return Error{more.error()};
        if (!*more) return Done{};
        RawChunk chunk;
        chunk.source = stmt->text(0);
        chunk.seq = stmt->int64(1);
        if (auto s = unpack_raw(stmt->text(4), stmt->blob(2), stmt->blob(3), chunk); !s)
            return Error{"run " + std::to_string(run) + ", raw chunk " + chunk.source + "/" + std::to_string(chunk.seq) + ": " + s.error()};
        visit(chunk);
    }
}

Result<std::vector<Bucket>> Store::decimate(std::int64_t run, std::size_t buckets, double from_s, double to_s) {
    if (buckets == 0) return Error{"decimate needs at least one bucket"};
    if (!std::isfinite(from_s) || !std::isfinite(to_s)) {
        auto span = db_.prepare("SELECT min(first_time_s), max(last_time_s) FROM frame_chunks WHERE run_id = ?");
        if (!span) return Error{span.error()};
        span->bind(1, run);
        if (auto r = span->step(); !r) return Error{r.error()};
        if (span->is_null(0)) return std::vector<Bucket>{};
        if (!std::isfinite(from_s)) from_s = span->real(0);
        if (!std::isfinite(to_s)) to_s = span->real(1);
    }
    if (!(to_s >= from_s)) return Error{"decimate: the time range ends before it starts"};
    const double nan = std::nan("");
    std::vector<Bucket> out(buckets, Bucket{0, 0, 0, nan, nan, nan, nan, nan, nan});
    const double width = (to_s - from_s) / static_cast<double>(buckets);
    for (std::size_t i = 0; i < buckets; ++i) {
        out[i].from_s = from_s + width * static_cast<double>(i);
        out[i].to_s = i + 1 == buckets ? to_s : from_s + width * static_cast<double>(i + 1);
    }
    auto s = for_each_frame(run, from_s, to_s, [&](const Frame& f) {
        std::size_t i = width > 0 ? static_cast<std::size_t>((f.time_s - from_s) / width) : 0;
        Bucket& b = out[std::min(i, buckets - 1)];
        ++b.count;
        b.force_min = nan_min(b.force_min, f.force_N);
        b.force_max = nan_max(b.force_max, f.force_N);
        b.extension_min = nan_min(b.extension_min, f.extension_mm);
        b.extension_max = nan_max(b.extension_max, f.extension_mm);
        b.crosshead_min = nan_min(b.crosshead_min, f.crosshead_mm);
        b.crosshead_max = nan_max(b.crosshead_max, f.crosshead_mm);
    });
    if (!s) return Error{s.error()};
    return out;
}

}  // namespace tensile::storage
