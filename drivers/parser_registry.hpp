// Wire-format name → parser factory. The registry is a value the daemon builds
// at start-up and passes around (no global table). Adding a format: one file
// with its parser and factory, one line in builtin_formats() (registry.cpp).
// Factories throw std::invalid_argument with a readable message for a bad
// configuration: that only happens at start-up.
#pragma once

#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "parser.hpp"

namespace tensile::drivers {

struct FormatInfo {
    std::string name;
    std::function<std::unique_ptr<Parser>(const FormatConfig&)> make;
    unsigned device_clock_bits = 64;  // width at which the device's µs clock wraps (binary: 32)
    bool carries_channels = true;     // false for a command port: no [[channel]] tables
};

class ParserRegistry {
public:
    void add(FormatInfo info);
    [[nodiscard]] const FormatInfo* find(const std::string& name) const;
    [[nodiscard]] std::vector<std::string> names() const;
    // Throws std::invalid_argument naming the known formats if the name is unknown.
    [[nodiscard]] std::unique_ptr<Parser> make(const FormatConfig& cfg) const;

private:
    std::map<std::string, FormatInfo> formats_;
};

// The formats of wire-formats.md.
ParserRegistry builtin_formats();

}  // namespace tensile::drivers
