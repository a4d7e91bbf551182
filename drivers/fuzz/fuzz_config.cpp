// libFuzzer target for the drivers' TOML fragment: any input either loads or
// fails with a toml::parse_error or a ConfigError; anything else escaping
// (another exception type, a crash) is a bug.
#include <cstdint>
#include <string_view>

#include "drivers/source_config.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    static const auto formats = tensile::drivers::builtin_formats();
    try {
        const auto root = toml::parse(std::string_view(reinterpret_cast<const char*>(data), size));
        (void)tensile::drivers::load_drivers(root, formats);
    } catch (const toml::parse_error&) {
    } catch (const tensile::drivers::ConfigError&) {
    }
    return 0;
}
