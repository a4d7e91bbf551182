// Seeded random numbers for the signal path: xoshiro256** seeded through
// splitmix64, and normal deviates by the polar method. Written out here rather
// than taken from <random> so that the same seed gives the same bytes whatever
// the standard library, and because it is fast. Cannot fail.
#pragma once

#include <cmath>
#include <cstdint>

namespace tensile::sim {

class Random {
public:
    explicit Random(std::uint64_t seed) {
        for (auto& word : s_) {
            seed += 0x9E3779B97F4A7C15ull;
            std::uint64_t z = seed;
            z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
            z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
            word = z ^ (z >> 31);
        }
    }

    std::uint64_t next() {
        const std::uint64_t result = rotl(s_[1] * 5, 7) * 9;
        const std::uint64_t t = s_[1] << 17;
        s_[2] ^= s_[0]; s_[3] ^= s_[1]; s_[1] ^= s_[2]; s_[0] ^= s_[3];
        s_[2] ^= t;
        s_[3] = rotl(s_[3], 45);
        return result;
    }

    // Uniform in [0, 1).
    double uniform() { return static_cast<double>(next() >> 11) * 0x1.0p-53; }
    double uniform(double lo, double hi) { return lo + (hi - lo) * uniform(); }
    std::uint64_t below(std::uint64_t n) { return n ? next() % n : 0; }

    // Standard normal deviate.
    double normal() {
        if (has_spare_) { has_spare_ = false; return spare_; }
        double u, v, q;
        do {
            u = 2 * uniform() - 1;
            v = 2 * uniform() - 1;
            q = u * u + v * v;
        } while (q >= 1 || q == 0);
        const double f = std::sqrt(-2 * std::log(q) / q);
        spare_ = v * f;
        has_spare_ = true;
        return u * f;
    }

    // An independent stream for another consumer, so adding draws in one place
    // does not shift every other channel's noise.
    Random split() { return Random(next()); }

private:
    static std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
    std::uint64_t s_[4]{};
    double spare_ = 0;
    bool has_spare_ = false;
};

}  // namespace tensile::sim
