// Fuzz target for the daemon's whole TOML config (config/daemon_config): any
// text either loads or is refused with drivers::ConfigError naming the key
// (TOML syntax errors are turned into ConfigError too). Any other exception
// escaping, a crash or a sanitizer report is a bug. The loader is pure (paths
// are only joined, never opened), so the base folder need not exist.
#include <cstdint>
#include <string>

#include "config/daemon_config.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    const std::string text(reinterpret_cast<const char*>(data), size);
    try {
        const auto c = tensile::load_daemon_config_text(text, "/nonexistent/fuzz");
        // A loaded config must name at least one source: the loader promises it.
        if (c.drivers.sources.empty()) __builtin_trap();
    } catch (const tensile::drivers::ConfigError&) {
    }
    return 0;
}
