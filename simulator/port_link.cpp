// PortLink: see port_link.hpp.
#include "port_link.hpp"

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <sys/stat.h>
#include <unistd.h>

namespace tensile::sim {

Result<PortLink> PortLink::point(std::string link, std::string target) {
    struct stat st {};
    if (::lstat(link.c_str(), &st) == 0 && !S_ISLNK(st.st_mode))
        return Error{"'" + link + "' exists and is not a symbolic link; give a free path or an old link to re-point"};
    // A new link beside it, renamed over the old one: a reader never finds the
    // name missing or half made.
    const std::string fresh = link + ".new-" + std::to_string(::getpid());
    ::unlink(fresh.c_str());
    if (::symlink(target.c_str(), fresh.c_str()) != 0)
        return Error{"cannot make the link '" + link + "': " + std::strerror(errno)};
    if (::rename(fresh.c_str(), link.c_str()) != 0) {
        const std::string why = std::strerror(errno);
        ::unlink(fresh.c_str());
        return Error{"cannot make the link '" + link + "': " + why};
    }
    return PortLink(std::move(link), std::move(target));
}

PortLink::~PortLink() {
    if (link_.empty()) return;
    std::error_code ec;
    // Another simulator may have taken the name over since: leave its link.
    if (std::filesystem::read_symlink(link_, ec) == target_ && !ec) ::unlink(link_.c_str());
}

}  // namespace tensile::sim
