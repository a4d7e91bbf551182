// Compaction of the analyzer's history; see history.hpp.
#include "history.hpp"

#include <algorithm>
#include <cmath>

namespace tensile {

namespace {

// Mean of the finite values in v[from, to); NaN when there are none. One
// row (a group of one) is copied as it is, NaN included.
double finite_mean(const double* v, std::size_t from, std::size_t to) {
    if (to - from == 1) return v[from];
    double sum = 0;
    std::size_t count = 0;
    for (std::size_t k = from; k < to; ++k)
        if (std::isfinite(v[k])) {
            sum += v[k];
            ++count;
        }
    return count ? sum / static_cast<double>(count) : NAN;
}

// Writes to out[0, groups) the finite means of the `groups` runs of `size`
// values from v on (out may be v itself: out[g] is written only after every
// run up to g has been read). Each run is first summed plainly, in row order:
// a finite plain sum means every value was finite (a NaN or an infinity
// would have made it NaN or infinite), so it is the very sum finite_mean
// makes and the mean is the same to the last bit; the rare run with a gap
// (a lost extensometer, an overflow) is summed again by finite_mean. Eight
// runs are summed side by side, each in its own order, because one running
// sum alone would wait on the previous addition for every value.
void group_means(const double* v, std::size_t groups, std::size_t size, double* out) {
    constexpr std::size_t lanes = 8;
    std::size_t g = 0;
    if (size > 1) {
        const double count = static_cast<double>(size);
        for (; g + lanes <= groups; g += lanes) {
            const double* p = v + g * size;
            double sum[lanes] = {};  // from zero, as finite_mean (so -0.0 rows give +0.0 there too)
            for (std::size_t k = 0; k < size; ++k)
                for (std::size_t l = 0; l < lanes; ++l) sum[l] += p[l * size + k];
            for (std::size_t l = 0; l < lanes; ++l)
                out[g + l] = std::isfinite(sum[l]) ? sum[l] / count : finite_mean(v, (g + l) * size, (g + l + 1) * size);
        }
    }
    for (; g < groups; ++g) out[g] = finite_mean(v, g * size, (g + 1) * size);
}

}  // namespace

RowMap History::compact(std::size_t target, std::size_t keep) {
    const std::size_t n = size();
    RowMap map;
    map.merged = merged_rows_;
    map.single_from = merged_rows_;
    map.kept_at = merged_rows_;
    if (n <= target || n <= merged_rows_ + keep) return map;  // nothing to gain

    // The smallest stride (a multiple of the present one) that fits the target.
    const std::size_t singles = n - merged_rows_;
    std::size_t stride = stride_;
    while (true) {
        const std::size_t ratio = stride / stride_;
        const std::size_t groups = (singles - keep) / stride;
        const std::size_t rows = (merged_rows_ + ratio - 1) / ratio + groups + (singles - groups * stride);
        if (rows <= target || stride > n) break;
        stride *= 2;
    }
    map.ratio = stride / stride_;
    map.group = stride;
    map.single_from = merged_rows_ + (singles - keep) / stride * stride;
    const std::size_t first_single = (merged_rows_ + map.ratio - 1) / map.ratio;
    map.kept_at = first_single + (map.single_from - merged_rows_) / stride;

    // New row j only reads old rows at or after j, so the merge runs in
    // place. Each column is done in three plain loops (the merged rows, the
    // single rows grouped by `stride`, the kept rows moved down): this runs on
    // the whole history every few hundred thousand frames of a long run, so it
    // is kept to straight passes over memory. Sums run in row order, so the
    // means are the same to the last bit however the loops are written.
    const std::size_t groups = (map.single_from - merged_rows_) / stride;
    const std::size_t rows = map.kept_at + (n - map.single_from);
    for (auto* v : {&time_s, &force_N, &strain, &stress_MPa, &extension_mm, &crosshead_mm}) {
        double* d = v->data();
        std::size_t j = 0;
        if (map.ratio == 1) {
            j = merged_rows_;  // already in place
        } else {
            const std::size_t whole = merged_rows_ / map.ratio;
            group_means(d, whole, map.ratio, d);
            j = whole;
            if (whole * map.ratio < merged_rows_) d[j++] = finite_mean(d, whole * map.ratio, merged_rows_);
        }
        group_means(d + merged_rows_, groups, stride, d + j);
        j += groups;
        std::copy(d + map.single_from, d + n, d + j);
        v->resize(rows);
    }
    {
        double* m = running_max.data();
        std::size_t j = 0;
        if (map.ratio == 1) {
            j = merged_rows_;
        } else {
            for (std::size_t k = 0; k < merged_rows_; k += map.ratio)
                m[j++] = m[std::min(k + map.ratio, merged_rows_) - 1];
        }
        for (std::size_t g = 0; g < groups; ++g) m[j++] = m[merged_rows_ + (g + 1) * stride - 1];
        std::copy(m + map.single_from, m + n, m + j);
        running_max.resize(rows);
    }
    stride_ = stride;
    merged_rows_ = map.kept_at;
    return map;
}

}  // namespace tensile
