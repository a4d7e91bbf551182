// Store::compute_digest: SHA-256 (OpenSSL EVP) over what a run recorded, so
// verification can tell a run whose data changed after it was closed. It hashes
// decoded content, not the stored BLOBs, so a future codec can re-pack chunks
// without changing a run's digest. Layout hashed, all integers u64 little-endian:
//   "tensiled run digest v1\n"
//   per raw chunk, by source then seq: len+source, len+bytes, count, (length, time bits)...
//   "frames\n", per frame the bits of time, force, extension, crosshead, then the frame count.
// Errors (OpenSSL or SQLite) are values.
#include <bit>
#include <memory>
#include <vector>
#include <openssl/evp.h>

#include "store.hpp"

namespace tensile::storage {
namespace {

class Sha256 {
public:
    Sha256() : ctx_(EVP_MD_CTX_new(), &EVP_MD_CTX_free) {
        ok_ = ctx_ && EVP_DigestInit_ex(ctx_.get(), EVP_sha256(), nullptr) == 1;
    }
    // Small pieces (the 8-byte integers) are gathered first: one OpenSSL call
    // per frame value made hashing a long run take seconds.
    void add(const void* data, std::size_t n) {
        if (pending_.size() + n > batch) flush();
        if (n >= batch) {
            update(data, n);
            return;
        }
        const auto* p = static_cast<const char*>(data);
        pending_.insert(pending_.end(), p, p + n);
    }
    void add_u64(std::uint64_t v) {
        unsigned char b[8];
        for (int i = 0; i < 8; ++i) b[i] = static_cast<unsigned char>(v >> (8 * i));
        add(b, 8);
    }
    void add_sized(std::string_view s) { add_u64(s.size()); add(s.data(), s.size()); }
    Result<std::string> hex() {
        flush();
        unsigned char md[EVP_MAX_MD_SIZE];
        unsigned int len = 0;
        if (!ok_ || EVP_DigestFinal_ex(ctx_.get(), md, &len) != 1) return Error{"SHA-256 failed in OpenSSL"};
        static constexpr char digits[] = "0123456789abcdef";
        std::string out;
        for (unsigned i = 0; i < len; ++i) { out.push_back(digits[md[i] >> 4]); out.push_back(digits[md[i] & 15]); }
        return out;
    }

private:
    static constexpr std::size_t batch = 64 * 1024;
    void update(const void* data, std::size_t n) {
        if (ok_ && n) ok_ = EVP_DigestUpdate(ctx_.get(), data, n) == 1;
    }
    void flush() {
        update(pending_.data(), pending_.size());
        pending_.clear();
    }

    std::unique_ptr<EVP_MD_CTX, decltype(&EVP_MD_CTX_free)> ctx_;
    std::vector<char> pending_;
    bool ok_ = false;
};

}  // namespace

Result<std::string> Store::compute_digest(std::int64_t run) {
    Sha256 sha;
    constexpr std::string_view head = "tensiled run digest v1\n";
    sha.add(head.data(), head.size());
    auto raw = for_each_raw_chunk(run, [&](const RawChunk& c) {
        sha.add_sized(c.source);
        sha.add_sized(c.bytes);
        sha.add_u64(c.arrivals.size());
        for (const auto& a : c.arrivals) { sha.add_u64(a.length); sha.add_u64(std::bit_cast<std::uint64_t>(a.time_s)); }
    });
    if (!raw) return Error{raw.error()};
    constexpr std::string_view frames = "frames\n";
    sha.add(frames.data(), frames.size());
    std::uint64_t count = 0;
    auto fr = for_each_frame(run, -all_time, all_time, [&](const Frame& f) {
        for (double v : {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm}) sha.add_u64(std::bit_cast<std::uint64_t>(v));
        ++count;
    });
    if (!fr) return Error{fr.error()};
    sha.add_u64(count);
    return sha.hex();
}

}  // namespace tensile::storage
