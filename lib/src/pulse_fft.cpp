// pulse_fft: the streaming FIR filter, direct form and FFT overlap-save.
#include <algorithm>
#include <cmath>
#include <string>

#include "pulse_kernels.hpp"
#include "qamsight/pulse.hpp"

namespace qamsight {

namespace {

constexpr std::size_t kMaxFirTaps = 65536;

std::size_t round_up(std::size_t n, std::size_t m) noexcept { return (n + m - 1) / m * m; }

// Cost model of the two forms, fitted to bench_pulse runs on the build machine (cf32, FftPlan
// as planned by fft.cpp), in units of one real-tap multiply-add of the direct kernel (about
// 0.28 ns there): one overlap-save block of FFT size F costs kFftUnits F (kFftFixed + log2 F)
// (forward FFT, spectrum product, inverse FFT: about 1.15 ns per F (8 + log2 F) from F = 64
// to 65536; the fixed part is the product, copies and call overhead), and a direct output
// costs kDirectFixed + taps (twice the taps for complex taps; about 6 ns + 0.28 ns per tap).
// The model picks the FFT size and decides how a call that ends inside a block gets its last
// outputs; the choice of the form itself uses the measured thresholds in pulse.hpp.
constexpr double kFftFixed = 8.0;
constexpr double kFftUnits = 4.1;
constexpr double kDirectFixed = 21.0;

double fft_block_units(std::size_t f) noexcept {
  const double x = static_cast<double>(f);
  return kFftUnits * x * (kFftFixed + std::log2(x));
}

// FFT size for overlap-save with n taps: the power of two >= 2n with the least FFT work per
// output, F (kFftFixed + log2 F) / (F - n + 1); it lands at 8n to 16n for 16 to 4096 taps.
std::size_t overlap_save_fft_size(std::size_t n) noexcept {
  std::size_t best = 0;
  double best_cost = 0.0;
  for (std::size_t f = 2; f <= (std::size_t{1} << 22); f *= 2) {
    if (f < 2 * n) continue;
    const double cost = fft_block_units(f) / static_cast<double>(f - n + 1);
    if (best == 0 || cost < best_cost) {
      best = f;
      best_cost = cost;
    }
    if (f >= 64 * n) break;
  }
  return best;
}

}  // namespace

template <class Sample>
FirFilter<Sample>::FirFilter(std::span<const double> taps, FirMethod method) {
  std::vector<cf64> c(taps.begin(), taps.end());
  build(c, true, method);
}

template <class Sample>
FirFilter<Sample>::FirFilter(std::span<const cf64> taps, FirMethod method) {
  build(taps, false, method);
}

template <class Sample>
void FirFilter<Sample>::build(std::span<const cf64> taps, bool real_taps, FirMethod method) {
  if (taps.empty() || taps.size() > kMaxFirTaps)
    throw ConfigError("taps", std::to_string(taps.size()) + " taps", "1 to 65536 taps");
  for (const cf64& t : taps)
    if (!std::isfinite(t.real()) || !std::isfinite(t.imag()))
      throw ConfigError("taps", format_number(std::isfinite(t.real()) ? t.imag() : t.real()),
                        "finite values");
  if (method != FirMethod::automatic && method != FirMethod::direct && method != FirMethod::overlap_save)
    throw ConfigError("method", std::to_string(static_cast<int>(method)), "automatic, direct, overlap_save");
  tap_count_ = taps.size();
  real_taps_ = real_taps;
  const std::size_t threshold = real_taps ? kOverlapSaveMinTaps : kOverlapSaveMinComplexTaps;
  overlap_save_ =
      method == FirMethod::overlap_save || (method == FirMethod::automatic && tap_count_ >= threshold);

  // Direct kernel tables (kept for overlap-save too: partial blocks may use them).
  padded_len_ = round_up(tap_count_, detail::kDotStep<Real>);
  taps2_re_.assign(2 * padded_len_, Real(0));
  if (!real_taps_) taps2_im_.assign(2 * padded_len_, Real(0));
  for (std::size_t i = 0; i < tap_count_; ++i) {
    const std::size_t j = padded_len_ - 1 - i;  // window entry holding x[n - i]
    taps2_re_[2 * j] = taps2_re_[2 * j + 1] = static_cast<Real>(taps[i].real());
    if (!real_taps_) taps2_im_[2 * j] = taps2_im_[2 * j + 1] = static_cast<Real>(taps[i].imag());
  }

  if (!overlap_save_) {
    chunk_ = std::max<std::size_t>(4096, padded_len_);
    line_.assign(padded_len_ - 1 + chunk_, Sample(0));
    return;
  }
  fft_size_ = overlap_save_fft_size(tap_count_);
  block_ = fft_size_ - tap_count_ + 1;
  lead_ = padded_len_ - tap_count_;
  forward_.emplace(fft_size_, FftDirection::forward);
  inverse_.emplace(fft_size_, FftDirection::inverse);
  // Spectrum of the taps in the sample precision, planned in it too; the 1/F of the
  // unnormalised inverse is folded in here.
  std::vector<Sample> padded(fft_size_, Sample(0));
  for (std::size_t i = 0; i < tap_count_; ++i)
    padded[i] = Sample(static_cast<Real>(taps[i].real()), static_cast<Real>(taps[i].imag()));
  spectrum_.assign(fft_size_, Sample(0));
  forward_->execute(padded, spectrum_);
  const Real inv_n = Real(1) / static_cast<Real>(fft_size_);
  for (Sample& s : spectrum_) s *= inv_n;
  stage_.assign(lead_ + fft_size_, Sample(0));
  work_.assign(fft_size_, Sample(0));
  fill_ = 0;
}

template <class Sample>
void FirFilter<Sample>::direct_outputs(const Sample* window_end, std::size_t count,
                                       Sample* out) const noexcept {
  // Output k's window is [window_end + k - padded_len + 1, window_end + k].
  const std::size_t n2 = 2 * padded_len_;
  const Sample* first = window_end - (padded_len_ - 1);
  if (real_taps_) {
    for (std::size_t k = 0; k < count; ++k)
      out[k] = detail::dot_real_taps(taps2_re_.data(), reinterpret_cast<const Real*>(first + k), n2);
  } else {
    for (std::size_t k = 0; k < count; ++k)
      out[k] = detail::dot_complex_taps(taps2_re_.data(), taps2_im_.data(),
                                        reinterpret_cast<const Real*>(first + k), n2);
  }
}

template <class Sample>
void FirFilter<Sample>::process(std::span<const Sample> in, std::span<Sample> out) noexcept {
  QAMSIGHT_ASSERT(out.size() == in.size(), "FIR filter output length must equal the input length");
  if (overlap_save_) {
    process_overlap_save(in, out);
  } else {
    process_direct(in, out);
  }
}

template <class Sample>
void FirFilter<Sample>::process_direct(std::span<const Sample> in, std::span<Sample> out) noexcept {
  const std::size_t hist = padded_len_ - 1;
  std::size_t done = 0;
  while (done < in.size()) {
    const std::size_t n = std::min(chunk_, in.size() - done);
    // Copy before writing: in and out may be the same span.
    std::copy_n(in.data() + done, n, line_.data() + hist);
    direct_outputs(line_.data() + hist, n, out.data() + done);
    std::copy(line_.begin() + n, line_.begin() + n + hist, line_.begin());
    done += n;
  }
}

template <class Sample>
void FirFilter<Sample>::fft_block() noexcept {
  forward_->execute(std::span<const Sample>(stage_.data() + lead_, fft_size_), work_);
  for (std::size_t k = 0; k < fft_size_; ++k) work_[k] *= spectrum_[k];
  inverse_->execute(work_, work_);
}

template <class Sample>
void FirFilter<Sample>::process_overlap_save(std::span<const Sample> in, std::span<Sample> out) noexcept {
  // stage_: lead_ zeros | taps-1 history | block_ new samples (fill_ of them present).
  // Output for the sample at stage position lead_ + taps - 1 + j is work_[taps - 1 + j].
  const std::size_t hist = tap_count_ - 1;
  const std::size_t base = lead_ + hist;
  const double fft_work = fft_block_units(fft_size_);
  const double per_output = kDirectFixed + static_cast<double>(tap_count_) * (real_taps_ ? 1.0 : 2.0);
  std::size_t done = 0;
  while (done < in.size()) {
    const std::size_t n = std::min(block_ - fill_, in.size() - done);
    std::copy_n(in.data() + done, n, stage_.data() + base + fill_);
    const std::size_t first = fill_;
    fill_ += n;
    if (fill_ == block_ || static_cast<double>(n) * per_output > fft_work) {
      fft_block();
      std::copy_n(work_.data() + hist + first, n, out.data() + done);
    } else {
      // A call ending inside the block: the few outputs it owes are cheaper directly.
      direct_outputs(stage_.data() + base + first, n, out.data() + done);
    }
    if (fill_ == block_) {
      std::copy(stage_.begin() + lead_ + block_, stage_.begin() + lead_ + block_ + hist,
                stage_.begin() + lead_);
      fill_ = 0;
    }
    done += n;
  }
}

template <class Sample>
void FirFilter<Sample>::reset() noexcept {
  std::fill(line_.begin(), line_.end(), Sample(0));
  std::fill(stage_.begin(), stage_.end(), Sample(0));
  fill_ = 0;
}

template class FirFilter<cf32>;
template class FirFilter<cf64>;

}  // namespace qamsight
