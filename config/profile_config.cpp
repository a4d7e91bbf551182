// [profile.<name>] tables; see profile_config.hpp.
#include "profile_config.hpp"

#include "drivers/config_reader.hpp"

namespace tensile {

namespace {

using drivers::ConfigError;
using drivers::ConfigReader;

// An array of numbers within [lo, hi]; `size` 0 means any length from 1.
std::optional<std::vector<double>> numbers(ConfigReader& r, std::string_view key, std::size_t size, double lo,
                                           double hi, const std::string& expected) {
    const toml::node* n = r.node(key);
    if (!n) return std::nullopt;
    const toml::array* a = n->as_array();
    if (!a || a->empty() || (size && a->size() != size)) r.fail(key, expected, n);
    std::vector<double> out;
    for (const auto& item : *a) {
        const auto v = item.value<double>();
        if (!v || !(*v >= lo && *v <= hi)) r.fail(key, expected, n);
        out.push_back(*v);
    }
    return out;
}

void rate_band(ConfigReader& r, const char* key, RateBand& band) {
    if (auto v = numbers(r, key, 2, 0, 1, "[min, max] strain rates in 1/s with min < max, e.g. [0.0002, 0.0003]")) {
        if (!((*v)[0] < (*v)[1])) r.fail(key, "[min, max] with min < max", r.node(key));
        band = {(*v)[0], (*v)[1]};
    }
}

}  // namespace

RunSettings load_profile(const toml::table& table, const std::string& path, const std::string& name) {
    RunSettings s;
    Profile& p = s.profile;
    p.name = name;
    ConfigReader r(table, path);
    if (auto v = numbers(r, "proof_offsets_pct", 0, 0.001, 20, "a list of plastic extensions in % between 0.001 and 20, e.g. [0.2]"))
        p.proof_offsets_pct = *v;
    if (auto v = numbers(r, "total_extensions_pct", 0, 0.001, 50, "a list of total extensions in % between 0.001 and 50, e.g. [0.5]"))
        p.total_extensions_pct = *v;
    if (auto v = numbers(r, "modulus_window_MPa", 2, 0, 1e5, "[low, high] in MPa with low < high, e.g. [40, 160]")) {
        if (!((*v)[0] < (*v)[1])) r.fail("modulus_window_MPa", "[low, high] with low < high", r.node("modulus_window_MPa"));
        p.modulus_window = StressWindow{(*v)[0], (*v)[1]};
    }
    if (auto v = r.number("modulus_min_r2", 0.5, 1.0, "an r² between 0.5 and 1, e.g. 0.995")) p.modulus_min_r2 = *v;
    if (auto v = r.number("yield_drop_pct", 0.01, 20, "a drop in % between 0.01 and 20, e.g. 0.5")) p.yield_drop_pct = *v;
    if (auto v = r.number("yield_drop_strain_pct", 0.001, 5, "a strain in % between 0.001 and 5, e.g. 0.05"))
        p.yield_drop_strain_pct = *v;
    if (auto v = r.number("yield_max_plastic_pct", 0.1, 20, "a plastic strain in % between 0.1 and 20, e.g. 2"))
        p.yield_max_plastic_pct = *v;
    if (auto v = numbers(r, "n_range_pct", 2, 0.1, 100, "[from, to] engineering strain in %, e.g. [10, 20]")) {
        if (!((*v)[0] < (*v)[1])) r.fail("n_range_pct", "[from, to] with from < to", r.node("n_range_pct"));
        p.n_from_pct = (*v)[0];
        p.n_to_pct = (*v)[1];
    }
    if (auto v = r.number("break_rate_per_s", 0.1, 1000, "a force-drop rate in Fm per second between 0.1 and 1000, e.g. 5"))
        p.break_rate_per_s = *v;
    if (auto v = r.number("break_window_ms", 0.1, 10000, "a window in ms between 0.1 and 10000, e.g. 20"))
        p.break_window_s = *v / 1000.0;
    if (auto v = r.number("fracture_share", 0.01, 0.99, "a share of the force at break onset between 0.01 and 0.99, e.g. 0.5"))
        p.fracture_share = *v;
    if (auto v = r.number("rate_window_s", 0.01, 60, "a window in s between 0.01 and 60, e.g. 1")) p.rate_window_s = *v;
    rate_band(r, "rate_elastic_per_s", p.rate_bands[static_cast<int>(RatePhase::elastic)]);
    rate_band(r, "rate_yielding_per_s", p.rate_bands[static_cast<int>(RatePhase::yielding)]);
    rate_band(r, "rate_plastic_per_s", p.rate_bands[static_cast<int>(RatePhase::plastic)]);
    if (auto v = r.number("extensometer_range_mm", 0, 1000, "the extensometer's travel in mm (0 = unknown)"))
        p.extensometer_range_mm = *v;
    if (auto v = r.number("preload_N", 0, 1e7, "a force in N, e.g. 20")) s.preload_N = *v;
    if (auto v = r.number("settle_s", 0, 600, "seconds between 0 and 600, e.g. 2")) s.settle_s = *v;
    if (auto v = r.flag("stop_at_fracture")) s.stop_at_fracture = *v;
    if (auto v = r.integer("tare_frames", 1, 100000, "a number of frames from 1, e.g. 16")) s.tare_frames = static_cast<int>(*v);
    if (auto v = r.flag("auto_start")) s.auto_start = *v;

    if (const toml::node* h = r.node("handover")) {
        const toml::table* ht = h->as_table();
        if (!ht) r.fail("handover", "a table [" + path + ".handover]", h);
        ConfigReader hr(*ht, path + ".handover");
        auto& rule = s.handover;
        if (auto w = hr.choice<HandoverRule::When>("when", {{"after-yield", HandoverRule::When::after_yield},
                                                           {"at-strain", HandoverRule::When::at_strain},
                                                           {"at-travel", HandoverRule::When::at_travel_share},
                                                           {"never", HandoverRule::When::never}}))
            rule.when = *w;
        if (auto v = hr.number("strain_pct", 0.01, 100, "a strain in % at which to hand over, e.g. 5")) rule.value = *v / 100.0;
        if (auto v = hr.number("travel_share", 0.05, 1.0, "a share of the extensometer travel, e.g. 0.9")) rule.value = *v;
        if (auto v = hr.flag("hold")) rule.hold_frame = *v;
        if (auto v = hr.flag("relay")) rule.signal_relay = *v;
        if (rule.when == HandoverRule::When::at_strain && !hr.has("strain_pct"))
            hr.fail("strain_pct", "a strain in % (required with when = \"at-strain\")");
        if (rule.when == HandoverRule::When::at_travel_share && !hr.has("travel_share"))
            hr.fail("travel_share", "a share of the travel (required with when = \"at-travel\")");
        if (rule.when == HandoverRule::When::at_travel_share && p.extensometer_range_mm <= 0)
            hr.fail("when", "\"at-travel\" only with extensometer_range_mm set in the profile");
        hr.finish();
    }
    r.finish();
    return s;
}

}  // namespace tensile
