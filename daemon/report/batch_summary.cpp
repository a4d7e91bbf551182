// The batch summary; see batch_summary.hpp.
#include "batch_summary.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <map>
#include <regex>

#include <nlohmann/json.hpp>

namespace tensile::report {

const std::vector<std::string>& summary_quantities() {
    static const std::vector<std::string> keys{"E_MPa", "Rp0.2_MPa", "ReH_MPa", "ReL_MPa", "Rm_MPa", "Ag_pct", "A_pct"};
    return keys;
}

MaterialLot split_lot(const std::string& text) {
    static const std::regex lot_re(R"((^|[\s,;(/_-])lot[\s#:._-]*([A-Za-z0-9][A-Za-z0-9._/-]*))", std::regex::icase);
    MaterialLot out;
    std::smatch m;
    std::string rest = text;
    if (std::regex_search(text, m, lot_re)) {
        out.lot = m[2].str();
        while (!out.lot.empty() && (out.lot.back() == '.' || out.lot.back() == '-')) out.lot.pop_back();
        rest = text.substr(0, static_cast<std::size_t>(m.position(0))) + m[1].str() + text.substr(static_cast<std::size_t>(m.position(0) + m.length(0)));
    }
    // Tidy what the lot leaves behind: doubled separators and spaces, ends.
    std::string tidy;
    for (char c : rest) {
        if (c == ' ' && (tidy.empty() || tidy.back() == ' ')) continue;
        if (c == ',' && !tidy.empty() && tidy.back() == ' ') tidy.pop_back();
        if ((c == ',' || c == '-') && !tidy.empty() && (tidy.back() == ',' || tidy.back() == '-')) continue;
        tidy += c;
    }
    while (!tidy.empty() && (tidy.back() == ' ' || tidy.back() == ',' || tidy.back() == '-')) tidy.pop_back();
    while (!tidy.empty() && (tidy.front() == ' ' || tidy.front() == ',' || tidy.front() == '-')) tidy.erase(0, 1);
    out.material = tidy.empty() ? "(no material given)" : tidy;
    return out;
}

BatchSummary summarise_runs(std::vector<SummaryRun> runs) {
    BatchSummary b;
    const std::size_t q = summary_quantities().size();
    std::map<std::pair<std::string, std::string>, std::vector<const SummaryRun*>> by;
    b.runs = std::move(runs);
    for (const auto& r : b.runs) by[{r.what.material, r.what.lot}].push_back(&r);
    for (const auto& [key, list] : by) {
        SummaryGroup g;
        g.what = {key.first, key.second};
        g.runs = list.size();
        g.stats.resize(q);
        for (std::size_t k = 0; k < q; ++k) {
            // Two passes: mean, then squared deviations (no cancellation for close values).
            double sum = 0;
            std::size_t n = 0;
            for (const auto* r : list)
                if (r->values[k]) sum += *r->values[k], ++n;
            auto& s = g.stats[k];
            s.n = n;
            s.mean = n ? sum / static_cast<double>(n) : NAN;
            double ss = 0;
            for (const auto* r : list)
                if (r->values[k]) ss += (*r->values[k] - s.mean) * (*r->values[k] - s.mean);
            s.sd = n >= 2 ? std::sqrt(ss / static_cast<double>(n - 1)) : NAN;
        }
        b.groups.push_back(g);
    }
    return b;
}

Result<BatchSummary> summarise(storage::Store& store, const storage::RunFilter& filter) {
    auto list = store.list_runs(filter);
    if (!list) return Error{list.error()};
    std::vector<SummaryRun> runs;
    std::size_t skipped = 0;
    for (const auto& r : *list) {
        if (!r.has_results) continue;
        auto rec = store.load_run(r.id);
        if (!rec || !rec->results_json) {
            ++skipped;
            continue;
        }
        SummaryRun s{r.id, r.created_unix_s, split_lot(r.material), {}};
        try {
            const auto j = nlohmann::json::parse(*rec->results_json);
            for (const auto& key : summary_quantities()) {
                const auto it = j.find(key);
                s.values.push_back(it != j.end() && it->is_number() ? std::optional<double>(it->get<double>()) : std::nullopt);
            }
        } catch (const nlohmann::json::exception&) {
            ++skipped;
            continue;
        }
        runs.push_back(std::move(s));
    }
    std::sort(runs.begin(), runs.end(), [](const SummaryRun& a, const SummaryRun& b) {
        return a.created_unix_s != b.created_unix_s ? a.created_unix_s < b.created_unix_s : a.id < b.id;
    });
    auto b = summarise_runs(std::move(runs));
    b.skipped = skipped;
    return b;
}

namespace {
std::string cell(std::optional<double> v, int prec) {
    if (!v || !std::isfinite(*v)) return "-";
    char b[40];
    std::snprintf(b, sizeof b, "%.*f", prec, *v);
    return b;
}
int precision_of(const std::string& key) { return key == "E_MPa" ? 0 : key.ends_with("_pct") ? 2 : 1; }
}  // namespace

std::string summary_text(const BatchSummary& b) {
    const auto& keys = summary_quantities();
    std::string out;
    char line[512];
    out += "Runs\n";
    std::snprintf(line, sizeof line, "  %6s  %-10s  %-40s  %-8s", "run", "date", "material", "lot");
    out += line;
    for (const auto& k : keys) out += std::string(11 - std::min<std::size_t>(11, k.size()), ' ') + k;
    out += "\n";
    for (const auto& r : b.runs) {
        char date[16] = "-";
        const std::time_t t = static_cast<std::time_t>(r.created_unix_s);
        std::tm tm{};
        if (gmtime_r(&t, &tm)) std::strftime(date, sizeof date, "%Y-%m-%d", &tm);
        std::snprintf(line, sizeof line, "  %6lld  %-10s  %-40.40s  %-8.8s", static_cast<long long>(r.id), date,
                      r.what.material.c_str(), r.what.lot.empty() ? "-" : r.what.lot.c_str());
        out += line;
        for (std::size_t k = 0; k < keys.size(); ++k) {
            std::snprintf(line, sizeof line, "%11s", cell(r.values[k], precision_of(keys[k])).c_str());
            out += line;
        }
        out += "\n";
    }
    out += "\nPer material and lot (mean, sample standard deviation, values counted)\n";
    std::snprintf(line, sizeof line, "  %-40s  %-8s  %-10s  %12s  %12s  %4s\n", "material", "lot", "quantity", "mean", "sd", "n");
    out += line;
    for (const auto& g : b.groups)
        for (std::size_t k = 0; k < keys.size(); ++k) {
            if (g.stats[k].n == 0) continue;
            const int p = precision_of(keys[k]) + 1;
            std::snprintf(line, sizeof line, "  %-40.40s  %-8.8s  %-10s  %12s  %12s  %4zu\n", g.what.material.c_str(),
                          g.what.lot.empty() ? "-" : g.what.lot.c_str(), keys[k].c_str(), cell(g.stats[k].mean, p).c_str(),
                          cell(g.stats[k].sd, p).c_str(), g.stats[k].n);
            out += line;
        }
    out += std::to_string(b.runs.size()) + " runs with results";
    if (b.skipped) out += ", " + std::to_string(b.skipped) + " skipped (results unreadable)";
    out += "\n";
    return out;
}

}  // namespace tensile::report
