// A small table-driven reader over one TOML table: typed getters with a range
// and the words for the expected value, and a finish() that rejects keys
// nobody asked for. Throws ConfigError (start-up only).
#pragma once

#include <initializer_list>
#include <optional>
#include <set>
#include <string>
#include <utility>

#include <toml++/toml.h>

#include "source_config.hpp"

namespace tensile::drivers {

class ConfigReader {
public:
    ConfigReader(const toml::table& t, std::string path) : t_(t), path_(std::move(path)) {}

    [[nodiscard]] std::string key_path(std::string_view key) const { return path_ + "." + std::string(key); }
    [[nodiscard]] bool has(std::string_view key) const { return t_.contains(key); }

    [[noreturn]] void fail(std::string_view key, const std::string& expected, const toml::node* got = nullptr) const;

    std::optional<std::string> text(std::string_view key, const std::string& expected);
    std::string text_or(std::string_view key, std::string fallback, const std::string& expected) {
        auto v = text(key, expected);
        return v ? *v : std::move(fallback);
    }
    std::string required_text(std::string_view key, const std::string& expected);
    std::optional<long long> integer(std::string_view key, long long lo, long long hi, const std::string& expected);
    std::optional<double> number(std::string_view key, double lo, double hi, const std::string& expected);
    std::optional<bool> flag(std::string_view key);
    template <class E>
    std::optional<E> choice(std::string_view key, std::initializer_list<std::pair<const char*, E>> options) {
        std::string words;
        for (const auto& [w, e] : options) words += (words.empty() ? "" : ", ") + std::string("\"") + w + "\"";
        const auto v = text(key, "one of " + words);
        if (!v) return std::nullopt;
        for (const auto& [w, e] : options)
            if (*v == w) return e;
        fail(key, "one of " + words, t_.get(key));
    }
    const toml::node* node(std::string_view key) {
        used_.insert(std::string(key));
        return t_.get(key);
    }
    template <class T>
    T require(std::optional<T> v, std::string_view key, const std::string& expected) const {
        if (!v) fail(key, expected + " (this key is required)");
        return *v;
    }
    void finish() const;

private:
    const toml::table& t_;
    std::string path_;
    std::set<std::string> used_;
};

}  // namespace tensile::drivers
