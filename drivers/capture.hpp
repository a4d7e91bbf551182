// Byte captures: what a source read, with when it read it, so a run can be
// replayed through any parser later. Our own simple layout, little-endian:
//     "TNSLCAP1"                          8-byte magic
//     { u64 µs since capture start, u32 length, length bytes }  repeated
// A record is at most max_record bytes (reads are smaller than that). A file
// cut short by a crash ends at its last whole record; the reader reports the
// torn tail instead of failing the replay. Errors are std::error_code values.
#pragma once

#include <cstdint>
#include <cstdio>
#include <optional>
#include <span>
#include <string>
#include <system_error>
#include <vector>

namespace tensile::drivers {

inline constexpr char capture_magic[8] = {'T', 'N', 'S', 'L', 'C', 'A', 'P', '1'};
inline constexpr std::uint32_t capture_max_record = 1u << 20;

class CaptureWriter {
public:
    CaptureWriter() = default;
    CaptureWriter(const CaptureWriter&) = delete;
    CaptureWriter& operator=(const CaptureWriter&) = delete;
    ~CaptureWriter() { close(); }

    std::error_code open(const std::string& path);
    // `t_s` is seconds since the capture started (the caller's choice of zero).
    std::error_code write(std::span<const std::byte> bytes, double t_s);
    std::error_code flush();
    void close();

private:
    std::FILE* f_ = nullptr;
};

class CaptureReader {
public:
    struct Record {
        double t_s = 0;
        std::span<const std::byte> bytes;  // valid until the next call
    };

    CaptureReader() = default;
    CaptureReader(const CaptureReader&) = delete;
    CaptureReader& operator=(const CaptureReader&) = delete;
    ~CaptureReader() { close(); }

    std::error_code open(const std::string& path);
    // Next record, or nullopt at the end. `torn` is set when the file ended inside a record.
    std::optional<Record> next(bool& torn);
    void close();

private:
    std::FILE* f_ = nullptr;
    std::vector<std::byte> buf_;
};

}  // namespace tensile::drivers
