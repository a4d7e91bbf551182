// A stable name for the simulator's pseudo-terminal: a symbolic link, like the
// /dev/serial/by-id names udev gives a USB serial adapter, re-pointed at each
// new pty. A reader configured with the link's path finds the simulator again
// after it restarts; the pty's own /dev/pts/N number is not stable (the kernel
// hands it to the next pty any program opens).
// Error policy: pointing the link returns an error value naming the path; the
// link is removed at the end only while it still points at our pty.
#pragma once

#include <string>

#include "engine/result.hpp"

namespace tensile::sim {

class PortLink {
public:
    // Makes `link` point at `target`, replacing any link there in one step.
    static Result<PortLink> point(std::string link, std::string target);
    PortLink(PortLink&& o) noexcept : link_(std::move(o.link_)), target_(std::move(o.target_)) { o.link_.clear(); }
    PortLink& operator=(PortLink&&) = delete;
    ~PortLink();

private:
    PortLink(std::string link, std::string target) : link_(std::move(link)), target_(std::move(target)) {}
    std::string link_, target_;
};

}  // namespace tensile::sim
