// The corpus runner's core; see corpus_case.hpp.
//
// Expectation layout (our own, one fact per line, so a change reviews as a diff):
//   # comment lines
//   counters <source> bytes=.. records=.. bad_records=.. ...   (parser stream counters)
//   channel <name> good=.. nan=.. overload=.. out_of_range=..
//   frames <count> span_s=<seconds>
//   event <kind> t_s=.. stress_MPa=.. strain=.. value=.. label=<symbol or ->
//   result <key> <value or null>                                (results JSON, flattened)
//   warning <text>
#include "corpus_case.hpp"

#include <cmath>
#include <cstdio>
#include <fstream>
#include <map>
#include <optional>
#include <sstream>
#include <stdexcept>

#include <nlohmann/json.hpp>

#include "config/daemon_config.hpp"
#include "daemon/offline/results_json.hpp"
#include "daemon/tensiled/frame_pipeline.hpp"
#include "engine/analyzer.hpp"

namespace tensile::corpus {

namespace {

std::string read_file(const std::filesystem::path& p) {
    std::ifstream in(p, std::ios::binary);
    if (!in) throw std::runtime_error(p.string() + ": cannot read; run tests/corpus/make-corpus.sh to make it");
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

std::string num(double v) {
    if (std::isnan(v)) return "nan";
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.9g", v);
    return buf;
}

void flatten(const nlohmann::json& j, const std::string& prefix, std::map<std::string, std::string>& out) {
    for (auto it = j.begin(); it != j.end(); ++it) {
        const std::string key = prefix.empty() ? it.key() : prefix + "." + it.key();
        if (it->is_number()) out[key] = num(it->get<double>());
        else if (it->is_null()) out[key] = "null";
        else if (it->is_object()) flatten(*it, key, out);
        else if (it->is_array() && !it->empty() && (*it)[0].is_number())
            for (std::size_t k = 0; k < it->size(); ++k) out[key + "[" + std::to_string(k) + "]"] = num((*it)[k].get<double>());
    }
}

std::optional<double> as_number(const std::string& word) {
    const auto eq = word.find('=');
    const std::string v = eq == std::string::npos ? word : word.substr(eq + 1);
    if (v.empty()) return std::nullopt;
    char* end = nullptr;
    const double d = std::strtod(v.c_str(), &end);
    if (end != v.c_str() + v.size()) return std::nullopt;
    return d;
}

}  // namespace

std::vector<CaseSpec> load_cases(const std::filesystem::path& manifest) {
    std::istringstream in(read_file(manifest));
    std::vector<CaseSpec> out;
    std::string line;
    int number = 0;
    while (std::getline(in, line)) {
        ++number;
        if (line.empty() || line[0] == '#') continue;
        std::istringstream words(line);
        CaseSpec c;
        std::string checks;
        words >> c.name >> c.format >> checks;
        std::getline(words, c.simulator_options);
        if (c.name.empty() || checks.empty() || (c.format != "lines" && c.format != "keyvalue" && c.format != "binary"))
            throw std::runtime_error(manifest.string() + ":" + std::to_string(number) +
                                     ": expected 'name lines|keyvalue|binary checks options...'");
        if (checks != "-") {
            std::istringstream list(checks);
            for (std::string c1; std::getline(list, c1, ',');) c.checks.push_back(c1);
        }
        out.push_back(c);
    }
    return out;
}

std::string rig_config_text(const std::string& format) {
    // The endpoint is never dialled: the corpus feeds FramePipeline directly.
    std::ostringstream t;
    t << "[rig]\nname = \"corpus-rig\"\n[run]\nprofile = \"corpus\"\n[profile.corpus]\n"
      << "[source.frame]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = 9\nformat = \"" << format << "\"\n";
    const char* names[3] = {"force", "extension", "crosshead"};
    const char* units[3] = {"N", "mm", "mm"};
    const char* keys[3] = {"F", "ext", "xh"};                  // simulator keyvalue keys
    const double scales[3] = {0.001, 0.0001, 0.0001};          // simulator binary scales (wire-formats.md)
    if (format == "lines") t << "time_field = 0\n";
    for (int c = 0; c < 3; ++c) {
        t << "  [[source.frame.channel]]\n  name = \"" << names[c] << "\"\n  unit = \"" << units[c] << "\"\n";
        if (format == "lines") t << "  field = " << c + 1 << "\n";
        if (format == "keyvalue") t << "  key = \"" << keys[c] << "\"\n";
        if (format == "binary") t << "  scale = " << scales[c] << "\n";
    }
    return t.str();
}

CaseRun run_case(const CaseSpec& spec, const std::filesystem::path& dir, double duration_s) {
    const std::string bytes = read_file(spec.stream(dir));
    const DaemonConfig config = load_daemon_config_text(rig_config_text(spec.format), dir);
    FramePipeline pipeline(config);

    const auto truth = nlohmann::json::parse(read_file(spec.truth(dir)));
    // A stall fault holds the bytes back and lets them go at once when it
    // ends; the file cannot show that, so its reads are stamped that way here.
    std::vector<std::pair<double, double>> stalls;
    for (const auto& f : truth.value("faults", nlohmann::json::array()))
        if (f.value("kind", "") == "stall")
            stalls.emplace_back(f.at("start_s").get<double>(), f.at("start_s").get<double>() + f.at("duration_s").get<double>());

    // A serial read delivers a few hundred bytes at a time; arrival times grow
    // at the stream's mean byte rate so the time base sees a steady link.
    constexpr std::size_t chunk = 512;
    std::vector<drivers::AlignedFrame> aligned;
    for (std::size_t at = 0; at < bytes.size(); at += chunk) {
        const std::size_t n = std::min(chunk, bytes.size() - at);
        double arrival = duration_s * static_cast<double>(at + n) / static_cast<double>(bytes.size());
        for (const auto& [from, to] : stalls)
            if (arrival >= from && arrival < to) arrival = to;
        pipeline.feed(0, std::as_bytes(std::span(bytes.data() + at, n)), arrival, aligned);
    }

    Profile profile;  // defaults: ISO 6892-1 Method A, Rp0.2 and Rt0.5
    const SpecimenGeometry geometry{truth.at("S0_mm2").get<double>(), truth.at("L0_mm").get<double>(), 0.0};
    Analyzer analyzer(geometry, profile);
    std::vector<Event> events;
    std::vector<Frame> frames;
    frames.reserve(aligned.size());
    const double t0 = aligned.empty() ? 0.0 : aligned.front().frame.time_s;
    for (const auto& a : aligned) {
        Frame f = a.frame;
        f.time_s -= t0;  // times from the first frame, as the truth file counts them
        analyzer.push(f, events);
        frames.push_back(f);
    }
    const Results results = analyzer.finish();

    std::ostringstream out;
    out << "# corpus case " << spec.name << ": " << spec.stream(dir).filename().string()
        << " through FramePipeline and Analyzer (tests/corpus/corpus_case.cpp)\n"
        << "# regenerate: TENSILED_CORPUS_REGENERATE=1 build/bin/corpus_tests, then review the diff\n";
    const auto& c = pipeline.counters(0);
    out << "counters frame bytes=" << c.stream.bytes << " records=" << c.stream.records
        << " bad_records=" << c.stream.bad_records << " long_lines=" << c.stream.long_lines
        << " checksum_failures=" << c.stream.checksum_failures << " resync_bytes=" << c.stream.resync_bytes
        << " lost_frames=" << c.stream.lost_frames << " unknown_keys=" << c.stream.unknown_keys
        << " device_messages=" << c.stream.device_messages << "\n";
    const char* names[3] = {"force", "extension", "crosshead"};
    for (std::size_t k = 0; k < c.channels.size() && k < 3; ++k)
        out << "channel " << names[k] << " good=" << c.channels[k].good << " nan=" << c.channels[k].nan
            << " overload=" << c.channels[k].overload << " out_of_range=" << c.channels[k].out_of_range << "\n";
    out << "frames " << aligned.size() << " span_s="
        << num(aligned.empty() ? 0.0 : aligned.back().frame.time_s - t0) << "\n";
    for (const auto& e : events)
        out << "event " << name_of(e.kind) << " t_s=" << num(e.time_s) << " stress_MPa=" << num(e.stress_MPa)
            << " strain=" << num(e.strain) << " value=" << num(e.value) << " label=" << (e.label.empty() ? "-" : e.label)
            << "\n";
    const auto j = to_json(results);
    std::map<std::string, std::string> flat;
    flatten(j, "", flat);
    for (const auto& [k, v] : flat) out << "result " << k << " " << v << "\n";
    for (const auto& w : results.warnings) out << "warning " << w << "\n";
    return {out.str(), j.dump(2), std::move(frames), events, results, geometry};
}

std::string compare_texts(const std::string& expected, const std::string& actual, double rel) {
    std::istringstream a(expected), b(actual);
    std::string la, lb;
    int line = 0;
    while (true) {
        const bool ga = static_cast<bool>(std::getline(a, la));
        const bool gb = static_cast<bool>(std::getline(b, lb));
        ++line;
        if (!ga && !gb) return {};
        if (ga != gb) return "line " + std::to_string(line) + ": expected '" + (ga ? la : "<end>") + "', got '" + (gb ? lb : "<end>") + "'";
        if (la == lb || (la.rfind('#', 0) == 0 && lb.rfind('#', 0) == 0)) continue;
        std::istringstream wa(la), wb(lb);
        std::string x, y;
        bool same = true;
        while (true) {
            const bool gx = static_cast<bool>(wa >> x);
            const bool gy = static_cast<bool>(wb >> y);
            if (!gx && !gy) break;
            if (gx != gy) { same = false; break; }
            if (x == y) continue;
            const auto nx = as_number(x), ny = as_number(y);
            const auto key = [](const std::string& w) { const auto eq = w.find('='); return eq == std::string::npos ? std::string() : w.substr(0, eq); };
            const bool prefix_same = key(x) == key(y);
            if (!nx || !ny || !prefix_same ||
                std::abs(*nx - *ny) > std::max(1e-12, rel * std::max(std::abs(*nx), std::abs(*ny)))) {
                same = false;
                break;
            }
        }
        if (!same) return "line " + std::to_string(line) + ": expected '" + la + "', got '" + lb + "'";
    }
}

}  // namespace tensile::corpus
