// The run loop; see run.hpp. Bytes are batched (64 KiB in fast mode, 5 ms of
// samples in realtime mode) so writing stays cheap; commands are looked at
// between batches, which is well within a millisecond of wall time either way.
#include "run.hpp"

#include <chrono>
#include <cmath>
#include <limits>
#include <thread>

#include "commands.hpp"

namespace tensile::sim {

RunRecord run_test(const RunInputs& in, const RunSettings& st, Sink& sink) {
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
    Sensors sensors(in.sensors, st.seed);
    FaultPlan faults(in.faults, st.seed, st.rate_hz);
    Encoder encoder(st.format, st.line_end);
    CommandReader reader;

    RunRecord rec;
    rec.material = curve.spec().name;
    rec.description = curve.spec().description;
    rec.seed = st.seed;
    rec.format = name_of(st.format);
    rec.rate_hz = st.rate_hz;

    std::string buf;
    buf.reserve(1 << 17);
    encoder.begin(buf);
    sink.connect(true);  // the test starts when the first reader is there

    double t = 0;
    double end_s = st.max_time_s;
    auto obey = [&](const std::string& line, const char* from) {
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
                    if (sensors.extensometer_on()) rec.extensometer_off_s = t;
                    sensors.remove_extensometer();
                    break;
                case Command::ping: break;
            }
        }
        encoder.message(buf, p.answer);
        rec.commands.push_back({t, line, p.answer, from});
    };

    const auto wall_start = std::chrono::steady_clock::now();
    const std::size_t batch_bytes = 1 << 16;
    double last_flush_t = 0;
    bool was_disconnected = false;
    std::size_t next_scheduled = 0;
    std::uint64_t i = 0;
    for (;; ++i) {
        t = static_cast<double>(i) / st.rate_hz;
        if (t > end_s) break;
        while (next_scheduled < st.schedule.size() && st.schedule[next_scheduled].time_s <= t)
            obey(st.schedule[next_scheduled++].line, "schedule");
        machine.advance_to(t);
        if (st.extensometer_off_strain && sensors.extensometer_on() && machine.state().strain >= *st.extensometer_off_strain) {
            sensors.remove_extensometer();
            rec.extensometer_off_s = t;
        }
        if (machine.fracture_time_s()) end_s = std::min(end_s, *machine.fracture_time_s() + st.after_end_s);

        Sample sample = sensors.read(machine.state(), t, i);
        faults.apply(sample, t);
        if (faults.disconnected(t)) {
            if (!was_disconnected) {
                if (!buf.empty() && sink.connected()) sink.write(buf);
                buf.clear();
                sink.drop();
                was_disconnected = true;
            }
            faults.count_lost(t);
        } else {
            if (was_disconnected) {
                sink.connect(!st.realtime);
                was_disconnected = false;
            }
            const std::size_t start = buf.size();
            encoder.append(buf, sample);
            faults.after_record(buf, start, t);
        }

        const bool due = buf.size() >= batch_bytes || (st.realtime && t - last_flush_t >= 0.005);
        if (!due) continue;
        last_flush_t = t;
        if (st.realtime)
            std::this_thread::sleep_until(wall_start + std::chrono::duration_cast<std::chrono::steady_clock::duration>(
                                                           std::chrono::duration<double>(t / st.speed)));
        if (faults.stalled(t)) continue;  // silent: the backlog goes out when the stall ends
        if (!sink.connected() && !was_disconnected) sink.connect(!st.realtime);
        if (sink.connected() && !buf.empty() && !sink.write(buf)) {
            // The reader went away: this batch is lost, as it would be on a real line.
            sink.connect(!st.realtime);
        }
        buf.clear();
        for (const std::string& line : reader.feed(sink.poll())) obey(line, "connection");
    }
    if (!buf.empty() && sink.connected()) sink.write(buf);
    sink.finish();

    rec.marks = machine.marks();
    rec.fracture_s = machine.fracture_time_s();
    rec.end_s = t;
    rec.samples = i;
    rec.faults = faults.faults();
    return rec;
}

}  // namespace tensile::sim
