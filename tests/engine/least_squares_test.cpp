// The modulus fit's least squares against NIST certified values.
#include <catch2/catch.hpp>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "engine/least_squares.hpp"

using namespace tensile;

TEST_CASE("straight-line fit matches the NIST StRD Norris certified values") {
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
