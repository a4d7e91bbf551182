// The run loop; see run.hpp. Bytes are batched per link (64 KiB in fast mode,
// 5 ms of samples in realtime mode) so writing stays cheap; commands are looked
// at between batches, which is well within a millisecond of wall time either
// way. With one link the order of draws and bytes is exactly that of a
// single-connection rig, so recorded streams stay byte-identical.
#include "run.hpp"

#include <chrono>
#include <cmath>
#include <limits>
#include <thread>

#include "commands.hpp"

namespace tensile::sim {

namespace {

constexpr std::size_t batch_bytes = 1 << 16;

// Link 0 keeps the run's seed (a one-link run is the plain run); the others
// are separate instruments with their own noise and fault draws.
std::uint64_t link_seed(std::uint64_t seed, std::size_t k) { return k == 0 ? seed : seed ^ (0x5EED5EED5EED5EEDull * k); }

bool is_channel_fault(const Fault& f) {
    return f.kind == FaultKind::nan || f.kind == FaultKind::over || f.kind == FaultKind::sensor_stop;
}

// With separate links a channel's fault goes to the link carrying it; the
// faults of the wire (disconnect, garbage, torn, stall, clock jump) to every link.
std::vector<Fault> faults_for(const std::vector<Fault>& all, ChannelSet carried, bool separate) {
    if (!separate) return all;
    std::vector<Fault> out;
    for (const Fault& f : all)
        if (!is_channel_fault(f) || (carried & channel_bit(f.channel))) out.push_back(f);
    return out;
}

struct Link {
    Link(const LinkOut& o, const RunInputs& in, const RunSettings& st, std::size_t k, bool separate)
        : out(o),
          rate(o.rate_hz > 0 ? o.rate_hz : st.rate_hz),
          sensors(in.sensors, link_seed(st.seed, k)),
          faults(faults_for(in.faults, o.channels, separate), link_seed(st.seed, k), rate),
          encoder(st.format, st.line_end, o.channels) {
        buf.reserve(1 << 17);
    }
    [[nodiscard]] double next_time() const { return static_cast<double>(next) / rate; }

    LinkOut out;
    double rate;
    Sensors sensors;
    FaultPlan faults;
    Encoder encoder;
    CommandReader reader;
    std::string buf;
    std::uint64_t next = 0;
    std::uint64_t bytes = 0;
    bool was_disconnected = false;
};

}  // namespace

RunRecord run_test(const RunInputs& in, const RunSettings& st, std::vector<LinkOut> outs, Sink* control) {
    const MaterialCurve& curve = *in.curve;
    const CurveTable table(curve);
    std::vector<Mark> marks;
    if (curve.spec().yield_point) {
        marks.push_back({"upper_yield_s", curve.upper_yield_strain(), {}});
        marks.push_back({"yield_end_s", curve.hardening_start_strain(), {}});
    }
    marks.push_back({"proof_strength_s", in.truth.Rp02_strain, {}});
    marks.push_back({"max_force_s", curve.uniform_strain(), {}});
    Machine machine(table, in.geometry, in.machine, in.truth.Fm_N, marks);
    const bool separate = st.separate_links;
    std::vector<Link> links;
    links.reserve(outs.size());
    for (std::size_t k = 0; k < outs.size(); ++k) links.emplace_back(outs[k], in, st, k, separate);
    CommandReader control_reader;

    RunRecord rec;
    rec.material = curve.spec().name;
    rec.description = curve.spec().description;
    rec.seed = st.seed;
    rec.format = name_of(st.format);
    rec.rate_hz = st.rate_hz;

    for (Link& l : links) l.encoder.begin(l.buf);
    for (Link& l : links) l.out.sink->connect(true);  // the test starts when every reader is there

    double t = 0;
    double end_s = st.max_time_s;
    auto extensometer_on = [&] { return links.front().sensors.extensometer_on(); };
    auto remove_extensometer = [&] {
        for (Link& l : links) l.sensors.remove_extensometer();
    };
    // `reply`: the link whose stream carries the answer; null for the control port.
    auto obey = [&](const std::string& line, const char* from, Link* reply) {
        const ParsedCommand p = parse_command(line);
        if (p.command) {
            switch (*p.command) {
                case Command::hold: machine.hold(); break;
                case Command::resume: machine.resume(); break;
                case Command::stop:
                    if (!machine.state().stopped) end_s = std::min(end_s, t + st.after_end_s);
                    machine.stop();
                    break;
                case Command::extensometer_off:
                    if (extensometer_on()) rec.extensometer_off_s = t;
                    remove_extensometer();
                    break;
                case Command::ping: break;
            }
        }
        if (reply) reply->encoder.message(reply->buf, p.answer);
        else if (control && control->connected()) control->write(p.answer + "\n");
        rec.commands.push_back({t, line, p.answer, from});
    };
    auto poll_control = [&] {
        if (!control) return;
        if (!control->connected()) control->connect(false);
        for (const std::string& line : control_reader.feed(control->poll())) obey(line, "control", nullptr);
    };
    // Hands a link's batch to its sink, then reads the commands that came back on it.
    auto flush = [&](Link& l) {
        if (l.faults.stalled(t)) return;  // silent: the backlog goes out when the stall ends
        Sink& sink = *l.out.sink;
        if (!sink.connected() && !l.was_disconnected) sink.connect(!st.realtime);
        if (sink.connected() && !l.buf.empty()) {
            if (sink.write(l.buf)) l.bytes += l.buf.size();
            else sink.connect(!st.realtime);  // the reader went away: this batch is lost, as on a real line
        }
        l.buf.clear();
        for (const std::string& line : l.reader.feed(sink.poll())) obey(line, "connection", &l);
    };

    const auto wall_start = std::chrono::steady_clock::now();
    double last_flush_t = 0;
    std::size_t next_scheduled = 0;
    for (;;) {
        std::size_t k = 0;
        for (std::size_t j = 1; j < links.size(); ++j)
            if (links[j].next_time() < links[k].next_time()) k = j;
        Link& link = links[k];
        const std::uint64_t i = link.next;
        t = link.next_time();
        if (t > end_s) break;
        while (next_scheduled < st.schedule.size() && st.schedule[next_scheduled].time_s <= t)
            obey(st.schedule[next_scheduled++].line, "schedule", &links.front());
        machine.advance_to(t);
        if (st.extensometer_off_strain && extensometer_on() && machine.state().strain >= *st.extensometer_off_strain) {
            remove_extensometer();
            rec.extensometer_off_s = t;
        }
        if (machine.fracture_time_s()) end_s = std::min(end_s, *machine.fracture_time_s() + st.after_end_s);

        Sample sample = link.sensors.read(machine.state(), link.out.clock.at(t), i);
        link.faults.apply(sample, t);
        Sink& sink = *link.out.sink;
        if (link.faults.disconnected(t)) {
            if (!link.was_disconnected) {
                if (!link.buf.empty() && sink.connected() && sink.write(link.buf)) link.bytes += link.buf.size();
                link.buf.clear();
                sink.drop();
                link.was_disconnected = true;
            }
            link.faults.count_lost(t);
        } else {
            if (link.was_disconnected) {
                sink.connect(!st.realtime);
                link.was_disconnected = false;
            }
            const std::size_t start = link.buf.size();
            link.encoder.append(link.buf, sample);
            link.faults.after_record(link.buf, start, t);
        }
        ++link.next;

        if (st.realtime) {
            if (t - last_flush_t < 0.005 && link.buf.size() < batch_bytes) continue;
            last_flush_t = t;
            std::this_thread::sleep_until(wall_start + std::chrono::duration_cast<std::chrono::steady_clock::duration>(
                                                           std::chrono::duration<double>(t / st.speed)));
            for (Link& l : links) flush(l);
            poll_control();
        } else if (link.buf.size() >= batch_bytes) {
            flush(link);
            poll_control();
        }
    }
    for (Link& l : links)
        if (!l.buf.empty() && l.out.sink->connected() && l.out.sink->write(l.buf)) l.bytes += l.buf.size();
    for (Link& l : links) l.out.sink->finish();
    if (control) control->finish();

    rec.marks = machine.marks();
    rec.fracture_s = machine.fracture_time_s();
    rec.end_s = t;
    for (const Link& l : links) {
        rec.samples += l.next;
        for (const Fault& f : l.faults.faults()) {
            rec.faults.push_back(f);
            if (separate) rec.fault_links.push_back(channel_names(l.out.channels));
        }
        if (separate)
            rec.links.push_back({channel_names(l.out.channels), l.out.target, l.rate, l.out.clock.offset_s,
                                 l.out.clock.drift * 1e6, l.next, l.bytes});
    }
    return rec;
}

}  // namespace tensile::sim
