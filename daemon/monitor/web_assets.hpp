// The page's files, compiled into the daemon (web/ plus Debian's Chart.js when
// it was installed at build time), so the page works with no internet and no
// files to install beside the binary.
#pragma once

#include <optional>
#include <string_view>

namespace tensile::monitor {

struct Asset {
    std::string_view content_type;
    std::string_view body;
};

std::optional<Asset> find_asset(std::string_view path);

}  // namespace tensile::monitor
