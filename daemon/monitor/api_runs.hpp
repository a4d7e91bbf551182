// The stored-run part of the API: list with filters, one run in full, frames
// thinned for plotting (min/max per time bucket), and export as CSV or JSON.
// Parsing of query parameters happens on the io_context thread (cheap, gives
// 400 at once); the jobs themselves run on the RunReader's thread with its
// own connection. SQL goes through the store's bound parameters only.
//
// Error policy: a bad parameter is 400 naming it and what was expected; an
// unknown run is 404; a database error is 500 with SQLite's message.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>

#include "daemon/storage/store.hpp"
#include "engine/result.hpp"
#include "reply.hpp"

namespace tensile::monitor {

using Query = std::map<std::string, std::string>;

// from/to: a date (YYYY-MM-DD, UTC; `to` covers that whole day) or Unix seconds;
// state: a stored run state; material: part of the material text; limit: 1..10000.
Result<storage::RunFilter> parse_run_filter(const Query& query);
// "12" → 12; anything else is no run.
std::optional<std::int64_t> parse_run_id(const std::string& text);

struct FramesQuery {
    double from_s = -storage::all_time, to_s = storage::all_time;
    std::size_t points = 1000;  // buckets; 1..20000
};
Result<FramesQuery> parse_frames_query(const Query& query);

Reply list_runs(storage::Store& store, const storage::RunFilter& filter);
Reply show_run(storage::Store& store, std::int64_t run);
Reply run_frames(storage::Store& store, std::int64_t run, const FramesQuery& q);
// format: "csv" or "json" (checked by the caller).
Reply export_run(storage::Store& store, std::int64_t run, const std::string& format);

// The CSV header of an export, fixed.
inline constexpr const char* export_csv_header = "time_s,force_N,extension_mm,crosshead_mm,stress_MPa,strain_pct";

}  // namespace tensile::monitor
