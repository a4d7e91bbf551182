// Compaction of the analyzer's history; see history.hpp.
#include "history.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>

namespace tensile {

namespace {

// Mean of the finite values in v[from, to); NaN when there are none. Written
// without a branch per value so the compiler can vectorise it: compaction
// runs over every row of a long run many times.
double finite_mean(const double* v, std::size_t from, std::size_t to) {
    if (to - from == 1) return v[from];  // a group of one stays as it was
    double sum = 0;
    std::size_t count = 0;
    for (std::size_t k = from; k < to; ++k) {
        const bool finite = std::isfinite(v[k]);
        sum += finite ? v[k] : 0.0;
        count += finite;
    }
    return count ? sum / static_cast<double>(count) : NAN;
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
    // place: merged rows regrouped `ratio` to one, singles `stride` to one,
    // and the kept singles moved down in one block.
    const std::size_t kept = n - map.single_from;
    const std::size_t rows = map.kept_at + kept;
    for (auto* column : {&time_s, &force_N, &strain, &stress_MPa, &extension_mm, &crosshead_mm}) {
        double* v = column->data();
        std::size_t j = 0;
        for (std::size_t k = 0; k < merged_rows_; k += map.ratio)
            v[j++] = finite_mean(v, k, std::min(k + map.ratio, merged_rows_));
        for (std::size_t k = merged_rows_; k < map.single_from; k += stride) v[j++] = finite_mean(v, k, k + stride);
        std::memmove(v + j, v + map.single_from, kept * sizeof(double));
        column->resize(rows);
    }
    {
        double* v = running_max.data();
        std::size_t j = 0;
        for (std::size_t k = 0; k < merged_rows_; k += map.ratio) v[j++] = v[std::min(k + map.ratio, merged_rows_) - 1];
        for (std::size_t k = merged_rows_; k < map.single_from; k += stride) v[j++] = v[k + stride - 1];
        std::memmove(v + j, v + map.single_from, kept * sizeof(double));
        running_max.resize(rows);
    }
    stride_ = stride;
    merged_rows_ = map.kept_at;
    return map;
}

}  // namespace tensile
