// Frame chunk codec; layout of one BLOB:
//   byte    codec version
//   varint  frame count n
//   4 ×     column: byte kind | order << 4, byte k,
//                   varint number of mask runs, the run lengths (alternating
//                   regular / exception, starting with regular),
//                   zigzag varints of the regular values' differences,
//                   varint number of exception runs, each (varint repeat, u64 bits).
// See frame_codec.hpp for the idea; a decode error names what was wrong.
#include "frame_codec.hpp"

#include <array>
#include <bit>
#include <cmath>
#include <cstdint>

#include "varint.hpp"

namespace tensile::storage {
namespace {

enum Kind : std::uint8_t { raw_bits = 0, decimal_div = 1, grid_mul = 2 };
constexpr int max_k = 9;
constexpr std::array<double, max_k + 1> pow10{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9};
constexpr std::array<double, max_k + 1> step10{1, 1e-1, 1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9};

std::uint64_t bits_of(double v) { return std::bit_cast<std::uint64_t>(v); }

double rebuild(Kind kind, int k, std::int64_t q) {
    const auto d = static_cast<double>(q);
    return kind == decimal_div ? d / pow10[k] : d * step10[k];
}

// True when v is exactly rebuilt from an integer on this grid; sets q.
bool quantise(Kind kind, int k, double v, std::uint64_t& q) {
    if (!std::isfinite(v)) return false;
    const double scaled = v * pow10[k];
    if (!(std::fabs(scaled) < 4.0e15)) return false;  // keep q exact in a double
    // Rounded half away from zero without a library call (this runs for every
    // value); whichever integer it gives is checked by rebuilding below.
    const auto qi = static_cast<std::int64_t>(scaled + std::copysign(0.5, scaled));
    if (bits_of(rebuild(kind, k, qi)) != bits_of(v)) return false;
    q = static_cast<std::uint64_t>(qi);
    return true;
}

bool regular(Kind kind, int k, double v, std::uint64_t& q) {
    if (kind == raw_bits) {
        if (std::isnan(v)) return false;  // NaN runs are cheaper as exceptions
        q = bits_of(v);
        return true;
    }
    return quantise(kind, k, v, q);
}

// Smallest k that fits the first values that fit any k; -1 when none does.
int pick_k(Kind kind, std::span<const double> col) {
    int k_sel = -1;
    int looked = 0;
    for (double v : col) {
        if (!std::isfinite(v)) continue;
        if (++looked > 32) break;
        std::uint64_t q = 0;
        for (int k = std::max(k_sel, 0); k <= max_k; ++k)
            if (quantise(kind, k, v, q)) { k_sel = std::max(k_sel, k); break; }
    }
    return k_sel;
}

// A column's coding: the kind and order chosen, and the values split the
// way they are written (regular values' integers, mask runs, exception runs).
struct Plan {
    Kind kind = raw_bits;
    int k = 0;
    int order = 0;
    std::size_t cost = SIZE_MAX;
    std::vector<std::uint64_t> qs;
    std::vector<std::size_t> runs;
    std::vector<std::pair<std::uint64_t, std::uint64_t>> exc;  // (repeat, bits)
};

std::uint64_t predict(int order, std::uint64_t p1, std::uint64_t p2) {
    return order == 0 ? 0 : order == 1 ? p1 : p1 + (p1 - p2);
}

// Splits the column for one kind and costs every order; when one is cheaper
// than `best`, `best` takes this split (so the values are quantised once, not
// again when written). True when every value fitted the kind (no exceptions).
bool consider(Kind kind, int k, std::span<const double> col, Plan& trial, Plan& best) {
    trial.qs.clear();
    trial.runs.clear();
    trial.exc.clear();
    std::array<std::size_t, 3> cost{};
    std::array<std::uint64_t, 3> p1{}, p2{};
    bool prev_regular = true;
    std::size_t run_len = 0, mask_cost = 0, exc_cost = 0;
    for (double v : col) {
        std::uint64_t q = 0;
        const bool reg = regular(kind, k, v, q);
        if (reg != prev_regular) {
            mask_cost += varint_size(run_len);
            trial.runs.push_back(run_len);
            run_len = 0;
            prev_regular = reg;
        }
        ++run_len;
        if (reg) {
            const bool first = trial.qs.empty();
            for (int o = 0; o < 3; ++o) {
                cost[o] += varint_size(zigzag(q - predict(o, p1[o], p2[o])));
                p2[o] = first ? q : p1[o];
                p1[o] = q;
            }
            trial.qs.push_back(q);
        } else if (!trial.exc.empty() && trial.exc.back().second == bits_of(v)) {
            ++trial.exc.back().first;
        } else {
            trial.exc.emplace_back(1, bits_of(v));
            exc_cost += 9 + 1;  // a new exception run: bits and (usually one-byte) repeat
        }
    }
    trial.runs.push_back(run_len);
    mask_cost += varint_size(run_len) + varint_size(trial.runs.size());
    const bool fits = trial.exc.empty();
    int cheapest = 0;
    for (int o = 1; o < 3; ++o)
        if (cost[o] < cost[cheapest]) cheapest = o;
    const std::size_t total = 2 + mask_cost + cost[cheapest] + exc_cost;
    if (total < best.cost) {
        best.kind = kind;
        best.k = k;
        best.order = cheapest;
        best.cost = total;
        std::swap(best.qs, trial.qs);
        std::swap(best.runs, trial.runs);
        std::swap(best.exc, trial.exc);
    }
    return fits;
}

// Appends varints through a cursor into room made beforehand (a push_back
// per byte was a fifth of the writer's time on a flat-out ingest).
class VarintWriter {
public:
    VarintWriter(std::string& out, std::size_t most_values) : out_(out), at_(out.size()) {
        out_.resize(at_ + most_values * 10);
    }
    ~VarintWriter() { out_.resize(at_); }
    void put(std::uint64_t v) {
        char* p = out_.data() + at_;
        while (v >= 0x80) {
            *p++ = static_cast<char>((v & 0x7f) | 0x80);
            v >>= 7;
        }
        *p++ = static_cast<char>(v);
        at_ = static_cast<std::size_t>(p - out_.data());
    }

private:
    std::string& out_;
    std::size_t at_;
};

// The kind, grid and order that cost least on `col` (the split stays in best).
void choose(std::span<const double> col, Plan& trial, Plan& best) {
    // A grid that fits every value is as cheap as any other that does, and far
    // cheaper than differencing raw bits, so the first one found ends the
    // search: costing all three kinds made the encoder the recorder's
    // bottleneck on a flat-out ingest.
    best.cost = SIZE_MAX;
    for (Kind kind : {decimal_div, grid_mul}) {
        const int k = pick_k(kind, col);
        if (k >= 0 && consider(kind, k, col, trial, best)) return;
    }
    consider(raw_bits, 0, col, trial, best);
}

void encode_column(std::span<const double> col, std::string& out) {
    thread_local Plan best, trial;
    thread_local std::vector<double> sample;
    // Values near a grid but not all on it (tared readings carry rounding
    // residue) made every kind cost a full pass. A long column is judged on
    // four stretches of 64 values spread over it; only the winner is costed
    // and split in full. Any choice is lossless; this one is near the least.
    constexpr std::size_t stretch = 64, stretches = 4;
    if (col.size() >= 8 * stretch * stretches) {
        sample.clear();
        for (std::size_t s = 0; s < stretches; ++s) {
            const auto from = col.begin() + static_cast<std::ptrdiff_t>(s * (col.size() - stretch) / (stretches - 1));
            sample.insert(sample.end(), from, from + static_cast<std::ptrdiff_t>(stretch));
        }
        choose(sample, trial, best);
        const Kind kind = best.kind;
        const int k = best.kind == raw_bits ? 0 : std::max(best.k, pick_k(kind, col));
        best.cost = SIZE_MAX;
        consider(kind, k, col, trial, best);  // values the grid misses elsewhere become exceptions, kept exactly
    } else {
        choose(col, trial, best);
    }
    out.push_back(static_cast<char>(best.kind | (best.order << 4)));
    out.push_back(static_cast<char>(best.k));
    {
        VarintWriter w(out, 1 + best.runs.size() + best.qs.size());
        w.put(best.runs.size());
        for (auto r : best.runs) w.put(r);
        std::uint64_t p1 = 0, p2 = 0;
        for (std::size_t i = 0; i < best.qs.size(); ++i) {
            w.put(zigzag(best.qs[i] - predict(best.order, p1, p2)));
            p2 = i == 0 ? best.qs[i] : p1;
            p1 = best.qs[i];
        }
    }
    put_varint(out, best.exc.size());
    for (auto [repeat, bits] : best.exc) {
        put_varint(out, repeat);
        put_u64(out, bits);
    }
}

Result<std::vector<double>> decode_column(ByteReader& in, std::size_t n) {
    const std::uint8_t head = in.byte();
    const auto kind = static_cast<Kind>(head & 0x0f);
    const int order = head >> 4;
    const int k = in.byte();
    if (in.bad || kind > grid_mul || order > 2 || k > max_k) return Error{"frame chunk: bad column header"};

    const std::uint64_t run_count = in.varint();
    if (in.bad || run_count > n + 1) return Error{"frame chunk: bad run count"};
    std::vector<std::size_t> runs(run_count);
    std::size_t total = 0, regular_count = 0;
    for (std::size_t i = 0; i < run_count; ++i) {
        runs[i] = in.varint();
        if (in.bad || runs[i] > n - total) return Error{"frame chunk: run lengths exceed the frame count"};
        total += runs[i];
        if (i % 2 == 0) regular_count += runs[i];
    }
    if (total != n) return Error{"frame chunk: run lengths do not add up to the frame count"};

    std::vector<double> regular_values(regular_count);
    std::uint64_t p1 = 0, p2 = 0;
    for (std::size_t i = 0; i < regular_count; ++i) {
        const std::uint64_t q = unzigzag(in.varint()) + predict(order, p1, p2);
        p2 = i == 0 ? q : p1;
        p1 = q;
        regular_values[i] = kind == raw_bits ? std::bit_cast<double>(q) : rebuild(kind, k, static_cast<std::int64_t>(q));
    }
    const std::uint64_t exc_runs = in.varint();
    if (in.bad || exc_runs > n - regular_count) return Error{"frame chunk: bad exception count"};
    std::vector<double> exc_values;
    exc_values.reserve(n - regular_count);
    for (std::size_t i = 0; i < exc_runs; ++i) {
        const std::uint64_t repeat = in.varint();
        const double v = std::bit_cast<double>(in.u64());
        if (in.bad || repeat > n - regular_count - exc_values.size()) return Error{"frame chunk: bad exception run"};
        exc_values.insert(exc_values.end(), repeat, v);
    }
    if (exc_values.size() != n - regular_count) return Error{"frame chunk: exceptions do not match the mask"};

    std::vector<double> col;
    col.reserve(n);
    std::size_t ri = 0, ei = 0;
    for (std::size_t i = 0; i < run_count; ++i)
        for (std::size_t j = 0; j < runs[i]; ++j)
            col.push_back(i % 2 == 0 ? regular_values[ri++] : exc_values[ei++]);
    return col;
}

}  // namespace

std::string encode_frames(std::span<const Frame> frames) {
    std::string out;
    out.reserve(16 + frames.size() * 8);
    out.push_back(static_cast<char>(frame_codec_version));
    put_varint(out, frames.size());
    std::vector<double> col(frames.size());
    for (double Frame::*member : {&Frame::time_s, &Frame::force_N, &Frame::extension_mm, &Frame::crosshead_mm}) {
        for (std::size_t i = 0; i < frames.size(); ++i) col[i] = frames[i].*member;
        encode_column(col, out);
    }
    out.shrink_to_fit();  // chunks wait in the recorder's backlog: keep only what they hold
    return out;
}

Result<std::size_t> decode_frames(std::string_view blob, std::vector<Frame>& out) {
    ByteReader in(blob);
    if (in.byte() != frame_codec_version || in.bad) return Error{"frame chunk: unknown codec version"};
    const std::uint64_t n = in.varint();
    // Chunks hold thousands of frames; a count past this cap is damage, not data.
    if (in.bad || n > max_frames_per_chunk) return Error{"frame chunk: bad frame count"};
    const std::size_t base = out.size();
    out.resize(base + n);
    for (double Frame::*member : {&Frame::time_s, &Frame::force_N, &Frame::extension_mm, &Frame::crosshead_mm}) {
        auto col = decode_column(in, n);
        if (!col) { out.resize(base); return Error{col.error()}; }
        for (std::size_t i = 0; i < n; ++i) out[base + i].*member = (*col)[i];
    }
    if (!in.at_end()) { out.resize(base); return Error{"frame chunk: trailing bytes"}; }
    return static_cast<std::size_t>(n);
}

}  // namespace tensile::storage
