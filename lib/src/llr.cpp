// llr: exact log-MAP and max-log bit LLRs, per-axis fast path for Gray square QAM.
#include "qamsight/llr.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace qamsight {

namespace {

// Largest label size the hot paths keep per-bit sums for on the stack.
constexpr unsigned kMaxBits = 32;

// A subset sum of exp(m - m_max) below this may have lost precision to underflow
// (doubles go subnormal near 1e-308); such a subset is recomputed with its own maximum.
constexpr double kUnderflowGuard = 1e-280;

float clamp_llr(double v) noexcept {
  const double lim = static_cast<double>(llr_limit);
  return static_cast<float>(std::clamp(v, -lim, lim));
}

}  // namespace

LlrDemapper::LlrDemapper(const Constellation& constellation, LlrMethod method)
    : method_(method), bits_(constellation.bits_per_symbol()) {
  if (method != LlrMethod::exact && method != LlrMethod::max_log) {
    throw ConfigError("llr method", std::to_string(static_cast<int>(method)), "exact, max_log");
  }
  switch (constellation.family()) {
    case ConstellationFamily::bpsk:
      path_ = Path::bpsk;
      break;
    case ConstellationFamily::square_qam: {
      path_ = Path::square_qam;
      axis_bits_ = bits_ / 2;
      const unsigned L = constellation.levels_per_axis();
      half_spacing_ = constellation.qam_half_spacing();
      levels_.resize(L);
      level_bits_.resize(L);
      for (unsigned l = 0; l < L; ++l) {
        levels_[l] = (2.0 * l - (L - 1.0)) * half_spacing_;
        level_bits_[l] = gray_encode(l);
      }
      break;
    }
    case ConstellationFamily::psk:
    case ConstellationFamily::custom:
      path_ = Path::general;
      points_.assign(constellation.points().begin(), constellation.points().end());
      break;
  }
}

void LlrDemapper::process(std::span<const cf32> y, double n0, std::span<float> llr_out) const noexcept {
  QAMSIGHT_ASSERT(llr_out.size() >= y.size() * bits_, "LLR buffer shorter than samples x bits");
  QAMSIGHT_ASSERT(n0 > 0.0 && std::isfinite(n0), "noise variance must be positive and finite");
  const double inv_n0 = 1.0 / n0;
  float* out = llr_out.data();
  switch (path_) {
    case Path::bpsk:
      // Points -1 (label 0) and +1 (label 1): (|y - 1|^2 - |y + 1|^2) / N0 = -4 Re(y) / N0.
      for (std::size_t i = 0; i < y.size(); ++i) out[i] = clamp_llr(-4.0 * y[i].real() * inv_n0);
      break;
    case Path::square_qam:
      for (std::size_t i = 0; i < y.size(); ++i) {
        process_axis(y[i].real(), inv_n0, out + i * bits_);
        process_axis(y[i].imag(), inv_n0, out + i * bits_ + axis_bits_);
      }
      break;
    case Path::general:
      for (std::size_t i = 0; i < y.size(); ++i) process_general(y[i], inv_n0, out + i * bits_);
      break;
  }
}

// One axis of Gray square QAM: the LLRs of the axis_bits_ label bits carried by the level
// on this axis, MSB first. The per-axis metric is (v - a)^2 / N0 because the real noise
// variance is N0 / 2 and the Gaussian exponent is (v - a)^2 / (2 * N0 / 2).
//
// The nearest level with a given value of bit j is the nearest level overall if its bit has
// that value; otherwise it is one of the two levels just outside the run of equal bit values
// that contains the nearest level. Bit j (MSB = 0) of gray(l) is the parity of
// floor((l + R/2) / R) with R = 2^(h - j), so these runs are [r R - R/2, r R + R/2 - 1].
void LlrDemapper::process_axis(float vf, double inv_n0, float* out) const noexcept {
  const unsigned h = axis_bits_;
  const int L = static_cast<int>(levels_.size());
  const double v = vf;
  const double* a = levels_.data();
  const std::uint32_t* g = level_bits_.data();
  // Nearest level: decision boundaries sit at even multiples of the half spacing.
  const int nearest =
      std::clamp(static_cast<int>(std::floor((v / half_spacing_ + L) * 0.5)), 0, L - 1);
  const double d_own = (v - a[nearest]) * (v - a[nearest]);
  // Nearest level whose bit j differs from the nearest level's, and its squared distance.
  auto nearest_other = [&](unsigned j, double& d_other) {
    const int shift = static_cast<int>(h - j);
    const int R = 1 << shift;
    const int r = (nearest + R / 2) >> shift;
    const int left = r * R - R / 2 - 1;
    const int right = r * R + R / 2;
    const double dl = left >= 0 ? (v - a[left]) * (v - a[left]) : std::numeric_limits<double>::infinity();
    const double dr = right < L ? (v - a[right]) * (v - a[right]) : std::numeric_limits<double>::infinity();
    d_other = std::min(dl, dr);
    return dl <= dr ? left : right;
  };
  // Levels within squared distance d2 of v: a contiguous index range.
  auto window = [&](double d2, int& lo, int& hi) {
    const double r = std::sqrt(d2);
    lo = std::max(0, static_cast<int>(std::ceil(((v - r) / half_spacing_ + (L - 1)) * 0.5)));
    hi = std::min(L - 1, static_cast<int>(std::floor(((v + r) / half_spacing_ + (L - 1)) * 0.5)));
  };

  if (method_ == LlrMethod::max_log) {
    for (unsigned j = 0; j < h; ++j) {
      double d_other;
      nearest_other(j, d_other);
      const bool own_is_one = (g[nearest] >> (h - 1 - j)) & 1u;
      const double llr = (d_other - d_own) * inv_n0;
      out[j] = clamp_llr(own_is_one ? -llr : llr);
    }
    return;
  }

  // Exact: exp(m_l - m_max) per level, m_l = -(v - a_l)^2 / N0, shared by all bits. Levels
  // more than 745 below the maximum would underflow to zero and are not visited (the result
  // is the same); a subset whose sum comes out tiny is redone about its own maximum.
  constexpr double kExpRange = 745.0;
  const double m_max = -d_own * inv_n0;
  const double n0 = 1.0 / inv_n0;
  int lo, hi;
  window(d_own + kExpRange * n0, lo, hi);
  lo = std::min(lo, nearest);
  hi = std::max(hi, nearest);
  std::array<double, kMaxBits> s0{}, s1{};
  for (int l = lo; l <= hi; ++l) {
    const double d = v - a[l];
    const double e = std::exp(-d * d * inv_n0 - m_max);
    for (unsigned j = 0; j < h; ++j) (((g[l] >> (h - 1 - j)) & 1u) ? s1[j] : s0[j]) += e;
  }
  for (unsigned j = 0; j < h; ++j) {
    if (s0[j] >= kUnderflowGuard && s1[j] >= kUnderflowGuard) {
      out[j] = clamp_llr(std::log(s0[j] / s1[j]));
      continue;
    }
    // Far from every level of the other bit value (the nearest level's subset always holds
    // exp(0) = 1): sum that subset about its own maximum, its nearest member.
    const std::uint32_t mask = 1u << (h - 1 - j);
    const bool own_is_one = (g[nearest] & mask) != 0;
    double d_other;
    const int best = nearest_other(j, d_other);
    int olo, ohi;
    window(d_other + kExpRange * n0, olo, ohi);
    olo = std::min(olo, best);
    ohi = std::max(ohi, best);
    double s = 0.0;
    for (int l = olo; l <= ohi; ++l) {
      if (((g[l] & mask) != 0) == own_is_one) continue;
      const double d = v - a[l];
      s += std::exp((d_other - d * d) * inv_n0);
    }
    // ln(own sum) - ln(other sum), both relative to exp(m_max).
    const double ln_own = std::log(own_is_one ? s1[j] : s0[j]);
    const double ln_other = (d_own - d_other) * inv_n0 + std::log(s);
    out[j] = clamp_llr(own_is_one ? ln_other - ln_own : ln_own - ln_other);
  }
}

// Any constellation: exhaustive over the points, two passes (maximum, then sums) so that no
// per-point buffer is needed whatever the size.
void LlrDemapper::process_general(cf32 yf, double inv_n0, float* out) const noexcept {
  const cf64 y(yf.real(), yf.imag());
  const unsigned k = bits_;
  const std::size_t M = points_.size();
  const cf64* x = points_.data();
  if (method_ == LlrMethod::max_log) {
    std::array<double, kMaxBits> d0, d1;
    d0.fill(std::numeric_limits<double>::infinity());
    d1.fill(std::numeric_limits<double>::infinity());
    for (std::size_t l = 0; l < M; ++l) {
      const double d = std::norm(y - x[l]);
      for (unsigned j = 0; j < k; ++j) {
        double& slot = ((l >> (k - 1 - j)) & 1u) ? d1[j] : d0[j];
        slot = std::min(slot, d);
      }
    }
    for (unsigned j = 0; j < k; ++j) out[j] = clamp_llr((d1[j] - d0[j]) * inv_n0);
    return;
  }
  double d_min = std::numeric_limits<double>::infinity();
  for (std::size_t l = 0; l < M; ++l) d_min = std::min(d_min, std::norm(y - x[l]));
  const double m_max = -d_min * inv_n0;
  std::array<double, kMaxBits> s0{}, s1{};
  for (std::size_t l = 0; l < M; ++l) {
    const double e = std::exp(-std::norm(y - x[l]) * inv_n0 - m_max);
    for (unsigned j = 0; j < k; ++j) (((l >> (k - 1 - j)) & 1u) ? s1[j] : s0[j]) += e;
  }
  for (unsigned j = 0; j < k; ++j) {
    if (s0[j] >= kUnderflowGuard && s1[j] >= kUnderflowGuard) {
      out[j] = clamp_llr(std::log(s0[j] / s1[j]));
      continue;
    }
    double ln0 = std::log(s0[j]), ln1 = std::log(s1[j]);
    {
      // The subset without the nearest point is far away: sum it about its own maximum.
      const bool redo_zero = s0[j] < kUnderflowGuard;
      double mx = -std::numeric_limits<double>::infinity();
      for (std::size_t l = 0; l < M; ++l)
        if ((((l >> (k - 1 - j)) & 1u) != 0) != redo_zero) mx = std::max(mx, -std::norm(y - x[l]) * inv_n0);
      double s = 0.0;
      for (std::size_t l = 0; l < M; ++l)
        if ((((l >> (k - 1 - j)) & 1u) != 0) != redo_zero) s += std::exp(-std::norm(y - x[l]) * inv_n0 - mx);
      (redo_zero ? ln0 : ln1) = mx - m_max + std::log(s);
    }
    out[j] = clamp_llr(ln0 - ln1);
  }
}

void llr_exhaustive(const Constellation& constellation, cf32 yf, double n0, LlrMethod method,
                    std::span<double> out) {
  const unsigned k = constellation.bits_per_symbol();
  QAMSIGHT_ASSERT(out.size() >= k, "output shorter than bits per symbol");
  const auto pts = constellation.points();
  const cf64 y(yf.real(), yf.imag());
  for (unsigned j = 0; j < k; ++j) {
    // Log-sum-exp (or maximum) of -|y - x|^2 / N0 over the points whose bit j equals b.
    auto subset = [&](unsigned b) {
      double mx = -std::numeric_limits<double>::infinity();
      for (std::uint32_t l = 0; l < pts.size(); ++l)
        if (((l >> (k - 1 - j)) & 1u) == b) mx = std::max(mx, -std::norm(y - pts[l]) / n0);
      if (method == LlrMethod::max_log) return mx;
      double s = 0.0;
      for (std::uint32_t l = 0; l < pts.size(); ++l)
        if (((l >> (k - 1 - j)) & 1u) == b) s += std::exp(-std::norm(y - pts[l]) / n0 - mx);
      return mx + std::log(s);
    };
    out[j] = subset(0) - subset(1);
  }
}

}  // namespace qamsight
