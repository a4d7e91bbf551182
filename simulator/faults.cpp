// Fault parsing and injection; see faults.hpp. Faults draw from their own
// random stream, so a run without faults has the same bytes whatever the
// fault code does.
#include "faults.hpp"

#include <charconv>
#include <cmath>

namespace tensile::sim {

const char* name_of(FaultKind k) {
    switch (k) {
        case FaultKind::disconnect: return "disconnect";
        case FaultKind::garbage: return "garbage";
        case FaultKind::torn: return "torn";
        case FaultKind::nan: return "nan";
        case FaultKind::over: return "over";
        case FaultKind::sensor_stop: return "sensor-stop";
        case FaultKind::stall: return "stall";
        case FaultKind::clock_jump: return "clock-jump";
    }
    return "?";
}

const char* name_of(ChannelId c) {
    switch (c) {
        case ChannelId::force: return "force";
        case ChannelId::extension: return "extension";
        case ChannelId::crosshead: return "crosshead";
    }
    return "?";
}

namespace {

bool to_number(std::string_view text, double& out) {
    if (text.empty()) return false;
    if (text.front() == '+') text.remove_prefix(1);
    const auto r = std::from_chars(text.data(), text.data() + text.size(), out);
    return r.ec == std::errc() && r.ptr == text.data() + text.size() && std::isfinite(out);
}

}  // namespace

Result<Fault> parse_fault(std::string_view spec) {
    const std::string given(spec);
    const std::string form = "; expected KIND@START[+DURATION][:PARAM], e.g. garbage@12+2:500";
    Fault f;
    f.spec = given;
    const auto at = spec.find('@');
    if (at == std::string_view::npos) return Error{"--fault '" + given + "' has no '@START'" + form};
    const std::string_view kind = spec.substr(0, at);
    bool known = false;
    for (FaultKind k : {FaultKind::disconnect, FaultKind::garbage, FaultKind::torn, FaultKind::nan, FaultKind::over,
                        FaultKind::sensor_stop, FaultKind::stall, FaultKind::clock_jump})
        if (kind == name_of(k)) { f.kind = k; known = true; }
    if (!known)
        return Error{"--fault '" + given + "': unknown kind '" + std::string(kind) +
                     "'; expected disconnect, garbage, torn, nan, over, sensor-stop, stall or clock-jump"};
    std::string_view rest = spec.substr(at + 1);
    std::string_view param;
    if (const auto colon = rest.find(':'); colon != std::string_view::npos) {
        param = rest.substr(colon + 1);
        rest = rest.substr(0, colon);
    }
    std::string_view duration;
    if (const auto plus = rest.find('+'); plus != std::string_view::npos) {
        duration = rest.substr(plus + 1);
        rest = rest.substr(0, plus);
    }
    if (!to_number(rest, f.start_s) || f.start_s < 0)
        return Error{"--fault '" + given + "': start '" + std::string(rest) + "' is not a time in seconds >= 0" + form};
    f.duration_s = 1.0;
    if (!duration.empty() && (!to_number(duration, f.duration_s) || f.duration_s <= 0))
        return Error{"--fault '" + given + "': duration '" + std::string(duration) + "' is not a positive time in seconds" + form};

    switch (f.kind) {
        case FaultKind::garbage:
            f.amount = 1000;
            if (!param.empty() && (!to_number(param, f.amount) || f.amount <= 0))
                return Error{"--fault '" + given + "': garbage rate '" + std::string(param) + "' must be positive bytes per second"};
            break;
        case FaultKind::torn:
            f.amount = 0.1;
            if (!param.empty() && (!to_number(param, f.amount) || f.amount <= 0 || f.amount > 1))
                return Error{"--fault '" + given + "': torn share '" + std::string(param) + "' must be in (0, 1]"};
            break;
        case FaultKind::nan:
        case FaultKind::over:
        case FaultKind::sensor_stop: {
            f.channel = f.kind == FaultKind::sensor_stop ? ChannelId::extension : ChannelId::force;
            if (param.empty()) break;
            bool ok = false;
            for (ChannelId c : {ChannelId::force, ChannelId::extension, ChannelId::crosshead})
                if (param == name_of(c)) { f.channel = c; ok = true; }
            if (!ok) return Error{"--fault '" + given + "': channel '" + std::string(param) + "'; expected force, extension or crosshead"};
            break;
        }
        case FaultKind::clock_jump:
            if (!duration.empty()) return Error{"--fault '" + given + "': a clock jump has no duration; expected clock-jump@START:SECONDS"};
            f.duration_s = 0;
            if (param.empty() || !to_number(param, f.amount) || f.amount == 0)
                return Error{"--fault '" + given + "': expected clock-jump@START:SECONDS with a non-zero jump"};
            break;
        case FaultKind::disconnect:
        case FaultKind::stall:
            if (!param.empty()) return Error{"--fault '" + given + "': " + name_of(f.kind) + " takes no parameter" + form};
            break;
    }
    return f;
}

FaultPlan::FaultPlan(std::vector<Fault> faults, std::uint64_t seed, double rate_hz)
    : faults_(std::move(faults)), rng_(seed ^ 0xFA17FA17FA17FA17ull), rate_hz_(rate_hz) {}

void FaultPlan::apply(Sample& s, double t) {
    ChannelReading* readings[3] = {&s.force, &s.extension, &s.crosshead};
    bool freeze[3] = {false, false, false};
    for (Fault& f : faults_) {
        if (f.kind == FaultKind::clock_jump) {
            if (t >= f.start_s) {
                const double shifted = static_cast<double>(s.device_time_us) + f.amount * 1e6;
                s.device_time_us = static_cast<std::uint64_t>(std::max(0.0, shifted));
                if (t < f.start_s + 1.0 / rate_hz_) ++f.records_affected;
            }
            continue;
        }
        if (!f.active(t)) continue;
        ChannelReading& r = *readings[static_cast<int>(f.channel)];
        switch (f.kind) {
            case FaultKind::nan: r.kind = Reading::nan; ++f.records_affected; break;
            case FaultKind::over: r.kind = Reading::over; ++f.records_affected; break;
            case FaultKind::sensor_stop: freeze[static_cast<int>(f.channel)] = true; ++f.records_affected; break;
            default: break;
        }
    }
    for (int i = 0; i < 3; ++i) {
        if (freeze[i] && frozen_valid_[i]) *readings[i] = frozen_[i];
        else { frozen_[i] = *readings[i]; frozen_valid_[i] = true; }
    }
}

void FaultPlan::after_record(std::string& out, std::size_t start, double t) {
    // Tearing first, so garbage lands after the torn piece as it would on a line.
    Fault* torn_by = nullptr;
    for (Fault& f : faults_) {
        if (f.kind != FaultKind::torn || !f.active(t)) continue;
        const std::size_t len = out.size() - start;
        if (len > 2 && rng_.uniform() < f.amount) {
            out.resize(start + 1 + rng_.below(len - 2));  // keep 1..len-2 bytes: the line end is lost
            ++f.records_affected;
            f.fragment_bytes += out.size() - start;
            if (!tearing_ && !torn_by) ++f.torn_runs;
            torn_by = &f;
        }
    }
    if (!torn_by && tearing_) tearing_->glued_bytes += out.size() - start;  // this whole record ends the run
    tearing_ = torn_by;
    for (Fault& f : faults_) {
        if (f.kind != FaultKind::garbage || !f.active(t)) continue;
        garbage_credit_ += f.amount / rate_hz_;
        while (garbage_credit_ >= 1) {
            out.push_back(static_cast<char>(rng_.below(256)));
            garbage_credit_ -= 1;
            ++f.bytes_injected;
        }
    }
}

bool FaultPlan::disconnected(double t) const {
    for (const Fault& f : faults_)
        if (f.kind == FaultKind::disconnect && f.active(t)) return true;
    return false;
}

bool FaultPlan::stalled(double t) const {
    for (const Fault& f : faults_)
        if (f.kind == FaultKind::stall && f.active(t)) return true;
    return false;
}

void FaultPlan::count_lost(double t) {
    for (Fault& f : faults_)
        if (f.kind == FaultKind::disconnect && f.active(t)) ++f.records_affected;
}

}  // namespace tensile::sim
