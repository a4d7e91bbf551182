// See capture.hpp. Plain stdio: captures are read and written in whole records.
#include "capture.hpp"

#include <cerrno>
#include <cmath>
#include <cstring>

namespace tensile::drivers {

namespace {
std::error_code last_errno() { return {errno ? errno : EIO, std::generic_category()}; }

void put(std::uint8_t* p, std::uint64_t v, int n) {
    for (int i = 0; i < n; ++i) p[i] = static_cast<std::uint8_t>(v >> (8 * i));
}
std::uint64_t get(const std::uint8_t* p, int n) {
    std::uint64_t v = 0;
    for (int i = 0; i < n; ++i) v |= static_cast<std::uint64_t>(p[i]) << (8 * i);
    return v;
}
}  // namespace

std::error_code CaptureWriter::open(const std::string& path) {
    close();
    f_ = std::fopen(path.c_str(), "wb");
    if (!f_) return last_errno();
    if (std::fwrite(capture_magic, 1, sizeof capture_magic, f_) != sizeof capture_magic) return last_errno();
    return {};
}

std::error_code CaptureWriter::write(std::span<const std::byte> bytes, double t_s) {
    if (!f_) return std::make_error_code(std::errc::bad_file_descriptor);
    while (!bytes.empty()) {
        const auto n = static_cast<std::uint32_t>(std::min<std::size_t>(bytes.size(), capture_max_record));
        std::uint8_t head[12];
        put(head, static_cast<std::uint64_t>(std::llround(std::max(0.0, t_s) * 1e6)), 8);
        put(head + 8, n, 4);
        if (std::fwrite(head, 1, sizeof head, f_) != sizeof head) return last_errno();
        if (std::fwrite(bytes.data(), 1, n, f_) != n) return last_errno();
        bytes = bytes.subspan(n);
    }
    return {};
}

std::error_code CaptureWriter::flush() {
    if (f_ && std::fflush(f_) != 0) return last_errno();
    return {};
}

void CaptureWriter::close() {
    if (f_) std::fclose(f_);
    f_ = nullptr;
}

std::error_code CaptureReader::open(const std::string& path) {
    close();
    f_ = std::fopen(path.c_str(), "rb");
    if (!f_) return last_errno();
    char magic[8];
    if (std::fread(magic, 1, sizeof magic, f_) != sizeof magic || std::memcmp(magic, capture_magic, sizeof magic) != 0) {
        close();
        return std::make_error_code(std::errc::illegal_byte_sequence);
    }
    return {};
}

std::optional<CaptureReader::Record> CaptureReader::next(bool& torn) {
    torn = false;
    if (!f_) return std::nullopt;
    std::uint8_t head[12];
    const std::size_t got = std::fread(head, 1, sizeof head, f_);
    if (got == 0) return std::nullopt;
    const auto n = static_cast<std::uint32_t>(get(head + 8, 4));
    if (got != sizeof head || n > capture_max_record) {
        torn = true;
        return std::nullopt;
    }
    buf_.resize(n);
    if (std::fread(buf_.data(), 1, n, f_) != n) {
        torn = true;
        return std::nullopt;
    }
    return Record{static_cast<double>(get(head, 8)) * 1e-6, std::span<const std::byte>(buf_.data(), n)};
}

void CaptureReader::close() {
    if (f_) std::fclose(f_);
    f_ = nullptr;
}

}  // namespace tensile::drivers
