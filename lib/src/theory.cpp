// theory: exact AWGN error rates (square QAM, PSK), Shannon bounds, and their inverses.
#include "qamsight/theory.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <boost/math/quadrature/tanh_sinh.hpp>
#include <boost/math/special_functions/erf.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numbers>
#include <string>
#include <vector>

#include "qamsight/core.hpp"

namespace qamsight::theory {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kHalfPi = std::numbers::pi / 2.0;
constexpr double kInvSqrt2 = 0.70710678118654752440;

// Largest PSK order accepted: the Gray BER averages Hamming distances over all M^2 pairs.
constexpr unsigned kMaxPskOrder = 1024;
// The low end of every reference curve; required_* targets must lie below the rate there.
constexpr double kLowestEbN0Db = -30.0;
// Smallest target rate that required_* accepts (the double range ends near 1e-308).
constexpr double kSmallestTarget = 1e-300;

bool is_power_of_two(unsigned m) { return m >= 1 && (m & (m - 1)) == 0; }

void require_finite_snr(std::string_view parameter, double db) {
  if (!std::isfinite(db)) {
    throw ConfigError(std::string(parameter), format_number(db), "a finite value in dB");
  }
}

// Bits per symbol of a square QAM order 4^n, n = 1..10.
unsigned square_qam_bits(unsigned order) {
  const unsigned bits = static_cast<unsigned>(std::countr_zero(order));
  if (order < 4 || !is_power_of_two(order) || bits % 2 != 0 || bits > 20) {
    throw ConfigError("order", std::to_string(order), "4^n for n = 1..10 (4, 16, ..., 1048576)");
  }
  return bits;
}

unsigned psk_bits(unsigned order) {
  if (order < 2 || order > kMaxPskOrder || !is_power_of_two(order)) {
    throw ConfigError("order", std::to_string(order),
                      "a power of two from 2 to " + std::to_string(kMaxPskOrder));
  }
  return static_cast<unsigned>(std::countr_zero(order));
}

// Integral of exp(-b / sin^2 t) dt over [lo, hi], 0 <= lo <= hi <= pi/2 (the Craig integrand).
// 1/sin^2 falls on (0, pi/2], so the integrand peaks at hi; it is factored out as
// exp(-b / sin^2 hi) and the rest, exp(-b (cot^2 t - cot^2 hi)) in [0, 1], is integrated.
// That keeps deep tails (b in the hundreds) exact instead of underflowing term by term, and
// the difference of cotangents is written as sin(hi - t) sin(hi + t) / (sin^2 t sin^2 hi) so
// that it loses nothing near t = hi. Tanh-sinh quadrature suits it: at high SNR the mass sits
// in a narrow layer at hi, at low SNR the integrand switches on in a narrow layer near t = 0,
// and both are endpoints, where its nodes cluster double-exponentially.
double craig_segment(double b, double lo, double hi) {
  if (!(hi > lo)) return 0.0;
  if (b == 0.0) return hi - lo;
  if (!std::isfinite(b)) return 0.0;
  const double sin_hi = std::sin(hi);
  const double sin_hi2 = sin_hi * sin_hi;
  auto scaled = [&](double t) {
    const double s = std::sin(t);
    const double den = s * s * sin_hi2;
    if (den == 0.0) return 0.0;  // t -> 0: exp(-b / sin^2 t) vanishes with all derivatives
    return std::exp(-b * (std::sin(hi - t) * std::sin(hi + t) / den));
  };
  // Not const: Boost 1.74 declares integrate() with a const return type instead of as a const
  // member. Concurrent calls are safe; the shared abscissa tables grow under a mutex.
  static boost::math::quadrature::tanh_sinh<double> integrator;
  const double integral = integrator.integrate(scaled, lo, hi, 1e-13);
  return std::exp(-b / sin_hi2) * integral;
}

// P(psi < phase < pi) for an M-PSK symbol sent at phase 0 with Es/N0 = gamma, 0 <= psi <= pi:
// (1/2pi) * integral over [0, pi - psi] of exp(-gamma sin^2 psi / sin^2 t) dt (the wedge form
// of the Craig integral; twice this at psi = pi/M is the M-PSK SER). The part of the range
// beyond pi/2 is folded back by t -> pi - t so that every segment ends at its peak.
double phase_tail(double gamma, double psi) {
  const double s = std::sin(psi);
  const double b = gamma * s * s;
  if (psi <= kHalfPi) {
    return (craig_segment(b, 0.0, kHalfPi) + craig_segment(b, psi, kHalfPi)) / (2.0 * kPi);
  }
  return craig_segment(b, 0.0, kPi - psi) / (2.0 * kPi);
}

// Mean Hamming distance between gray(i) and gray(i + d mod M) over all sent i, d = 0..M-1.
// Binary-reflected Gray is a cyclic Gray code, but beyond d = 1 the distance varies with i.
std::vector<double> mean_gray_distance_on_circle(unsigned order) {
  std::vector<double> mean(order, 0.0);
  for (unsigned d = 0; d < order; ++d) {
    std::uint64_t total = 0;
    for (unsigned i = 0; i < order; ++i) {
      const unsigned j = (i + d) & (order - 1);
      total += static_cast<unsigned>(std::popcount((i ^ (i >> 1)) ^ (j ^ (j >> 1))));
    }
    mean[d] = static_cast<double>(total) / order;
  }
  return mean;
}

// Neumaier-compensated sum, for adding terms of mixed signs and magnitudes.
class CompensatedSum {
 public:
  void add(double x) {
    const double t = sum_ + x;
    if (std::fabs(sum_) >= std::fabs(x)) {
      carry_ += (sum_ - t) + x;
    } else {
      carry_ += (x - t) + sum_;
    }
    sum_ = t;
  }
  double value() const { return sum_ + carry_; }

 private:
  double sum_ = 0.0, carry_ = 0.0;
};

enum class Family { bpsk, square_qam, psk };

struct Reference {
  std::string_view name;
  Family family;
  unsigned order;
  unsigned bits;
};

constexpr std::array<Reference, 8> kReferences{{
    {"bpsk", Family::bpsk, 2, 1},
    {"qpsk", Family::square_qam, 4, 2},
    {"4qam", Family::square_qam, 4, 2},
    {"8psk", Family::psk, 8, 3},
    {"16qam", Family::square_qam, 16, 4},
    {"64qam", Family::square_qam, 64, 6},
    {"256qam", Family::square_qam, 256, 8},
    {"1024qam", Family::square_qam, 1024, 10},
}};

const Reference* find_reference(std::string_view name) {
  for (const auto& r : kReferences) {
    if (r.name == name) return &r;
  }
  return nullptr;
}

const Reference& require_reference(std::string_view name) {
  if (const Reference* r = find_reference(name)) return *r;
  std::string allowed;
  for (const auto& r : kReferences) allowed += (allowed.empty() ? "" : ", ") + std::string(r.name);
  throw ConfigError("modulation", "'" + std::string(name) + "'", allowed);
}

enum class Rate { bit, symbol };

double reference_rate(const Reference& r, Rate rate, double eb_n0_db) {
  require_finite_snr("eb_n0_db", eb_n0_db);
  const double es_n0_db = es_n0_db_from_eb_n0_db(eb_n0_db, r.bits);
  switch (r.family) {
    case Family::bpsk:
      return ber_bpsk(eb_n0_db);  // one bit per symbol: SER = BER
    case Family::square_qam:
      return rate == Rate::bit ? ber_square_qam(r.order, eb_n0_db)
                               : ser_square_qam(r.order, es_n0_db);
    case Family::psk:
      return rate == Rate::bit ? ber_psk_gray(r.order, es_n0_db) : ser_psk(r.order, es_n0_db);
  }
  return 0.0;  // unreachable: every family is handled above
}

// Eb/N0 (dB) where the decreasing curve `rate(eb_n0_db)` crosses `target`: bracketed by a
// 2 dB march up from -30 dB, then TOMS 748 on log(rate) (nearly linear in dB at high SNR).
template <class Curve>
double required_eb_n0(std::string_view parameter, double target, Curve rate) {
  const double top = rate(kLowestEbN0Db);
  if (!(target >= kSmallestTarget && target < top)) {
    throw ConfigError(std::string(parameter), format_number(target),
                      format_number(kSmallestTarget) + " up to (not including) " +
                          format_number(top) + ", the rate at Eb/N0 = " +
                          format_number(kLowestEbN0Db) + " dB");
  }
  const double log_target = std::log(target);
  // A rate that underflows to 0 maps below log(denormal min) = -744.4; the root lies above.
  auto g = [&](double x) {
    const double r = rate(x);
    return (r > 0.0 ? std::log(r) : -800.0) - log_target;
  };
  double lo = kLowestEbN0Db;
  double g_lo = std::log(top) - log_target;
  double hi = lo + 2.0;
  double g_hi = g(hi);
  while (g_hi > 0.0) {
    lo = hi;
    g_lo = g_hi;
    hi += 2.0;
    g_hi = g(hi);
  }
  if (g_hi == 0.0) return hi;
  // A few ulps: at a target of 1e-300 the BER changes by 16 % per 0.001 dB, so a loose
  // bracket would show in the rate at the returned point.
  auto tolerance = [](double a, double b) {
    return std::fabs(a - b) <= 8.0 * std::numeric_limits<double>::epsilon() *
                                   std::max({std::fabs(a), std::fabs(b), 1.0});
  };
  std::uintmax_t max_iter = 200;
  const auto bracket =
      boost::math::tools::toms748_solve(g, lo, hi, g_lo, g_hi, tolerance, max_iter);
  return 0.5 * (bracket.first + bracket.second);
}

}  // namespace

double q_function(double x) { return 0.5 * std::erfc(x * kInvSqrt2); }

double q_inverse(double p) {
  if (!(p > 0.0 && p < 1.0)) {
    throw ConfigError("p", format_number(p), "strictly between 0 and 1");
  }
  return std::numbers::sqrt2 * boost::math::erfc_inv(2.0 * p);
}

double es_n0_db_from_eb_n0_db(double eb_n0_db, double bits_per_symbol, double code_rate) {
  require_range_open_low("bits_per_symbol", bits_per_symbol, 0.0, 64.0);
  require_range_open_low("code_rate", code_rate, 0.0, 1.0);
  return eb_n0_db + 10.0 * std::log10(bits_per_symbol * code_rate);
}

double eb_n0_db_from_es_n0_db(double es_n0_db, double bits_per_symbol, double code_rate) {
  require_range_open_low("bits_per_symbol", bits_per_symbol, 0.0, 64.0);
  require_range_open_low("code_rate", code_rate, 0.0, 1.0);
  return es_n0_db - 10.0 * std::log10(bits_per_symbol * code_rate);
}

double ber_bpsk(double eb_n0_db) {
  require_finite_snr("eb_n0_db", eb_n0_db);
  return 0.5 * std::erfc(std::sqrt(db_to_linear(eb_n0_db)));
}

// Cho & Yoon: P_b = 1/(L log2 L) sum_k sum_i w(i, k) erfc((2i + 1) a), with
// a = sqrt(3 log2(M) Eb/N0 / (2 (M - 1))) and integer weights
// w(i, k) = (-1)^floor(i 2^(k-1) / L) (2^(k-1) - floor(i 2^(k-1) / L + 1/2)) for
// i < (1 - 2^-k) L. The weights are summed exactly per erfc term first, so each erfc value is
// used once, and the terms are added smallest (largest i) first with compensation: the signs
// alternate, and at high SNR the sum is dominated by the i = 0 term.
double ber_square_qam(unsigned order, double eb_n0_db) {
  const unsigned bits = square_qam_bits(order);
  require_finite_snr("eb_n0_db", eb_n0_db);
  const unsigned rail_bits = bits / 2;
  const std::int64_t levels = std::int64_t{1} << rail_bits;
  std::vector<std::int64_t> weight(static_cast<std::size_t>(levels), 0);
  for (unsigned k = 1; k <= rail_bits; ++k) {
    const std::int64_t half_weight = std::int64_t{1} << (k - 1);  // 2^(k-1)
    const std::int64_t count = levels - (levels >> k);           // (1 - 2^-k) L terms
    for (std::int64_t i = 0; i < count; ++i) {
      const std::int64_t scaled = i * half_weight;
      const std::int64_t sign = ((scaled / levels) % 2 == 0) ? 1 : -1;
      const std::int64_t rounded = (2 * scaled + levels) / (2 * levels);  // floor(x + 1/2)
      weight[static_cast<std::size_t>(i)] += sign * (half_weight - rounded);
    }
  }
  const double gamma_b = db_to_linear(eb_n0_db);
  const double a = std::sqrt(3.0 * bits * gamma_b / (2.0 * (static_cast<double>(order) - 1.0)));
  CompensatedSum sum;
  for (std::int64_t i = levels - 1; i >= 0; --i) {
    const std::int64_t w = weight[static_cast<std::size_t>(i)];
    if (w == 0) continue;
    sum.add(static_cast<double>(w) * std::erfc(static_cast<double>(2 * i + 1) * a));
  }
  return sum.value() / (static_cast<double>(levels) * rail_bits);
}

double ser_square_qam(unsigned order, double es_n0_db) {
  square_qam_bits(order);
  require_finite_snr("es_n0_db", es_n0_db);
  const double m = static_cast<double>(order);
  const double rail = 2.0 * (1.0 - 1.0 / std::sqrt(m)) *
                      q_function(std::sqrt(3.0 * db_to_linear(es_n0_db) / (m - 1.0)));
  return rail * (2.0 - rail);  // 2P - P^2: no cancellation when P is tiny
}

double ser_psk(unsigned order, double es_n0_db) {
  psk_bits(order);
  require_finite_snr("es_n0_db", es_n0_db);
  return 2.0 * phase_tail(db_to_linear(es_n0_db), kPi / order);
}

// Sector d (centred on 2 pi d / M) catches the phase with probability P_d, the same for every
// sent symbol by rotation symmetry, with P_d = P_{M-d}. For 0 < d < M/2,
// P_d = tail((2d - 1) pi / M) - tail((2d + 1) pi / M); the two tails never nearly cancel
// (their ratio stays well away from 1), and P_{M/2} = 2 tail(pi - pi / M).
double ber_psk_gray(unsigned order, double es_n0_db) {
  const unsigned bits = psk_bits(order);
  require_finite_snr("es_n0_db", es_n0_db);
  const double gamma = db_to_linear(es_n0_db);
  const unsigned half = order / 2;
  // tails[j] = P(phase > (2j - 1) pi / M), j = 1..M/2
  std::vector<double> tails(half + 1, 0.0);
  for (unsigned j = 1; j <= half; ++j) {
    tails[j] = phase_tail(gamma, (2.0 * j - 1.0) * kPi / order);
  }
  const std::vector<double> distance = mean_gray_distance_on_circle(order);
  double sum = tails[half] * 2.0 * distance[half];
  for (unsigned d = half - 1; d >= 1; --d) {  // smallest sectors (far from the symbol) first
    sum += 2.0 * (tails[d] - tails[d + 1]) * distance[d];
  }
  return sum / bits;
}

double ber_for(std::string_view modulation, double eb_n0_db) {
  return reference_rate(require_reference(modulation), Rate::bit, eb_n0_db);
}

double ser_for(std::string_view modulation, double eb_n0_db) {
  return reference_rate(require_reference(modulation), Rate::symbol, eb_n0_db);
}

bool has_reference(std::string_view modulation) { return find_reference(modulation) != nullptr; }

double shannon_capacity(double snr_db) {
  require_finite_snr("snr_db", snr_db);
  return std::log1p(db_to_linear(snr_db)) / std::numbers::ln2;
}

double shannon_min_eb_n0_db(double spectral_efficiency) {
  const double eta = spectral_efficiency;
  if (!std::isfinite(eta) || eta < 0.0) {
    throw ConfigError("spectral_efficiency", format_number(eta),
                      "finite, at least 0 (0 gives the limit ln 2)");
  }
  if (eta == 0.0) return 10.0 * std::log10(std::numbers::ln2);
  const double a = eta * std::numbers::ln2;
  if (a < 700.0) return 10.0 * std::log10(std::expm1(a) / eta);
  // 2^eta - 1 would overflow; log10(1 - 2^-eta) is 0 to double precision here.
  return 10.0 * (a / std::numbers::ln10 - std::log10(eta));
}

double required_eb_n0_db(std::string_view modulation, double target_ber) {
  const Reference& r = require_reference(modulation);
  return required_eb_n0("target_ber", target_ber,
                        [&r](double x) { return reference_rate(r, Rate::bit, x); });
}

double required_eb_n0_db_for_ser(std::string_view modulation, double target_ser) {
  const Reference& r = require_reference(modulation);
  return required_eb_n0("target_ser", target_ser,
                        [&r](double x) { return reference_rate(r, Rate::symbol, x); });
}

}  // namespace qamsight::theory
