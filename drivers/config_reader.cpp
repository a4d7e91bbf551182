// See config_reader.hpp. Messages read: `<key path> (line N): expected <what>, got <found>`.
#include "config_reader.hpp"

#include <cmath>
#include <sstream>

namespace tensile::drivers {

namespace {
std::string describe(const toml::node* n) {
    if (!n) return "nothing";
    std::ostringstream os;
    switch (n->type()) {
        case toml::node_type::string: os << "\"" << n->as_string()->get() << "\""; break;
        case toml::node_type::integer: os << n->as_integer()->get(); break;
        case toml::node_type::floating_point: os << n->as_floating_point()->get(); break;
        case toml::node_type::boolean: os << (n->as_boolean()->get() ? "true" : "false"); break;
        case toml::node_type::table: os << "a table"; break;
        case toml::node_type::array: os << "an array"; break;
        default: os << "a date or time"; break;
    }
    return os.str();
}
}  // namespace

void ConfigReader::fail(std::string_view key, const std::string& expected, const toml::node* got) const {
    std::string where = key_path(key);
    const toml::node* at = got ? got : nullptr;
    if (at && at->source().begin.line > 0) where += " (line " + std::to_string(at->source().begin.line) + ")";
    std::string msg = where + ": expected " + expected;
    if (got) msg += ", got " + describe(got);
    throw ConfigError(key_path(key), msg);
}

std::optional<std::string> ConfigReader::text(std::string_view key, const std::string& expected) {
    const toml::node* n = node(key);
    if (!n) return std::nullopt;
    if (!n->is_string()) fail(key, expected, n);
    return n->as_string()->get();
}

std::string ConfigReader::required_text(std::string_view key, const std::string& expected) {
    auto v = text(key, expected);
    if (!v || v->empty()) fail(key, expected + " (this key is required)", t_.get(key));
    return *v;
}

std::optional<long long> ConfigReader::integer(std::string_view key, long long lo, long long hi, const std::string& expected) {
    const toml::node* n = node(key);
    if (!n) return std::nullopt;
    if (!n->is_integer()) fail(key, expected, n);
    const long long v = n->as_integer()->get();
    if (v < lo || v > hi) fail(key, expected, n);
    return v;
}

std::optional<double> ConfigReader::number(std::string_view key, double lo, double hi, const std::string& expected) {
    const toml::node* n = node(key);
    if (!n) return std::nullopt;
    double v;
    if (n->is_integer()) v = static_cast<double>(n->as_integer()->get());
    else if (n->is_floating_point()) v = n->as_floating_point()->get();
    else fail(key, expected, n);
    if (!std::isfinite(v) || v < lo || v > hi) fail(key, expected, n);
    return v;
}

std::optional<bool> ConfigReader::flag(std::string_view key) {
    const toml::node* n = node(key);
    if (!n) return std::nullopt;
    if (!n->is_boolean()) fail(key, "true or false", n);
    return n->as_boolean()->get();
}

void ConfigReader::finish() const {
    for (const auto& [k, v] : t_) {
        const std::string key(k.str());
        if (used_.count(key)) continue;
        std::string known;
        for (const auto& u : used_) known += (known.empty() ? "" : ", ") + u;
        std::string where = key_path(key);
        if (v.source().begin.line > 0) where += " (line " + std::to_string(v.source().begin.line) + ")";
        throw ConfigError(key_path(key), where + ": unknown key; keys read here are: " + known);
    }
}

}  // namespace tensile::drivers
