// Compaction of the analyzer's history; see history.hpp.
#include "history.hpp"

#include <cmath>

namespace tensile {

namespace {

// Mean of the finite values in v[from, to); NaN when there are none.
double finite_mean(const std::vector<double>& v, std::size_t from, std::size_t to) {
    double sum = 0;
    std::size_t count = 0;
    for (std::size_t k = from; k < to; ++k)
        if (std::isfinite(v[k])) {
            sum += v[k];
            ++count;
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

    // Old row ranges of each new row, in order; new row j only reads old rows
    // at or after j, so the merge runs in place.
    auto each_group = [&](auto&& take) {
        std::size_t j = 0;
        for (std::size_t k = 0; k < merged_rows_; k += map.ratio) take(j++, k, std::min(k + map.ratio, merged_rows_));
        for (std::size_t k = merged_rows_; k < map.single_from; k += stride) take(j++, k, k + stride);
        for (std::size_t k = map.single_from; k < n; ++k) take(j++, k, k + 1);
        return j;
    };
    std::size_t rows = 0;
    for (auto* v : {&time_s, &force_N, &strain, &stress_MPa, &extension_mm, &crosshead_mm}) {
        rows = each_group([&](std::size_t j, std::size_t from, std::size_t to) {
            (*v)[j] = to - from == 1 ? (*v)[from] : finite_mean(*v, from, to);
        });
        v->resize(rows);
    }
    each_group([&](std::size_t j, std::size_t, std::size_t to) { running_max[j] = running_max[to - 1]; });
    running_max.resize(rows);
    stride_ = stride;
    merged_rows_ = map.kept_at;
    return map;
}

}  // namespace tensile
