// Plain records that go in and out of the store: runs, their states, alarms,
// counters, and the min/max buckets used for plotting. No behaviour beyond
// name lookups, so any layer (daemon, monitor, tensilectl) can include it.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "engine/event.hpp"

namespace tensile::storage {

// idle is not stored: a run exists from arming on.
enum class RunState { armed, running, finished, aborted, interrupted, faulted };
const char* name_of(RunState state);
std::optional<RunState> parse_run_state(std::string_view name);
// armed and running are live: a run found live when the daemon starts was cut off.
inline bool is_live(RunState s) { return s == RunState::armed || s == RunState::running; }

inline constexpr const char* interrupted_cause = "daemon stopped without finishing the run";

struct NewRun {
    std::string specimen_json = "{}";
    std::string material;  // copied out of the specimen for searching
    std::string profile_json = "{}";
    std::string config_snapshot;  // the config file's text as it was loaded
    std::string software_version = TENSILED_VERSION;
    RunState state = RunState::armed;
    std::string cause = "specimen armed";
    double created_unix_s = 0;
};

struct RunSummary {
    std::int64_t id = 0;
    std::string material;
    RunState state = RunState::armed;
    std::string state_cause;
    double created_unix_s = 0;
    std::optional<double> started_unix_s, finished_unix_s;
    bool has_results = false;
    std::string digest_sha256;  // empty until the run is closed
};

struct StateChange {
    RunState state = RunState::armed;
    std::string cause;
    double unix_s = 0;
};

struct AlarmRecord {
    std::optional<std::int64_t> run_id;
    double unix_s = 0;
    std::string kind;  // short machine word: queue_full, disk_low, ...
    std::string message;
};

struct CounterRecord {
    std::optional<std::int64_t> run_id;
    std::string source;  // source or channel name
    std::string name;
    double value = 0;
    double unix_s = 0;
};

struct RunRecord {
    RunSummary summary;
    std::string specimen_json, profile_json, config_snapshot, software_version;
    std::optional<std::string> results_json;
    std::vector<StateChange> states;
    std::vector<Event> events;
    std::vector<AlarmRecord> alarms;
    std::uint64_t frame_count = 0;
};

struct RunFilter {
    std::optional<double> from_unix_s, to_unix_s;  // on created time, inclusive
    std::optional<RunState> state;
    std::string material_contains;                 // case-insensitive (ASCII); empty: any
    std::int64_t limit = 1000;
};

// Min and max of each channel over one time bucket, for drawing a long run
// with a few thousand points without hiding peaks. NaN when a channel had no value.
struct Bucket {
    double from_s = 0, to_s = 0;
    std::uint64_t count = 0;
    double force_min, force_max, extension_min, extension_max, crosshead_min, crosshead_max;
};

// One chunk row of frames, as the recorder writes it.
struct FrameChunkRow {
    std::int64_t run_id = 0;
    std::int64_t seq = 0;
    std::int64_t first_index = 0;
    std::int64_t frame_count = 0;
    std::optional<double> first_time_s, last_time_s;
    std::string data;  // frame_codec.hpp
};

}  // namespace tensile::storage
