// The modulus fit's least squares against NIST certified values.
#include <catch2/catch.hpp>

#include <cstring>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "engine/least_squares.hpp"

using namespace tensile;

namespace {
// The NIST StRD Norris data set (x, y), as shipped in tests/data.
std::pair<std::vector<double>, std::vector<double>> norris() {
    std::ifstream in(std::string(TENSILE_DATA_DIR) + "/nist_strd_norris.csv");
    REQUIRE(in);
    std::vector<double> x, y;
    std::string line;
    while (std::getline(in, line)) {
        if (line.empty() || line[0] == '#' || line[0] == 'x') continue;
        std::istringstream row(line);
        double a = 0, b = 0;
        char comma = 0;
        row >> a >> comma >> b;
        x.push_back(a);
        y.push_back(b);
    }
    return {x, y};
}
}  // namespace

TEST_CASE("straight-line fit matches the NIST StRD Norris certified values") {
    auto [x, y] = norris();
    REQUIRE(x.size() == 36);
    auto fit = fit_line(x, y);
    REQUIRE(fit);
    // NIST-StRD-Norris: certified B0, B1, residual SD and R², relative 1e-10.
    CHECK(fit->intercept == Approx(-0.262323073774029).epsilon(1e-10));
    CHECK(fit->slope == Approx(1.00211681802045).epsilon(1e-10));
    CHECK(fit->residual_sd == Approx(0.884796396144373).epsilon(1e-10));
    CHECK(fit->r2 == Approx(0.999993745883712).epsilon(1e-10));
}

TEST_CASE("the slope's coefficient of variation follows ASTM E111") {
    // E111 (formula from memory): V1 = 100·√((1/r² − 1)/(K − 2)).
    LineFit f;
    f.r2 = 0.999;
    f.count = 12;
    CHECK(f.slope_cv_pct() == Approx(100.0 * std::sqrt((1.0 / 0.999 - 1.0) / 10.0)));
}

TEST_CASE("a fit needs three points and a varying x") {
    const std::vector<double> two{1, 2}, same{3, 3, 3}, y{1, 2, 3};
    CHECK_FALSE(fit_line(two, two));
    CHECK_FALSE(fit_line(same, y));
}

TEST_CASE("a range and its two halves fitted together are the fits made one by one") {
    // fit_line_split must give fit_line's own result for each part, bit for
    // bit (the same sums in the same order): on the NIST StRD Norris data and
    // on a noisy line with a flat stretch (a half whose x does not vary).
    auto [nx, ny] = norris();
    std::mt19937_64 rng(11);
    std::normal_distribution<double> noise(0.0, 0.01);
    std::vector<double> gx, gy;
    for (int i = 0; i < 300; ++i) {
        gx.push_back(i < 120 ? 0.5 : 0.01 * i);
        gy.push_back(3.0 + 2.0 * gx.back() + noise(rng));
    }
    auto same = [](const std::optional<LineFit>& got, const std::optional<LineFit>& want) {
        REQUIRE(got.has_value() == want.has_value());
        if (!want) return;
        const double g[] = {got->intercept, got->slope, got->r2, got->residual_sd, got->x_spread};
        const double w[] = {want->intercept, want->slope, want->r2, want->residual_sd, want->x_spread};
        CHECK(std::memcmp(g, w, sizeof g) == 0);
        CHECK(got->count == want->count);
    };
    for (const auto* data : {&nx, &gx}) {
        const std::vector<double>& x = *data;
        const std::vector<double>& y = data == &nx ? ny : gy;
        const std::span<const double> xs(x), ys(y);
        for (std::size_t mid = 0; mid <= x.size(); mid += data == &nx ? 1 : 7) {
            INFO("mid " << mid << " of " << x.size());
            const SplitFit s = fit_line_split(xs, ys, mid);
            same(s.whole, fit_line(xs, ys));
            same(s.first, fit_line(xs.first(mid), ys.first(mid)));
            same(s.second, fit_line(xs.subspan(mid), ys.subspan(mid)));
        }
    }
}
