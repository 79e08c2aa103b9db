// measure: exact binomial intervals and tests (Boost.Math), EVM accumulation.
#include "qamsight/measure.hpp"

#include "qamsight/detail/kernels.hpp"

#include <algorithm>
#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/binomial.hpp>
#include <cmath>
#include <limits>

namespace qamsight {

Interval clopper_pearson(std::uint64_t k, std::uint64_t n, double confidence) {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    throw ConfigError("confidence", format_number(confidence), "strictly between 0 and 1");
  }
  if (n == 0) throw ConfigError("trials", "0", "at least 1");
  if (k > n) throw ConfigError("successes", std::to_string(k), "at most the trials (" + std::to_string(n) + ")");
  const double alpha = 1.0 - confidence;
  const double kd = static_cast<double>(k), nd = static_cast<double>(n);
  Interval iv;
  iv.low = k == 0 ? 0.0 : boost::math::quantile(boost::math::beta_distribution<double>(kd, nd - kd + 1.0), alpha / 2.0);
  iv.high = k == n ? 1.0
                   : boost::math::quantile(boost::math::beta_distribution<double>(kd + 1.0, nd - kd),
                                           1.0 - alpha / 2.0);
  return iv;
}

double binomial_test_p_value(std::uint64_t k, std::uint64_t n, double p0) {
  if (!(p0 >= 0.0 && p0 <= 1.0)) throw ConfigError("p0", format_number(p0), "0 to 1");
  if (k > n) throw ConfigError("successes", std::to_string(k), "at most the trials");
  if (n == 0) return 1.0;
  if (p0 == 0.0) return k == 0 ? 1.0 : 0.0;
  if (p0 == 1.0) return k == n ? 1.0 : 0.0;
  const double nd = static_cast<double>(n), kd = static_cast<double>(k);
  const boost::math::binomial_distribution<double> dist(nd, p0);
  const double mode = std::floor((nd + 1.0) * p0);
  // Probabilities are compared with a relative slack, as exact-test implementations do,
  // so that outcomes equal in probability up to rounding count on both sides.
  const double pk = boost::math::pdf(dist, kd) * (1.0 + 1e-7);
  auto pdf = [&](double x) { return boost::math::pdf(dist, x); };
  double p = 0.0;
  if (kd <= mode) {
    // Lower tail up to k, plus the upper tail of outcomes with probability <= pk.
    p = boost::math::cdf(dist, kd);
    double lo = mode, hi = nd;  // find the smallest x >= mode with pdf(x) <= pk
    if (pdf(hi) > pk) return std::min(1.0, p);
    while (hi - lo > 1.0) {
      const double mid = std::floor((lo + hi) / 2.0);
      (pdf(mid) <= pk ? hi : lo) = mid;
    }
    const double x = pdf(lo) <= pk ? lo : hi;
    p += boost::math::cdf(boost::math::complement(dist, x - 1.0));
  } else {
    p = boost::math::cdf(boost::math::complement(dist, kd - 1.0));
    double lo = 0.0, hi = mode;  // find the largest x <= mode with pdf(x) <= pk
    if (pdf(lo) > pk) return std::min(1.0, p);
    while (hi - lo > 1.0) {
      const double mid = std::floor((lo + hi) / 2.0);
      (pdf(mid) <= pk ? lo : hi) = mid;
    }
    const double x = pdf(hi) <= pk ? hi : lo;
    p += boost::math::cdf(dist, x);
  }
  return std::min(1.0, p);
}

double rate_increase_p_value(std::uint64_t k1, std::uint64_t n1, std::uint64_t k0, std::uint64_t n0) {
  if (n1 == 0 || n0 == 0) throw ConfigError("trials", "0", "at least 1 in both runs");
  const std::uint64_t total = k0 + k1;
  if (total == 0) return 1.0;
  const double share = static_cast<double>(n1) / (static_cast<double>(n1) + static_cast<double>(n0));
  const boost::math::binomial_distribution<double> dist(static_cast<double>(total), share);
  if (k1 == 0) return 1.0;
  // P(X >= k1)
  return boost::math::cdf(boost::math::complement(dist, static_cast<double>(k1) - 1.0));
}

void EvmAccumulator::add(std::span<const cf32> received, std::span<const cf32> reference) noexcept {
  QAMSIGHT_ASSERT(received.size() == reference.size(), "received and reference lengths differ");
  // Four interleaved double partial sums in a fixed order (detail/kernels.hpp), vectorised and
  // bit-identical on every path, so EVM sums do not depend on the CPU either.
  double e = 0.0, r = 0.0, peak = peak_error_power;
  detail::kernels().evm_sums(reinterpret_cast<const float*>(received.data()),
                             reinterpret_cast<const float*>(reference.data()), received.size(), &e, &r, &peak);
  error_power += e;
  reference_power += r;
  peak_error_power = peak;
  count += received.size();
}

EvmAccumulator& EvmAccumulator::operator+=(const EvmAccumulator& o) noexcept {
  error_power += o.error_power;
  reference_power += o.reference_power;
  peak_error_power = std::max(peak_error_power, o.peak_error_power);
  count += o.count;
  return *this;
}

double EvmAccumulator::rms() const noexcept {
  if (count == 0 || reference_power <= 0.0) return std::numeric_limits<double>::quiet_NaN();
  return std::sqrt(error_power / reference_power);
}

double EvmAccumulator::rms_db() const noexcept { return 20.0 * std::log10(rms()); }

double EvmAccumulator::mer_db() const noexcept {
  if (count == 0 || error_power <= 0.0) return std::numeric_limits<double>::quiet_NaN();
  return 10.0 * std::log10(reference_power / error_power);
}

}  // namespace qamsight
