// The status document and the Prometheus metrics; see api.hpp. Both are
// built on the io_context thread from in-memory counters (no database).
#include <cmath>
#include <filesystem>
#include <sstream>

#include "api.hpp"
#include "daemon/storage/sqlite_db.hpp"
#include "daemon/tensiled/run_keeper.hpp"
#include "shared_state.hpp"

namespace tensile::monitor {

using nlohmann::json;

namespace {

json source_json(const Acquisition::SourceStatus& s) {
    const auto& st = s.counters.stream;
    json channels = json::array();
    for (const auto& c : s.counters.channels)
        channels.push_back({{"good", c.good}, {"nan", c.nan}, {"overload", c.overload}, {"out_of_range", c.out_of_range}});
    return {{"name", s.name},
            {"state", std::string(drivers::name_of(s.state))},
            {"bytes", st.bytes},
            {"records", st.records},
            {"bad_records", st.bad_records},
            {"long_lines", st.long_lines},
            {"checksum_failures", st.checksum_failures},
            {"resync_bytes", st.resync_bytes},
            {"lost_frames", st.lost_frames},
            {"channels", channels}};
}

json recorder_json(const storage::RecorderCounters& c) {
    return {{"frames_queued", c.frames_queued},
            {"frames_committed", c.frames_committed},
            {"frames_dropped", c.frames_dropped},
            {"frames_refused_disk", c.frames_refused_disk},
            {"messages_dropped", c.messages_dropped},
            {"raw_bytes_written", c.raw_bytes_written},
            {"raw_chunks_packed", c.raw_chunks_packed},
            {"raw_chunks_quick", c.raw_chunks_quick},
            {"write_errors", c.write_errors},
            {"queue_depth", c.frames_waiting},
            {"queue_high_water", c.frame_high_water},
            {"disk_low", c.disk_low},
            {"db_locked", c.db_locked},
            {"db_locked_s", c.db_locked_s},
            {"lock_episodes", c.lock_episodes},
            {"backlog_bytes", c.backlog_bytes}};
}

}  // namespace

json Api::status() const {
    json j;
    j["daemon"] = {{"version", TENSILED_VERSION},
                   {"rig", c_.rig.config().rig.name},
                   {"uptime_s", steady_now_s() - started_s_}};
    j["state"] = tensile::name_of(c_.rig.state());
    j["handover"] = name_of(c_.rig.handover());
    if (const auto& run = c_.rig.run(); run && live(c_.rig.state())) {
        j["run"] = {{"number", run->number},
                    {"id", c_.feed.run_id() ? json(*c_.feed.run_id()) : json(nullptr)},
                    {"label", run->specimen.label},
                    {"material", run->specimen.material},
                    {"profile", run->profile},
                    {"S0_mm2", run->geometry.S0_mm2},
                    {"L0_mm", run->geometry.L0_mm}};
    } else {
        j["run"] = nullptr;
    }
    j["values"] = c_.feed.values();
    {
        // The zero in force now: the run's tare while a run is live, the
        // readout zero between runs; "taking" until its frames are in.
        const auto& c = c_.rig.controller();
        const bool run = live(c_.rig.state());
        const bool taking = run ? !c.tare_taken() : c.idle_zero_pending();
        const bool taken = run ? c.tare_taken() : c.idle_zero_taken();
        const double* zero = run ? c.tare() : c.idle_zero();
        j["tare"] = {{"scope", run ? "run" : "readout"},
                     {"state", taking ? "taking" : taken ? "taken" : "none"},
                     {"force_N", taken ? json(zero[0]) : json(nullptr)},
                     {"extension_mm", taken ? json(zero[1]) : json(nullptr)},
                     {"crosshead_mm", taken ? json(zero[2]) : json(nullptr)}};
    }
    json sources = json::array();
    for (const auto& s : c_.rig.acquisition().status()) sources.push_back(source_json(s));
    j["sources"] = sources;
    const auto [latency_p50, latency_p99] = c_.rig.event_latency_p50_p99();
    // From reading the bytes that complete a frame to its events out (the last few thousand).
    j["acquisition"] = {{"frames", c_.rig.acquisition().frames_out()},
                        {"frames_per_s", c_.feed.frames_per_s()},
                        {"event_latency_ms", {{"p50", 1e3 * latency_p50}, {"p99", 1e3 * latency_p99}}}};
    j["recorder"] = recorder_json(c_.keeper.counters());
    const auto sqlite = storage::sqlite_memory();
    j["memory"] = {{"sqlite_bytes", sqlite.used_bytes}, {"sqlite_peak_bytes", sqlite.peak_bytes}};
    j["monitor"] = {{"live_clients", c_.hub.clients()}, {"live_clients_dropped", c_.hub.dropped()},
                    {"token_required_for_reads", !c_.access.loopback()}};
    json alarms = json::array();
    for (const auto& a : c_.feed.alarms())
        alarms.push_back({{"kind", a.kind}, {"message", a.message}, {"unix_s", a.unix_s},
                          {"run_id", a.run_id ? json(*a.run_id) : json(nullptr)}});
    j["alarms"] = alarms;
    json profiles = json::array();
    for (const auto& [name, p] : c_.rig.config().profiles) profiles.push_back(name);
    j["profiles"] = profiles;
    j["default_profile"] = c_.rig.config().default_profile;
    return j;
}

std::string Api::metrics() const {
    std::ostringstream m;
    m.precision(12);
    auto metric = [&](const char* name, const char* type, const char* help) {
        m << "# HELP " << name << ' ' << help << "\n# TYPE " << name << ' ' << type << '\n';
    };
    metric("tensiled_frames_total", "counter", "Aligned frames produced by acquisition since start.");
    m << "tensiled_frames_total " << c_.rig.acquisition().frames_out() << '\n';
    metric("tensiled_frames_per_second", "gauge", "Aligned frames over the last second.");
    m << "tensiled_frames_per_second " << c_.feed.frames_per_s() << '\n';

    const auto sources = c_.rig.acquisition().status();
    metric("tensiled_source_connected", "gauge", "1 when the source is connected.");
    for (const auto& s : sources)
        m << "tensiled_source_connected{source=\"" << s.name << "\"} " << (s.state == drivers::SourceState::connected) << '\n';
    metric("tensiled_source_bytes_total", "counter", "Bytes read from the source.");
    for (const auto& s : sources) m << "tensiled_source_bytes_total{source=\"" << s.name << "\"} " << s.counters.stream.bytes << '\n';
    metric("tensiled_source_bad_bytes_total", "counter", "Bytes discarded while resynchronising (bad lines, bad frames).");
    for (const auto& s : sources)
        m << "tensiled_source_bad_bytes_total{source=\"" << s.name << "\"} " << s.counters.stream.resync_bytes << '\n';
    metric("tensiled_source_bad_records_total", "counter", "Torn or malformed records and checksum failures.");
    for (const auto& s : sources)
        m << "tensiled_source_bad_records_total{source=\"" << s.name << "\"} "
          << s.counters.stream.bad_records + s.counters.stream.checksum_failures << '\n';

    const auto rc = c_.keeper.counters();
    metric("tensiled_recorder_queue_depth", "gauge", "Frames waiting in the recorder's queue.");
    m << "tensiled_recorder_queue_depth " << rc.frames_waiting << '\n';
    metric("tensiled_recorder_frames_committed_total", "counter", "Frames known durable in the database.");
    m << "tensiled_recorder_frames_committed_total " << rc.frames_committed << '\n';
    metric("tensiled_recorder_frames_dropped_total", "counter", "Frames lost because the recorder's queue was full.");
    m << "tensiled_recorder_frames_dropped_total " << rc.frames_dropped << '\n';
    metric("tensiled_recorder_write_errors_total", "counter", "Database write errors.");
    m << "tensiled_recorder_write_errors_total " << rc.write_errors << '\n';

    metric("tensiled_recorder_raw_chunks_quick_total", "counter",
           "Raw-byte chunks packed quickly (less shrinking) because the recorder was falling behind.");
    m << "tensiled_recorder_raw_chunks_quick_total " << rc.raw_chunks_quick << '\n';

    metric("tensiled_recorder_db_locked", "gauge", "1 while another process holds the database's write lock.");
    m << "tensiled_recorder_db_locked " << rc.db_locked << '\n';
    metric("tensiled_recorder_backlog_bytes", "gauge", "Written data held in memory while the database is locked.");
    m << "tensiled_recorder_backlog_bytes " << rc.backlog_bytes << '\n';
    metric("tensiled_sqlite_memory_bytes", "gauge", "Heap memory SQLite holds (page caches, statements), all connections.");
    m << "tensiled_sqlite_memory_bytes " << storage::sqlite_memory().used_bytes << '\n';

    metric("tensiled_run_state", "gauge", "1 for the rig's current run state.");
    for (auto s : {RunState::idle, RunState::armed, RunState::running, RunState::finished, RunState::aborted,
                   RunState::interrupted, RunState::faulted})
        m << "tensiled_run_state{state=\"" << tensile::name_of(s) << "\"} " << (c_.rig.state() == s) << '\n';
    metric("tensiled_handover_waiting", "gauge", "1 while the extensometer should be removed.");
    m << "tensiled_handover_waiting " << (c_.rig.handover() == HandoverState::waiting) << '\n';

    std::error_code ec;
    const auto space = std::filesystem::space(c_.data_dir, ec);
    metric("tensiled_disk_free_bytes", "gauge", "Free bytes on the data folder's file system.");
    m << "tensiled_disk_free_bytes " << (ec ? 0.0 : static_cast<double>(space.available)) << '\n';

    metric("tensiled_live_clients", "gauge", "WebSocket clients of the live feed.");
    m << "tensiled_live_clients " << c_.hub.clients() << '\n';
    metric("tensiled_live_clients_dropped_total", "counter", "Live clients dropped because they fell behind.");
    m << "tensiled_live_clients_dropped_total " << c_.hub.dropped() << '\n';
    metric("tensiled_alarms_recent", "gauge", "Alarms held in the recent list.");
    m << "tensiled_alarms_recent " << c_.feed.alarms().size() << '\n';
    return m.str();
}

}  // namespace tensile::monitor
