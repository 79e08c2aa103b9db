// Tests of the FFT wrapper against a direct DFT sum evaluated in long double.
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <vector>

#include "qamsight/fft.hpp"

using namespace qamsight;

TEMPLATE_TEST_CASE("FFT equals the DFT definition, in and out of place", "[fft]", cf32, cf64) {
  using R = typename TestType::value_type;
  for (std::size_t n : {1u, 7u, 64u, 360u}) {
    std::vector<TestType> x(n), y(n), z(n);
    RandomStream rs(4, n, Substream::user);
    for (auto& v : x) v = TestType(R(rs.gaussian()), R(rs.gaussian()));
    const FftPlan<TestType> fwd(n, FftDirection::forward), inv(n, FftDirection::inverse);
    fwd.execute(x, y);
    const long double pi = std::numbers::pi_v<long double>;
    double max_err = 0, scale = 0;
    for (std::size_t k = 0; k < n; ++k) {
      std::complex<long double> acc = 0;
      for (std::size_t t = 0; t < n; ++t)
        acc += std::complex<long double>(x[t].real(), x[t].imag()) *
               std::polar(1.0L, -2.0L * pi * static_cast<long double>(k * t % n) / static_cast<long double>(n));
      max_err = std::max(max_err, double(std::abs(acc - std::complex<long double>(y[k].real(), y[k].imag()))));
      scale = std::max(scale, double(std::abs(acc)));
    }
    // Rounding of an FFT grows like log2(n) ulps relative to the largest output.
    const double eps = std::numeric_limits<R>::epsilon();
    CHECK(max_err <= 20 * eps * (1 + std::log2(double(n))) * std::max(1.0, scale));
    z = y;
    inv.execute(z, z);  // in place
    for (std::size_t t = 0; t < n; ++t) CHECK(std::abs(z[t] / R(n) - x[t]) <= 50 * eps * (1 + std::abs(x[t])));
  }
}

TEST_CASE("fast FFT sizes", "[fft]") {
  CHECK(fft_good_size(1000) == 1000);
  CHECK(fft_good_size(1021) == 1024);
  CHECK(fft_good_size(11) == 12);
  CHECK_THROWS_AS(FftPlanF(0, FftDirection::forward), ConfigError);
}
