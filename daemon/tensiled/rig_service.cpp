// One rig at work; see rig_service.hpp.
#include "rig_service.hpp"

#include <algorithm>
#include <chrono>

#include "drivers/serial_source.hpp"

namespace tensile {

namespace {
double now_s() { return drivers::host_now_s(); }
}  // namespace

RigService::RigService(boost::asio::io_context& io, DaemonConfig config, std::shared_ptr<spdlog::logger> log)
    : io_(io),
      config_(std::move(config)),
      log_(std::move(log)),
      acquisition_(io, config_,
                   AcquisitionHandlers{
                       [this](const auto& frames, double arrival_s) { on_frames(frames, arrival_s); },
                       [this](const std::string& source, std::span<const std::byte> bytes, double arrival) {
                           if (observers_.on_raw) observers_.on_raw(source, bytes, arrival);
                       },
                       [this](const drivers::GapEvent& gap) {
                           if (gap.open()) {
                               ++lost_sources_;
                               controller_.device_lost(gap.start_s);
                               if (observers_.on_alarm)
                                   observers_.on_alarm("device_lost", "source " + gap.source + " lost: " + gap.reason);
                           } else {
                               if (lost_sources_ > 0 && --lost_sources_ == 0) controller_.device_back(gap.end_s);
                               if (observers_.on_alarm)
                                   observers_.on_alarm("device_back", "source " + gap.source + " back after " +
                                                                          std::to_string(gap.end_s - gap.start_s) + " s");
                           }
                       },
                       nullptr},
                   log_),
      tick_(io),
      counters_(io) {
    // Every output gets its driver, so operators can use them by name; the
    // rig's own roles (commands, hand-over relay) point at two of them.
    // A source has one message handler: it hands each `#` line to every
    // command output on that link.
    std::map<std::string, std::vector<std::shared_ptr<drivers::CommandSender>>> by_source;
    for (const auto& o : config_.drivers.outputs) {
        if (o.kind == drivers::OutputKind::command) {
            auto sender = drivers::CommandSender::create(io_, acquisition_.source(o.source), o.command, log_);
            by_source[o.source].push_back(sender);
            senders_[o.name] = sender;
            if (o.name == config_.rig.commands_output) commands_ = sender;
        }
        if (o.kind == drivers::OutputKind::relay) {
            auto port = std::dynamic_pointer_cast<drivers::SerialSource>(acquisition_.source(o.source));
            if (!port) continue;
            auto& relay = relays_[o.name] = std::make_unique<drivers::RelayOutput>(o.name, port, o.line, log_);
            if (o.name == config_.rig.relay_output) relay_ = relay.get();
        }
    }
    for (auto& [source, senders] : by_source)
        acquisition_.on_device_message(source, [senders = std::move(senders)](std::string_view line) {
            for (const auto& s : senders) s->on_device_message(line);
        });
}

void RigService::start() {
    acquisition_.start();
    schedule_tick();
    schedule_counters();
}

void RigService::stop() {
    tick_.cancel();
    counters_.cancel();
    acquisition_.stop();
}

Result<bool> RigService::arm(const Specimen& specimen, const std::string& profile) {
    const auto geometry = check(specimen);
    if (!geometry) return Error{geometry.error()};
    const std::string name = profile.empty() ? config_.default_profile : profile;
    const auto found = config_.profiles.find(name);
    if (found == config_.profiles.end()) return Error{"no profile '" + name + "'; expected one of the config's profiles"};
    // A run that could not be kept is not started: storage is asked first.
    if (!live(controller_.state()) && observers_.may_arm)
        if (auto ready = observers_.may_arm(); !ready) {
            log_->error("arming refused: {}", ready.error());
            return Error{"arming refused: " + ready.error()};
        }
    step_.clear();
    const double now = now_s();
    auto armed = controller_.arm(*geometry, found->second, now, step_);
    if (armed) acquisition_.reset_time_bases();
    if (!armed) return armed;
    run_ = RunInfo{++runs_, specimen, *geometry, name, now};
    log_->info("run {} armed: {} (S0 {:.3f} mm², L0 {:.2f} mm), profile {}", run_->number, specimen.label,
               geometry->S0_mm2, geometry->L0_mm, name);
    if (observers_.on_armed) {
        if (auto kept = observers_.on_armed(*run_); !kept) {
            // The lock came between the check and the insert: take the arming
            // back before anyone sees it, so no run goes on unrecorded.
            RunOutput scratch;
            (void)controller_.abort(now, "not stored: " + kept.error(), scratch);
            log_->error("run {} taken back: {}", run_->number, kept.error());
            run_.reset();
            step_.clear();
            return Error{"arming refused: " + kept.error()};
        }
    }
    after_step();
    return true;
}

Result<bool> RigService::start_run() {
    step_.clear();
    auto r = controller_.start(now_s(), step_);
    if (r) after_step();
    return r;
}

Result<bool> RigService::stop_run() {
    step_.clear();
    auto r = controller_.stop(now_s(), step_);
    if (r) after_step();
    return r;
}

Result<bool> RigService::abort_run(const std::string& cause) {
    step_.clear();
    auto r = controller_.abort(now_s(), cause, step_);
    if (r) after_step();
    return r;
}

Result<bool> RigService::confirm_handover() {
    step_.clear();
    auto r = controller_.confirm_handover(now_s(), step_);
    if (r) after_step();
    return r;
}

Result<bool> RigService::retare() {
    auto r = controller_.retare(now_s());
    if (r)
        log_->info("{} taken again on command", live(controller_.state()) ? "run " + std::to_string(run_->number) + ": tare"
                                                                         : std::string("readout zero"));
    return r;
}

std::shared_ptr<drivers::CommandSender> RigService::command_output(const std::string& name) const {
    const auto found = senders_.find(name);
    return found == senders_.end() ? nullptr : found->second;
}

drivers::RelayOutput* RigService::relay_output(const std::string& name) const {
    const auto found = relays_.find(name);
    return found == relays_.end() ? nullptr : found->second.get();
}

void RigService::on_frames(const std::vector<drivers::AlignedFrame>& frames, double arrival_s) {
    last_frame_ = frames.back();
    if (!live(controller_.state())) {
        for (const auto& f : frames) controller_.on_idle_frame(f.frame);
        if (observers_.on_idle_frame)
            for (const auto& f : frames) observers_.on_idle_frame(f);
        return;
    }
    // A read can hold many frames. The frame that makes an event, a state
    // change or a request is acted on at once (logged, commands written,
    // observers told), not after the rest of the read: the reaction time is
    // from that frame's arrival, whatever follows it.
    step_.clear();
    for (const auto& f : frames) {
        controller_.on_frame(f.frame, step_);
        if (step_.events.empty() && step_.transitions.empty() && step_.requests.empty()) continue;
        const bool made_events = !step_.events.empty();
        after_step();
        if (made_events) note_latency(now_s() - arrival_s);
        step_.clear();
    }
    if (!step_.frames.empty()) after_step();  // the rest of the read's frames, for the observers
}

void RigService::note_latency(double latency_s) {
    constexpr std::size_t kept = 4096;
    if (latencies_.size() < kept) latencies_.push_back(latency_s);
    else latencies_[latency_next_++ % kept] = latency_s;
}

std::pair<double, double> RigService::event_latency_p50_p99() const {
    if (latencies_.empty()) return {0, 0};
    auto sorted = latencies_;
    std::sort(sorted.begin(), sorted.end());
    const auto at = [&](double q) { return sorted[std::min(sorted.size() - 1, static_cast<std::size_t>(q * sorted.size()))]; };
    return {at(0.5), at(0.99)};
}

// Hands the step to observers, carries out requests, and closes the run when
// it reached its end.
void RigService::after_step() {
    if (!run_) return;
    for (const auto& e : step_.events)
        log_->info("run {}: {} {} at {:.3f} s: {:.2f} MPa, {:.3f} %", run_->number, name_of(e.kind), e.label, e.time_s,
                   e.stress_MPa, 100.0 * e.strain);
    for (const auto& t : step_.transitions)
        log_->info("run {}: {} → {} ({})", run_->number, name_of(t.from), name_of(t.to), t.cause);
    for (const auto& r : step_.requests) carry_out(r);
    if (observers_.on_step) observers_.on_step(*run_, step_);
    for (const auto& t : step_.transitions) {
        if (live(t.to)) continue;
        const auto results = controller_.results().value_or(Results{});
        if (observers_.on_run_end) observers_.on_run_end(*run_, t.to, results);
        break;
    }
}

void RigService::carry_out(const Request& r) {
    switch (r.kind) {
        case RequestKind::extensometer_alert:
            log_->warn("run {}: REMOVE THE EXTENSOMETER now ({}); confirm when it is off", run_->number, r.why);
            if (observers_.on_alarm) observers_.on_alarm("extensometer_alert", r.why);
            return;
        case RequestKind::relay_on:
        case RequestKind::relay_off:
            if (relay_) {
                if (auto ec = relay_->set(r.kind == RequestKind::relay_on); ec && observers_.on_alarm)
                    observers_.on_alarm("output_failed", "relay: " + ec.message());
            }
            return;
        case RequestKind::hold:
        case RequestKind::resume:
        case RequestKind::stop: {
            if (!commands_) {
                log_->warn("run {}: {} requested ({}) but the rig has no command output: do it by hand",
                           run_->number, name_of(r.kind), r.why);
                return;
            }
            commands_->submit(name_of(r.kind), [this](const drivers::CommandResult& res) {
                if (res.outcome == drivers::CommandOutcome::acknowledged) return;
                const std::string msg = "command '" + res.command + "' " + std::string(drivers::name_of(res.outcome)) +
                                        (res.reply.empty() ? "" : ": " + res.reply) + "; treat it as not done";
                log_->error("{}", msg);
                if (observers_.on_alarm) observers_.on_alarm("output_failed", msg);
            });
            return;
        }
    }
}

Result<bool> RigService::reload(const DaemonConfig& fresh) {
    if (live(controller_.state()))
        return Error{std::string("config not reloaded: a run is ") + name_of(controller_.state()) +
                     "; reload when it has finished"};
    config_.profiles = fresh.profiles;
    config_.default_profile = fresh.default_profile;
    config_.text = fresh.text;
    return true;
}

void RigService::send_command(const std::string& command) {
    if (commands_) commands_->submit(command, [](const drivers::CommandResult&) {});
}

void RigService::schedule_tick() {
    tick_.expires_after(std::chrono::milliseconds(100));
    tick_.async_wait([this](const boost::system::error_code& ec) {
        if (ec) return;
        if (live(controller_.state())) {
            step_.clear();
            controller_.tick(now_s(), step_);
            after_step();
        }
        schedule_tick();
    });
}

void RigService::schedule_counters() {
    counters_.expires_after(std::chrono::seconds(10));
    counters_.async_wait([this](const boost::system::error_code& ec) {
        if (ec) return;
        acquisition_.log_counters();
        schedule_counters();
    });
}

}  // namespace tensile
