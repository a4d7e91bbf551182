// Rig reports into live messages; see live_feed.hpp.
#include "live_feed.hpp"

#include <chrono>
#include <cmath>

#include "daemon/offline/results_json.hpp"
#include "daemon/tensiled/run_keeper.hpp"
#include "shared_state.hpp"

namespace tensile::monitor {

using nlohmann::json;

const char* name_of(HandoverState state) {
    switch (state) {
        case HandoverState::not_due: return "not_due";
        case HandoverState::waiting: return "waiting";
        case HandoverState::done: return "done";
    }
    return "?";
}

namespace {
json number(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
}  // namespace

LiveFeed::LiveFeed(boost::asio::io_context& io, const RigService& rig, LiveHub& hub)
    : io_(io), rig_(rig), hub_(hub), points_timer_(io), second_timer_(io) {}

void LiveFeed::start() {
    schedule_points();
    tick_second();
}

void LiveFeed::schedule_points() {
    if (stopped_) return;
    points_timer_.expires_after(std::chrono::milliseconds(20));
    points_timer_.async_wait([this](const boost::system::error_code& ec) {
        if (ec || stopped_) return;
        tick_points();
        schedule_points();
    });
}

void LiveFeed::stop() {
    stopped_ = true;
    points_timer_.cancel();
    second_timer_.cancel();
}

void LiveFeed::send(const json& j) {
    if (hub_.clients() == 0) return;  // nobody listening: build nothing
    hub_.broadcast(make_message(j.dump(-1, ' ', false, json::error_handler_t::replace)));
}

void LiveFeed::armed(const RunInfo& run, std::optional<std::int64_t> run_id) {
    run_id_ = run_id;
    run_number_ = run.number;
    run_frames_ = 0;
    latest_.reset();
    window_count_ = 0;
    handover_ = rig_.handover();
    send({{"type", "state"},
          {"state", "armed"},
          {"run", run.number},
          {"run_id", run_id ? json(*run_id) : json(nullptr)},
          {"label", run.specimen.label},
          {"material", run.specimen.material},
          {"profile", run.profile},
          {"S0_mm2", run.geometry.S0_mm2},
          {"L0_mm", run.geometry.L0_mm},
          {"cause", "specimen armed"}});
}

void LiveFeed::step(const RunInfo& run, const RunOutput& out) {
    for (const auto& f : out.frames) {
        if (!latest_ || window_count_ == 0) {
            window_min_ = window_max_ = f.force_N;
        } else if (std::isfinite(f.force_N)) {
            window_min_ = std::isfinite(window_min_) ? std::min(window_min_, f.force_N) : f.force_N;
            window_max_ = std::isfinite(window_max_) ? std::max(window_max_, f.force_N) : f.force_N;
        }
        latest_ = f;
        ++window_count_;
    }
    run_frames_ += out.frames.size();
    // Events after points: flush the window first so the curve reaches the event.
    if (!out.events.empty() && window_count_ > 0) tick_points();
    for (const auto& e : out.events) {
        auto j = to_json(e);
        j["type"] = "event";
        j["run"] = run.number;
        j["run_id"] = run_id_ ? json(*run_id_) : json(nullptr);
        send(j);
    }
    for (const auto& t : out.transitions) {
        if (!live(t.to)) continue;  // the end goes out as run_end
        send({{"type", "state"},
              {"state", tensile::name_of(t.to)},
              {"from", tensile::name_of(t.from)},
              {"run", run.number},
              {"run_id", run_id_ ? json(*run_id_) : json(nullptr)},
              {"time_s", t.time_s},
              {"cause", t.cause}});
    }
    note_handover();
}

void LiveFeed::note_handover() {
    const auto now = rig_.handover();
    if (now == handover_) return;
    handover_ = now;
    send({{"type", "handover"}, {"handover", name_of(now)}, {"run", run_number_}});
}

void LiveFeed::alarm(const std::string& kind, const std::string& message) {
    alarms_.push_back({unix_now_s(), kind, message, run_id_});
    while (alarms_.size() > recent_alarms) alarms_.pop_front();
    note_handover();
    send({{"type", "alarm"},
          {"kind", kind},
          {"message", message},
          {"unix_s", alarms_.back().unix_s},
          {"run_id", run_id_ ? json(*run_id_) : json(nullptr)}});
}

void LiveFeed::run_end(const RunInfo& run, RunState end, const Results& results) {
    if (window_count_ > 0) tick_points();
    send({{"type", "run_end"},
          {"state", tensile::name_of(end)},
          {"run", run.number},
          {"run_id", run_id_ ? json(*run_id_) : json(nullptr)},
          {"results", to_json(results)}});
    handover_ = HandoverState::not_due;
}

void LiveFeed::idle_frame(const drivers::AlignedFrame& frame) { idle_ = frame; }

json LiveFeed::values() const {
    json v;
    const bool run_live = live(rig_.state()) && latest_;
    const auto& c = rig_.controller();
    // Before the first run frame: the raw frame less whatever zero applies
    // now (the run's tare once taken while armed, the readout zero between runs).
    Frame f = run_live ? *latest_ : rig_.last_frame().frame;
    bool tared = run_live;
    if (!run_live && rig_.state() == RunState::armed && c.tare_taken()) {
        f.force_N -= c.tare()[0];
        f.extension_mm -= c.tare()[1];
        f.crosshead_mm -= c.tare()[2];
        tared = true;
    } else if (!live(rig_.state())) {
        f = c.idle_view(f);
        tared = c.idle_zero_taken();
    }
    v["tared"] = tared;
    v["time_s"] = number(f.time_s);
    v["force_N"] = number(f.force_N);
    v["extension_mm"] = number(f.extension_mm);
    v["crosshead_mm"] = number(f.crosshead_mm);
    v["stress_MPa"] = nullptr;
    v["strain_pct"] = nullptr;
    const auto* a = rig_.controller().analyzer();
    if (run_live && a) {
        const auto p = a->latest();
        v["stress_MPa"] = number(p.stress_MPa);
        v["strain_pct"] = number(100.0 * p.strain);
        v["true_stress_MPa"] = number(p.true_stress_MPa);
        v["true_strain_pct"] = number(100.0 * p.true_strain);
        v["true_valid"] = p.true_valid;  // false past Fm: deformation no longer uniform
        v["strain_source"] = tensile::name_of(p.source);
        const auto rate = a->strain_rate_per_s();
        v["strain_rate_per_s"] = rate ? json(*rate) : json(nullptr);
        const auto phase = a->phase();
        v["rate_phase"] = tensile::name_of(phase);
        const auto& run = rig_.run();
        // find, not at: SIGHUP may have re-read the profiles since this run was armed.
        if (const auto found = run ? rig_.config().profiles.find(run->profile) : rig_.config().profiles.end();
            found != rig_.config().profiles.end()) {
            const auto& band = found->second.profile.rate_bands[static_cast<int>(phase)];
            v["rate_band_per_s"] = {band.min_per_s, band.max_per_s};
        }
    }
    return v;
}

void LiveFeed::tick_points() {
    // Called by the 20 ms timer, and early before an event or the end.
    if (window_count_ > 0 && latest_) {
        auto v = values();
        v["type"] = "points";
        v["run"] = run_number_;
        v["force_min_N"] = number(window_min_);
        v["force_max_N"] = number(window_max_);
        v["frames"] = window_count_;
        send(v);
        window_count_ = 0;
    } else if (idle_ && ++idle_ticks_ >= 10) {  // 5 per second while idle
        idle_ticks_ = 0;
        const auto f = rig_.controller().idle_view(idle_->frame);
        send({{"type", "idle"},
              {"tared", rig_.controller().idle_zero_taken()},
              {"state", tensile::name_of(rig_.state())},
              {"force_N", number(f.force_N)},
              {"extension_mm", number(f.extension_mm)},
              {"crosshead_mm", number(f.crosshead_mm)}});
        idle_.reset();
    }
}

void LiveFeed::tick_second() {
    if (stopped_) return;
    second_timer_.expires_after(std::chrono::seconds(1));
    second_timer_.async_wait([this](const boost::system::error_code& ec) {
        if (ec || stopped_) return;
        const auto total = rig_.acquisition().frames_out();
        frames_per_s_ = static_cast<double>(total - frames_last_second_);
        frames_last_second_ = total;
        hub_.check_stalls(steady_now_s());
        tick_second();
    });
}

}  // namespace tensile::monitor
