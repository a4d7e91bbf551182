// File and stdout sink; see sinks.hpp. Plain POSIX writes of large blocks: the
// run loop already batches, so no second buffer here.
#include "sinks.hpp"

#include <cerrno>
#include <cstring>
#include <fcntl.h>
#include <unistd.h>

namespace tensile::sim {

namespace {

bool write_all(int fd, std::string_view bytes) {
    while (!bytes.empty()) {
        const ssize_t n = ::write(fd, bytes.data(), bytes.size());
        if (n < 0) {
            if (errno == EINTR) continue;
            return false;
        }
        bytes.remove_prefix(static_cast<std::size_t>(n));
    }
    return true;
}

class FileSink final : public Sink {
public:
    FileSink(int fd, bool owned) : fd_(fd), owned_(owned) {}
    ~FileSink() override {
        if (owned_) ::close(fd_);
    }
    bool write(std::string_view bytes) override { return write_all(fd_, bytes); }
    void finish() override {
        if (owned_) ::fsync(fd_);
    }

private:
    int fd_;
    bool owned_;
};

}  // namespace

Result<std::unique_ptr<Sink>> open_file_sink(const std::string& path, const std::string& option) {
    if (path == "-") return std::unique_ptr<Sink>(std::make_unique<FileSink>(1, false));
    const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    if (fd < 0) return Error{option + ": cannot open '" + path + "' for writing: " + std::strerror(errno)};
    return std::unique_ptr<Sink>(std::make_unique<FileSink>(fd, true));
}

}  // namespace tensile::sim
