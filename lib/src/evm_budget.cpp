// evm_budget: per-impairment EVM predictions, their root-sum-square, simulation check, allowances.
//
// Models (docs/evm.md gives the derivations; "sim units": unit transmit symbol energy):
// - Thermal noise: EVM^2 = (1 + error power ahead of the noise) / SNR (see evm_budget.hpp).
// - Pulse ISI: the matched RRC cascade's ISI power (pulse.hpp), zero at one sample per symbol.
// - IQ imbalance y = mu x + nu x*: after the least-squares gain, EVM^2 = |nu|^2 E|s* - k s|^2 /
//   (|g|^2 E|s|^2), g = mu + nu k*, k = E[s*^2] / E|s|^2; for proper constellations (square QAM,
//   M-PSK with M > 2) k = 0 and EVM = |nu / mu| = 1/sqrt(IRR) (REFERENCES 8).
// - DC offset c (relative to the RMS amplitude): the matched filter passes it with gain
//   sum(h) / sqrt(sps); EVM^2 = |c|^2 sum(h)^2 / (sps |mu|^2).
// - Amplifier: the model's AM/AM and AM/PM applied to a reference sample of the shaped signal
//   (8192 random symbols through the RRC filter at the line-up's sps; at one sample per symbol
//   the constellation points themselves, exactly), matched-filtered, and compared with the
//   undistorted signal after the best linear (least-squares, Bussgang) gain G: EVM^2 =
//   mean |z - G z_lin|^2 / (|G|^2 mean |s|^2). Only the in-band part of the distortion counts,
//   as at the decision point.
// - Phase noise phi (two-sided density S(f) at the sample rate; Wiener: the random walk's
//   q / (fs 4 sin^2(pi f / fs)), q = 2 pi linewidth / fs). Linearised, the matched-filter output
//   of symbol 0 is s0 + j sum_i s_i sum_n phi[n] a_i[n], a_i[n] = g[n - i sps] g[n], so
//     sigma^2 = 2 int_0^{fs/2} S(f) [ |A_0(f)|^2 |1 - H(f)|^2 B(f) + sum_{i != 0} |A_i(f) - A_i(0)|^2 ] df
//   with A_i the transform of a_i, H the closed-loop response of the phase tracker at symbol
//   rate (from its gains; 0 when off) and B the high-pass of the measurement's least-squares
//   phase (and frequency) fit over a block of N symbols. EVM^2 = 2 (1 - exp(-sigma^2 / 2)),
//   exact for Gaussian phase (REFERENCES 8).
// - Tracker jitter: the detector noise ((noise-like error power) / 2 E[1/|s|^2]) through the
//   loop's noise bandwidth, sigma_j^2 = that x sum h[n]^2.
// - ADC: per rail a Gaussian of the signal-plus-noise variance, full scale A = sigma 10^(L/20).
//   Granular noise D^2/12 per rail (D = 2A / 2^bits), white, on the samples inside the range.
//   Clipping: the clipper's Hermite expansion, c_1 = beta sigma (beta = 1 - 2Q(a), a = A/sigma,
//   the Bussgang gain) and c_n = -2 sigma phi(a) He_{n-2}(a) for odd n >= 3, gives the
//   distortion autocorrelation sum_{n>=3} c_n^2 rho(k)^n / n! (Mehler's formula) with rho the
//   normalised autocorrelation of the shaped signal plus noise; the matched filter keeps
//   sum_k r_h(k) R_d(k) of it. Both are divided by the wanted signal power beta^2 |G|^2.
// - Residual frequency offset: zero with the tracker (second order: no steady-state phase
//   error) or when the measurement fits the frequency; otherwise the block average
//   D = sin(pi f N) / (N sin(pi f)) gives EVM^2 = 1/D^2 - 1 after the gain fit.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <numbers>

#include <nlohmann/json.hpp>

#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/plot.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/sync.hpp"

namespace qamsight {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kInf = std::numeric_limits<double>::infinity();
// 10 log10(k T0 / 1 mW), k = 1.380649e-23 J/K (exact SI value), T0 = 290 K.
const double kNoiseFloorDbmHz = 10.0 * std::log10(1.380649e-23 * 290.0 * 1e3);
constexpr double kDamping = 0.7071;  // the waveform link's tracker (PhaseTrackerConfig default)
constexpr std::size_t kAmpSampleSymbols = 8192;
constexpr std::uint64_t kAmpSampleSeed = 0x45564d627564ULL;  // fixed: the prediction is deterministic

std::string fmt(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

bool tracking_of(const EvmLineup& l) {
  if (l.tracker == TrackerMode::on) return true;
  if (l.tracker == TrackerMode::off) return false;
  return l.cfo_hz != 0.0 || l.phase_deg != 0.0 || l.phase_noise_linewidth_hz != 0.0 || l.phase_noise_mask != nullptr;
}

int sps_of(const EvmLineup& l) { return l.pulse.samples_per_symbol; }

PulseSpec pulse_spec_of(const EvmLineup& l) {
  PulseSpec p;
  p.family = PulseFamily::root_raised_cosine;
  p.roll_off = l.pulse.roll_off;
  p.span_symbols = l.pulse.span_symbols;
  p.samples_per_symbol = l.pulse.samples_per_symbol;
  return p;
}

// The transmit/receive pulse as the waveform link uses it (no filters at one sample per symbol).
struct Shaping {
  int sps = 1;
  int span = 0;
  std::vector<double> g{1.0};  // centred taps, odd length
  double isi = 0.0;
  double dc_gain = 1.0;         // sum(g) / sqrt(sps)
  std::vector<double> rg{1.0};  // r_g[k] = sum_m g[m] g[m + k], k >= 0
};

Shaping shaping_of(const EvmLineup& l) {
  Shaping s;
  s.sps = sps_of(l);
  if (s.sps > 1) {
    const PulseSpec spec = pulse_spec_of(l);
    s.span = l.pulse.span_symbols;
    s.g = pulse_taps(spec);
    s.isi = matched_cascade_isi_power(spec);
    double sum = 0.0;
    for (double v : s.g) sum += v;
    s.dc_gain = sum / std::sqrt(static_cast<double>(s.sps));
    s.rg.assign(s.g.size(), 0.0);
    for (std::size_t k = 0; k < s.g.size(); ++k)
      for (std::size_t m = 0; m + k < s.g.size(); ++m) s.rg[k] += s.g[m] * s.g[m + k];
  }
  return s;
}

// ---- amplifier -----------------------------------------------------------------------------

struct AmpResult {
  cf64 gain{1.0, 0.0};
  double evm_sq = 0.0;
  double sample_power = 0.0;  // mean per-sample output power (sim units)
};

// Normalised amplifier transfer (small-signal gain 1), as the waveform link drives it.
class AmpTransfer {
 public:
  explicit AmpTransfer(const EvmLineup& l) : kind_(l.amplifier) {
    const double mean_power = 1.0 / sps_of(l);
    if (kind_ == AmplifierKind::saleh) {
      SalehConfig c;
      c.input_backoff_db = l.input_backoff_db;
      c.mean_input_power = mean_power;
      saleh_.emplace(c);
      drive_ = saleh_->drive_scale();
      g0_ = c.alpha_a;
    } else if (kind_ == AmplifierKind::rapp) {
      RappConfig c;
      c.smoothness = l.rapp_smoothness;
      c.input_backoff_db = l.input_backoff_db;
      c.mean_input_power = mean_power;
      rapp_.emplace(c);
      drive_ = rapp_->drive_scale();
      g0_ = c.gain;
    }
  }
  cf64 operator()(cf64 x) const {
    const double r = std::abs(x);
    if (r == 0.0) return x;
    const double u = drive_ * r;
    if (saleh_) return x * (saleh_->am_am(u) / (u * g0_)) * std::polar(1.0, saleh_->am_pm_rad(u));
    return x * (rapp_->am_am(u) / (u * g0_));
  }

 private:
  AmplifierKind kind_;
  std::optional<SalehAmplifier> saleh_;
  std::optional<RappAmplifier> rapp_;
  double drive_ = 1.0, g0_ = 1.0;
};

// A reference sample of the transmitted signal: symbols s, the shaped waveform x and the
// amplifier's output y (= x without one). At one sample per symbol the constellation points
// themselves (each once: the averages are exact); otherwise 8192 random symbols (fixed stream)
// through the RRC filter, of which the symbols with full filter memory on both sides count.
struct ReferenceSample {
  std::vector<cf64> s, x, y;
  std::size_t first = 0, last = 0;  // counted symbols [first, last)
  std::size_t sample_first = 0, sample_last = 0;  // their samples
};

ReferenceSample reference_sample(const EvmLineup& l, const Constellation& c, const Shaping& sh) {
  ReferenceSample r;
  if (sh.sps == 1) {
    r.s.assign(c.points().begin(), c.points().end());
    r.x = r.s;
    r.first = 0, r.last = r.s.size();
    r.sample_first = 0, r.sample_last = r.s.size();
  } else {
    const std::size_t k = kAmpSampleSymbols;
    std::vector<std::uint32_t> labels(k);
    RandomStream(kAmpSampleSeed, 0, Substream::user).fill_labels(labels, c.bits_per_symbol());
    std::vector<cf32> s32(k);
    c.map_labels(labels, s32);
    r.s.assign(s32.begin(), s32.end());
    r.x.resize(k * static_cast<std::size_t>(sh.sps));
    PolyphaseInterpolator<cf64> interp(pulse_spec_of(l));
    interp.process(r.s, r.x);
    const std::size_t span = static_cast<std::size_t>(sh.span), sps = static_cast<std::size_t>(sh.sps);
    r.first = span, r.last = k - span;
    // symbol j peaks at sample (j + span/2) sps; keep the samples of the counted symbols
    r.sample_first = (r.first + span / 2) * sps, r.sample_last = (r.last + span / 2) * sps;
  }
  r.y = r.x;
  if (l.amplifier != AmplifierKind::none) {
    const AmpTransfer amp(l);
    for (auto& v : r.y) v = amp(v);
  }
  return r;
}

// Matched-filter outputs at the symbol instants: out[j] belongs to symbol j (valid in [first, last)).
std::vector<cf64> matched_symbols(const EvmLineup& l, const Shaping& sh, const std::vector<cf64>& samples) {
  if (sh.sps == 1) return samples;
  MatchedDecimator<cf64> dec(pulse_spec_of(l));
  std::vector<cf64> z(dec.output_length(samples.size()));
  dec.process(samples, z);
  const std::size_t span = static_cast<std::size_t>(sh.span);
  std::vector<cf64> out(z.size(), cf64{});
  for (std::size_t j = 0; j + span < z.size(); ++j) out[j] = z[j + span];
  return out;
}

// Least-squares gain of `z` on `ref` over the counted symbols, and the residual power.
std::pair<cf64, double> linear_fit(const ReferenceSample& r, const std::vector<cf64>& z, const std::vector<cf64>& ref) {
  cf64 num{0.0, 0.0};
  double den = 0.0;
  for (std::size_t j = r.first; j < r.last; ++j) num += z[j] * std::conj(ref[j]), den += std::norm(ref[j]);
  const cf64 g = num / den;
  double err = 0.0;
  for (std::size_t j = r.first; j < r.last; ++j) err += std::norm(z[j] - g * ref[j]);
  return {g, err / static_cast<double>(r.last - r.first)};
}

double mean_power(const std::vector<cf64>& v, std::size_t a, std::size_t b) {
  double p = 0.0;
  for (std::size_t i = a; i < b; ++i) p += std::norm(v[i]);
  return p / static_cast<double>(b - a);
}

AmpResult amplifier_distortion(const EvmLineup& l, const Shaping& sh, const ReferenceSample& r) {
  AmpResult res;
  res.sample_power = 1.0 / sh.sps;
  if (l.amplifier == AmplifierKind::none) return res;
  const auto zl = matched_symbols(l, sh, r.x);
  const auto z = matched_symbols(l, sh, r.y);
  const auto [g, err] = linear_fit(r, z, zl);
  res.gain = g;
  res.evm_sq = err / (std::norm(g) * mean_power(r.s, r.first, r.last));
  res.sample_power = mean_power(r.y, r.sample_first, r.sample_last);
  return res;
}

// ---- phase noise -----------------------------------------------------------------------------

// |1 - H|^2 of the tracker at nu = f / Rs: 1 - H = 1 / (1 + L), L = F(z) z^-1 / (1 - z^-1).
double loop_error_gain(const PhaseLoopGains& gl, double nu) {
  if (nu == 0.0) return 0.0;
  const cf64 zi = std::polar(1.0, -2.0 * kPi * nu);
  const cf64 acc = zi / (1.0 - zi);
  const cf64 f = gl.kp + gl.ki / (1.0 - zi);
  return std::norm(1.0 / (1.0 + f * acc));
}

// sum h[n]^2 of the closed loop (phase in -> estimate out), from its impulse response.
double loop_noise_gain(const PhaseLoopGains& gl, double bandwidth) {
  double theta = 0.0, omega = 0.0, sum = 0.0;
  const std::size_t n = static_cast<std::size_t>(std::ceil(200.0 / bandwidth));
  for (std::size_t i = 0; i < n; ++i) {
    const double e = (i == 0 ? 1.0 : 0.0) - theta;
    omega += gl.ki * e;
    theta += gl.kp * e + omega;
    sum += theta * theta;  // theta[i+1]
  }
  return sum;
}

// Fraction of a complex exponential at omega (rad/symbol) left after the least-squares fit of a
// constant (and a linear phase) over n symbols.
double block_highpass(double omega, std::size_t n, bool linear) {
  const double nn = static_cast<double>(n);
  const double h = 0.5 * omega;
  const double sh = std::sin(h);
  if (std::abs(nn * h) < 1e-4) {
    // series: 1 - D^2 - D'^2/(S N) = O(omega^4) (constant only: (N^2 - 1) omega^2 / 12)
    return linear ? 0.0 : (nn * nn - 1.0) * omega * omega / 12.0;
  }
  const double d = std::sin(nn * h) / sh;  // sum_n e^{j omega (n - m)}, real
  double frac = (d / nn) * (d / nn);
  if (linear && n > 1) {
    const double dd = (0.5 * nn * std::cos(nn * h) * sh - 0.5 * std::sin(nn * h) * std::cos(h)) / (sh * sh);
    const double s = nn * (nn * nn - 1.0) / 12.0;
    frac += dd * dd / (s * nn);
  }
  return std::clamp(1.0 - frac, 0.0, 1.0);
}

struct PhaseNoiseResult {
  double sigma_sq = 0.0;      // residual phase-related error variance (linearised)
  double untracked_sq = 0.0;  // the same without the tracker (for notes)
};

PhaseNoiseResult phase_noise_residual(const EvmLineup& l, const Shaping& sh, bool tracking) {
  PhaseNoiseResult r;
  const bool wiener = l.phase_noise_linewidth_hz > 0.0;
  const bool mask = l.phase_noise_mask != nullptr;
  if (!wiener && !mask) return r;
  const double rs = l.symbol_rate_hz, fs = rs * sh.sps;
  const double q = 2.0 * kPi * l.phase_noise_linewidth_hz / fs;
  const double scale = std::pow(10.0, l.phase_noise_mask_offset_db / 10.0);
  const auto density = [&](double f) {
    double s = 0.0;
    if (wiener) {
      const double sn = std::sin(kPi * f / fs);
      s += q / (fs * 4.0 * sn * sn);
    }
    if (mask) s += scale * l.phase_noise_mask->density(f, MaskExtension::flat, MaskExtension::flat);
    return s;
  };
  // a_i[n] = g[n - i sps] g[n] on n in [-c, c] (centred indices).
  const int c = static_cast<int>(sh.g.size() / 2);
  const int imax = sh.sps > 1 ? sh.span : 0;
  struct Weights {
    int lo;
    std::vector<double> a;
  };
  std::vector<Weights> w;
  for (int i = -imax; i <= imax; ++i) {
    Weights wi;
    wi.lo = std::max(-c, i * sh.sps - c);
    const int hi = std::min(c, i * sh.sps + c);
    for (int n = wi.lo; n <= hi; ++n) wi.a.push_back(sh.g[n - i * sh.sps + c] * sh.g[n + c]);
    w.push_back(std::move(wi));
  }
  std::vector<cf64> a0(w.size());
  for (std::size_t i = 0; i < w.size(); ++i) {
    double s = 0.0;
    for (double v : w[i].a) s += v;
    a0[i] = s;
  }
  const PhaseLoopGains gl = tracking ? phase_loop_gains(l.tracker_bandwidth, kDamping, 2) : PhaseLoopGains{};
  const std::size_t nb = l.measurement_symbols;
  const bool lin = l.measurement_removes_frequency;
  std::vector<cf64> ph(2 * static_cast<std::size_t>(c) + 1);
  const auto integrand = [&](double f, double& tracked, double& untracked) {
    // p_n = e^{-j 2 pi f n / fs} for n in [-c, c]
    ph[static_cast<std::size_t>(c)] = 1.0;
    for (int n = 1; n <= c; ++n) {
      ph[static_cast<std::size_t>(c + n)] = std::polar(1.0, -2.0 * kPi * f * n / fs);
      ph[static_cast<std::size_t>(c - n)] = std::conj(ph[static_cast<std::size_t>(c + n)]);
    }
    double w0 = 0.0, wici = 0.0;
    for (std::size_t i = 0; i < w.size(); ++i) {
      cf64 sum{0.0, 0.0};
      for (std::size_t k = 0; k < w[i].a.size(); ++k) sum += w[i].a[k] * ph[static_cast<std::size_t>(w[i].lo + c) + k];
      if (static_cast<int>(i) == imax) {
        w0 = std::norm(sum);
      } else {
        wici += std::norm(sum - a0[i]);
      }
    }
    const double s = density(f);
    const double nu = f / rs;
    const double bh = block_highpass(2.0 * kPi * nu, nb, lin);
    tracked = s * ((tracking ? loop_error_gain(gl, nu) : 1.0) * w0 * bh + wici);
    untracked = s * (w0 * bh + wici);
  };
  // Integral over (0, fs/2]: midpoint rule on [0, f_lo], trapezoid in log f above.
  const double f_hi = 0.5 * fs, f_lo = 1e-7 * rs;
  double tr = 0.0, un = 0.0, t, u;
  const int n_lin = 32;
  for (int i = 0; i < n_lin; ++i) {
    integrand((i + 0.5) * f_lo / n_lin, t, u);
    tr += t * f_lo / n_lin;
    un += u * f_lo / n_lin;
  }
  const double decades = std::log10(f_hi / f_lo);
  const int n_log = static_cast<int>(std::ceil(decades * 500.0));
  const double du = std::log(f_hi / f_lo) / n_log;
  double pt = 0.0, pu = 0.0;
  for (int i = 0; i <= n_log; ++i) {
    const double f = f_lo * std::exp(i * du);
    integrand(std::min(f, f_hi), t, u);
    t *= f, u *= f;
    if (i > 0) tr += 0.5 * (t + pt) * du, un += 0.5 * (u + pu) * du;
    pt = t, pu = u;
  }
  r.sigma_sq = 2.0 * tr;
  r.untracked_sq = 2.0 * un;
  return r;
}

// ---- ADC -------------------------------------------------------------------------------------

double q_function(double x) { return 0.5 * std::erfc(x / std::sqrt(2.0)); }

struct AdcResult {
  double quant_sq = 0.0;  // EVM^2 of the granular noise and of clipping, relative to the wanted signal
  double clip_sq = 0.0;
  double clip_probability = 0.0;  // per rail sample
  /// Change of the noise power by the clipper beyond its linear gain, relative to the wanted
  /// signal: positive adds clipping noise, negative (heavy clipping compresses the noise too)
  /// lowers the thermal-noise term.
  double noise_change_sq = 0.0;
};

// Gaussian input (OFDM-like signals): closed-form clipping power, in-band share by Mehler's series.
AdcResult adc_noise_gaussian(const EvmLineup& l, const Shaping& sh, double sample_power, double n0, cf64 linear_gain) {
  AdcResult r;
  const double var = 0.5 * (sample_power + n0);  // per rail
  const double sigma = std::sqrt(var);
  const double a = std::pow(10.0, l.adc_loading_db / 20.0);  // A / sigma
  const double fsc = a * sigma;
  const double step = 2.0 * fsc / std::ldexp(1.0, static_cast<int>(l.adc_bits));
  const double qa = q_function(a);
  const double phi_a = std::exp(-0.5 * a * a) / std::sqrt(2.0 * kPi);
  const double beta = 1.0 - 2.0 * qa;
  r.clip_probability = 2.0 * qa;
  const double wanted = beta * beta * std::norm(linear_gain);
  r.quant_sq = 2.0 * step * step / 12.0 * beta / wanted;
  // Total clipping distortion per rail: E[clip^2] - beta^2 sigma^2.
  const double e_clip2 = var * (beta - 2.0 * a * phi_a) + 2.0 * fsc * fsc * qa;
  const double total = std::max(e_clip2 - beta * beta * var, 0.0);
  // Normalised autocorrelation of the rail at lags k (samples): signal shaped by the pulse, noise white.
  const std::size_t kmax = sh.rg.size();
  std::vector<double> rho(kmax);
  for (std::size_t k = 0; k < kmax; ++k) rho[k] = (sample_power * sh.rg[k] + (k == 0 ? n0 : 0.0)) / (2.0 * var);
  // Mehler series of the distortion, odd orders 3..nmax, with h_m = He_m(a) / sqrt(m!).
  const int nmax = 401;
  std::vector<double> coef;  // c_n^2 / n! / var for n = 3, 5, ...
  {
    double hm2 = 1.0, hm1 = a;  // h_0, h_1
    std::vector<double> h = {hm2, hm1};
    for (int m = 1; m + 1 <= nmax; ++m) {
      const double next = (a * h[m] - std::sqrt(static_cast<double>(m)) * h[m - 1]) / std::sqrt(m + 1.0);
      h.push_back(next);
    }
    for (int n = 3; n <= nmax; n += 2) coef.push_back(4.0 * phi_a * phi_a * h[n - 2] * h[n - 2] / (n * (n - 1.0)));
  }
  double partial0 = 0.0;
  for (double cf : coef) partial0 += cf * var;
  double mf = 0.0;
  for (std::size_t k = 0; k < kmax; ++k) {
    double rd = 0.0, p = rho[k] * rho[k] * rho[k];
    const double r2 = rho[k] * rho[k];
    for (double cf : coef) {
      rd += cf * var * p;
      p *= r2;
    }
    mf += (k == 0 ? 1.0 : 2.0) * sh.rg[k] * rd;
  }
  // What the truncated series misses is the least correlated part: count it as white.
  mf += std::max(total - partial0, 0.0);
  r.clip_sq = 2.0 * mf / wanted;
  return r;
}

// One rail of the ADC input, u = x + n with n ~ N(0, s^2), clipped to [-a, a]: mean and variance
// of the clipper output given x, and P(|u| < a). Gaussian partial moments over the three pieces.
struct RailStats {
  double mean = 0.0, var = 0.0, inside = 1.0;
};

RailStats clipped_rail(double x, double s, double a) {
  RailStats r;
  if (!(s > 1e-15 * a)) {
    r.mean = std::clamp(x, -a, a);
    r.inside = std::abs(x) < a ? 1.0 : 0.0;
    return r;
  }
  const double lo = (-a - x) / s, hi = (a - x) / s;
  const double rt2 = std::sqrt(2.0), norm = 1.0 / std::sqrt(2.0 * kPi);
  const double p_hi = 0.5 * std::erfc(hi / rt2), p_lo = 0.5 * std::erfc(-lo / rt2);
  const double d_lo = norm * std::exp(-0.5 * lo * lo), d_hi = norm * std::exp(-0.5 * hi * hi);
  const double in = std::max(1.0 - p_hi - p_lo, 0.0);
  const double e1 = x * in + s * (d_lo - d_hi);
  const double e2 = x * x * in + 2.0 * x * s * (d_lo - d_hi) + s * s * (in + lo * d_lo - hi * d_hi);
  r.mean = a * (p_hi - p_lo) + e1;
  r.var = std::max(a * a * (p_hi + p_lo) + e2 - r.mean * r.mean, 0.0);
  r.inside = in;
  return r;
}

// Shaped single-carrier input: the reference sample (amplifier output), scaled to the received
// per-sample power, plus Gaussian noise, per rail. The clipper's conditional mean carries the
// signal-correlated distortion (matched-filtered, after the best linear gain, in band only); its
// conditional variance beyond the noise's own is white clipping noise.
AdcResult adc_noise_shaped(const EvmLineup& l, const Shaping& sh, const ReferenceSample& ref, double sample_power,
                           double n0, double amplifier_evm_sq) {
  AdcResult r;
  const double sigma = std::sqrt(0.5 * (sample_power + n0));  // per rail
  const double a = sigma * std::pow(10.0, l.adc_loading_db / 20.0);
  const double step = 2.0 * a / std::ldexp(1.0, static_cast<int>(l.adc_bits));
  const double k = std::sqrt(sample_power / mean_power(ref.y, ref.sample_first, ref.sample_last));
  const double s = std::sqrt(0.5 * n0);
  std::vector<cf64> x(ref.y.size()), y(ref.y.size()), m(ref.y.size());
  double var = 0.0, inside = 0.0;
  // The carrier phase at the ADC decides how the points project on the rails: a static rotation
  // is applied as it is; with a frequency offset every phase occurs, so the sample turns once.
  const double turns = l.cfo_hz != 0.0 ? 1.0 : 0.0;
  const double theta0 = l.phase_deg * kPi / 180.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const cf64 rot = k * std::polar(1.0, theta0 + 2.0 * kPi * turns * static_cast<double>(i) / static_cast<double>(x.size()));
    x[i] = rot * ref.x[i];
    y[i] = rot * ref.y[i];
    const RailStats ri = clipped_rail(y[i].real(), s, a), rq = clipped_rail(y[i].imag(), s, a);
    m[i] = cf64(ri.mean, rq.mean);
    if (i >= ref.sample_first && i < ref.sample_last) var += ri.var + rq.var, inside += 0.5 * (ri.inside + rq.inside);
  }
  const double count = static_cast<double>(ref.sample_last - ref.sample_first);
  var /= count;
  inside /= count;
  // Fitted against the undistorted signal, so that clipping and amplifier compression, which both
  // pull the outer points in, add as the correlated errors they are; the amplifier's own share is
  // then taken out again.
  // The noise reaches the ADC without the amplifier, so its linear gain is the ADC's own one,
  // fitted against the amplifier's output.
  const auto zx = matched_symbols(l, sh, x);
  const auto zm = matched_symbols(l, sh, m);
  const auto [g, err] = linear_fit(ref, zm, zx);
  const auto gy = linear_fit(ref, zm, matched_symbols(l, sh, y)).first;
  const double wanted = std::norm(g) * mean_power(zx, ref.first, ref.last);
  r.quant_sq = 2.0 * step * step / 12.0 * inside / wanted;
  r.clip_sq = std::max(err / wanted - amplifier_evm_sq, 0.0);
  r.noise_change_sq = (var - std::norm(gy) * n0) / wanted;
  r.clip_probability = 1.0 - inside;
  return r;
}

// ---- helpers ---------------------------------------------------------------------------------

EvmContribution contribution(const EvmLineup& l, std::string key, std::string name, double evm_sq,
                             std::string note) {
  EvmContribution c;
  c.key = std::move(key);
  c.name = std::move(name);
  if (const auto it = l.parts.find(c.key); it != l.parts.end()) c.part = it->second;
  c.evm_pct = 100.0 * std::sqrt(std::max(evm_sq, 0.0));
  c.evm_db = 20.0 * std::log10(c.evm_pct / 100.0);
  c.note = std::move(note);
  return c;
}

double gaussian_phase_evm_sq(double sigma_sq) { return 2.0 * (1.0 - std::exp(-0.5 * sigma_sq)); }

// Smallest rotation (degrees) that moves some noise-free point into another point's decision
// region (16-QAM 16.9, 64-QAM 7.7, QPSK 45): the phase error a decision-directed loop tolerates.
double decision_rotation_margin_deg(const Constellation& c) {
  double best = 180.0;
  for (std::size_t i = 0; i < c.order(); ++i) {
    const cf64 p = c.points()[i];
    const auto label_at = [&](double deg) {
      const cf64 q = p * std::polar(1.0, deg * kPi / 180.0);
      return c.slice_exhaustive(cf32(static_cast<float>(q.real()), static_cast<float>(q.imag())));
    };
    const std::uint32_t own = label_at(0.0);
    for (double sign : {1.0, -1.0}) {
      // first change on a 0.25-degree scan, then bisection inside that step
      double lo = 0.0, hi = 0.0;
      while (hi < 180.0 && label_at(sign * hi) == own) lo = hi, hi += 0.25;
      for (int it = 0; it < 40; ++it) {
        const double mid = 0.5 * (lo + hi);
        (label_at(sign * mid) == own ? lo : hi) = mid;
      }
      best = std::min(best, lo);
    }
  }
  return best;
}

}  // namespace

// ---- validation ------------------------------------------------------------------------------

double lineup_es_n0_db(const EvmLineup& l) {
  if (l.snr_db) return *l.snr_db;
  if (l.noise) return l.noise->signal_dbm - kNoiseFloorDbmHz - l.noise->noise_figure_db - 10.0 * std::log10(l.symbol_rate_hz);
  return kInf;
}

void validate(const EvmLineup& l) {
  (void)Constellation::from_name(l.modulation);
  require_range_open_low("symbol_rate_hz", l.symbol_rate_hz, 0.0, 1e12);
  if (l.pulse.samples_per_symbol < 1 || l.pulse.samples_per_symbol > 64) {
    throw ConfigError("samples_per_symbol", std::to_string(l.pulse.samples_per_symbol), "1 to 64");
  }
  if (l.pulse.samples_per_symbol > 1) check_pulse_spec(pulse_spec_of(l));
  if (l.snr_db && l.noise) throw ConfigError("snr_db", format_number(*l.snr_db), "not together with a noise figure");
  if (l.snr_db) require_range("snr_db", *l.snr_db, -20.0, 150.0);
  if (l.noise) {
    require_range("signal_dbm", l.noise->signal_dbm, -200.0, 100.0);
    require_range("noise_figure_db", l.noise->noise_figure_db, 0.0, 60.0);
    require_range("noise_bandwidth_hz", l.noise->noise_bandwidth_hz, 0.0, 1e13);
    const double es = lineup_es_n0_db(l);
    if (!(es >= -20.0 && es <= 150.0)) {
      throw ConfigError("signal_dbm", format_number(l.noise->signal_dbm),
                        "a level giving Es/N0 between -20 and 150 dB (this gives " + format_number(es) + " dB)");
    }
  }
  require_range("carrier_frequency_hz", l.carrier_frequency_hz, 0.0, 1e13);
  const double fs = l.symbol_rate_hz * l.pulse.samples_per_symbol;
  require_range("phase_noise_linewidth_hz", l.phase_noise_linewidth_hz, 0.0, 0.1 * fs);
  require_range("phase_noise_mask_offset_db", l.phase_noise_mask_offset_db, -150.0, 100.0);
  if (l.phase_noise_mask && !(l.phase_noise_mask->first_offset_hz() < 0.5 * fs)) {
    throw ConfigError("phase noise mask first offset", format_number(l.phase_noise_mask->first_offset_hz()) + " Hz",
                      "below half the sample rate (" + format_number(0.5 * fs) + " Hz)");
  }
  require_range_open_low("tracker_bandwidth", l.tracker_bandwidth, 0.0, 0.1);
  if (l.pilot_period > (std::size_t{1} << 20)) {
    throw ConfigError("pilot_period", std::to_string(l.pilot_period), "0 (none) to 1048576");
  }
  require_range("iq_gain_db", l.iq_gain_db, -10.0, 10.0);
  require_range("iq_phase_deg", l.iq_phase_deg, -45.0, 45.0);
  if (!(std::abs(l.dc_offset) <= 10.0)) throw ConfigError("dc_offset", format_number(std::abs(l.dc_offset)), "|offset| <= 10");
  require_range("input_backoff_db", l.input_backoff_db, -20.0, 40.0);
  require_range("rapp_smoothness", l.rapp_smoothness, 0.1, 100.0);
  if (l.adc_bits > 24) throw ConfigError("adc_bits", std::to_string(l.adc_bits), "0 (ideal) or 1 to 24");
  require_range("adc_loading_db", l.adc_loading_db, -20.0, 40.0);
  require_range("cfo_hz", l.cfo_hz, -0.5 * fs, 0.5 * fs);
  require_range("phase_deg", l.phase_deg, -360.0, 360.0);
  if (l.measurement_symbols < 16 || l.measurement_symbols > (std::size_t{1} << 22)) {
    throw ConfigError("measurement_symbols", std::to_string(l.measurement_symbols), "16 to 4194304");
  }
}

EvmLineup lineup_from_link(const LinkConfig& link, std::string modulation, double es_n0_db) {
  const auto& im = link.impairments;
  if (!im.multipath.empty()) {
    throw ConfigError("multipath", std::to_string(im.multipath.size()) + " taps",
                      "none in an EVM budget (it models no equaliser)");
  }
  if (im.tracker_detector != PhaseDetector::arg) {
    throw ConfigError("tracker_detector", "soft", "arg in an EVM budget (its tracker jitter models the arg detector)");
  }
  EvmLineup l;
  l.modulation = std::move(modulation);
  l.symbol_rate_hz = im.symbol_rate_hz;
  l.pulse = link.pulse;
  if (std::isfinite(es_n0_db)) l.snr_db = es_n0_db;
  l.phase_noise_linewidth_hz = im.phase_noise_linewidth_hz;
  l.phase_noise_mask = im.phase_noise_mask;
  l.tracker = im.tracker;
  l.tracker_bandwidth = im.tracker_bandwidth;
  l.pilot_period = im.pilot_period;
  l.iq_gain_db = im.iq_gain_db;
  l.iq_phase_deg = im.iq_phase_deg;
  l.dc_offset = im.dc_offset;
  l.amplifier = im.amplifier;
  l.input_backoff_db = im.input_backoff_db;
  l.rapp_smoothness = im.rapp_smoothness;
  l.adc_bits = im.adc_bits;
  l.adc_loading_db = im.adc_loading_db;
  l.cfo_hz = im.cfo_hz;
  l.phase_deg = im.phase_deg;
  l.measurement_symbols = link.frame_symbols;
  return l;
}

// ---- prediction ------------------------------------------------------------------------------

EvmPrediction predict_evm(const EvmLineup& l) {
  validate(l);
  const Constellation c = Constellation::from_name(l.modulation);
  const Shaping sh = shaping_of(l);
  EvmPrediction p;
  p.tracking = tracking_of(l);
  p.es_n0_db = lineup_es_n0_db(l);
  std::vector<EvmContribution> pre;  // ahead of the noise

  if (sh.sps > 1) {
    pre.push_back(contribution(l, "pulse_isi", "pulse ISI (RRC span " + std::to_string(sh.span) + " symbols)", sh.isi,
                               "finite-span RRC cascade (pulse.hpp matched_cascade_isi_power)"));
  }
  // IQ imbalance.
  const double g = std::pow(10.0, l.iq_gain_db / 20.0), phi = l.iq_phase_deg * kPi / 180.0;
  const cf64 mu = 0.5 * (1.0 + g * std::polar(1.0, phi)), nu = 0.5 * (1.0 - g * std::polar(1.0, -phi));
  if (l.iq_gain_db != 0.0 || l.iq_phase_deg != 0.0) {
    cf64 k{0.0, 0.0};
    double es = 0.0;
    for (const auto& pt : c.points()) k += std::conj(pt * pt), es += std::norm(pt);
    k /= es;
    double e2 = 0.0;
    for (const auto& pt : c.points()) e2 += std::norm(std::conj(pt) - k * pt);
    const cf64 gl = mu + nu * std::conj(k);
    const double evm_sq = std::norm(nu) * e2 / (std::norm(gl) * es);
    const double irr_db = 10.0 * std::log10(std::norm(mu) / std::norm(nu));
    pre.push_back(contribution(l, "iq_imbalance",
                               "IQ imbalance (" + fmt(l.iq_gain_db, 2) + " dB, " + fmt(l.iq_phase_deg, 2) +
                                   " deg; IRR " + fmt(irr_db, 1) + " dB)",
                               evm_sq, "image after the least-squares gain: 1/sqrt(IRR) for proper constellations"));
  }
  if (l.dc_offset != cf64{}) {
    const double evm_sq = std::norm(l.dc_offset) * sh.dc_gain * sh.dc_gain / std::norm(mu);
    pre.push_back(contribution(l, "dc_offset",
                               "DC offset (carrier leak " + fmt(20.0 * std::log10(std::abs(l.dc_offset)), 1) + " dBc)",
                               evm_sq, "leak through the matched filter"));
  }
  const ReferenceSample ref = reference_sample(l, c, sh);
  const AmpResult amp = amplifier_distortion(l, sh, ref);
  if (l.amplifier != AmplifierKind::none) {
    const std::string model = l.amplifier == AmplifierKind::saleh ? "Saleh TWT" : "Rapp SSPA p " + fmt(l.rapp_smoothness, 1);
    pre.push_back(contribution(l, "amplifier", "amplifier (" + model + ", IBO " + fmt(l.input_backoff_db, 1) + " dB)",
                               amp.evm_sq,
                               sh.sps > 1 ? "AM/AM and AM/PM over 8192 shaped symbols, in-band after the Bussgang gain"
                                          : "AM/AM and AM/PM at the constellation points after the Bussgang gain"));
  }
  // Phase noise and the tracker.
  const bool has_pn = l.phase_noise_linewidth_hz > 0.0 || l.phase_noise_mask != nullptr;
  double pn_sigma_sq = 0.0;
  if (has_pn) {
    const PhaseNoiseResult pn = phase_noise_residual(l, sh, p.tracking);
    pn_sigma_sq = pn.sigma_sq;
    std::string what = l.phase_noise_mask ? "mask" : "";
    if (l.phase_noise_linewidth_hz > 0.0) {
      what += std::string(what.empty() ? "" : " + ") + "Wiener " + format_number(l.phase_noise_linewidth_hz) + " Hz";
    }
    if (l.phase_noise_mask && l.phase_noise_mask_offset_db != 0.0) what += " " + fmt(l.phase_noise_mask_offset_db, 1) + " dB";
    std::string name = "phase noise (" + what + (p.tracking ? ", tracked B_L T " + format_number(l.tracker_bandwidth) : ", untracked") + ")";
    std::string note = "residual after the tracker's high-pass and the measurement fit";
    if (p.tracking) note += "; untracked it would be " + fmt(100.0 * std::sqrt(gaussian_phase_evm_sq(pn.untracked_sq)), 2) + " %";
    pre.push_back(contribution(l, "phase_noise", name, gaussian_phase_evm_sq(pn_sigma_sq), note));
    if (l.phase_noise_mask) {
      p.notes.push_back("mask RMS phase over its span: " + fmt(l.phase_noise_mask->rms_phase_deg() *
                                                                   std::pow(10.0, l.phase_noise_mask_offset_db / 20.0), 3) +
                        " deg (held flat below the first and above the last offset up to fs/2)");
    }
  }
  // Residual frequency offset.
  if (l.cfo_hz != 0.0) {
    double evm_sq = 0.0;
    std::string note;
    if (p.tracking) {
      note = "removed by the second-order tracker (no steady-state phase error)";
      if (std::abs(l.cfo_hz) > l.tracker_bandwidth * l.symbol_rate_hz) {
        p.notes.push_back("the frequency offset exceeds the tracker bandwidth B_L Rs: lock relies on the known start");
      }
    } else if (l.measurement_removes_frequency) {
      note = "removed by the measurement's frequency fit";
    } else {
      const double f = l.cfo_hz / l.symbol_rate_hz, n = static_cast<double>(l.measurement_symbols);
      const double d = std::abs(std::sin(kPi * f) * n) < 1e-300 ? 1.0 : std::sin(kPi * f * n) / (n * std::sin(kPi * f));
      evm_sq = d == 0.0 ? kInf : 1.0 / (d * d) - 1.0;
      note = "phase ramp over a block of " + std::to_string(l.measurement_symbols) + " symbols after the gain fit";
    }
    pre.push_back(contribution(l, "frequency_offset", "frequency offset (" + format_number(l.cfo_hz) + " Hz)", evm_sq, note));
  }
  double pre_sq = 0.0;
  for (const auto& x : pre) pre_sq += (x.evm_pct / 100.0) * (x.evm_pct / 100.0);
  const double pn_evm_sq = has_pn ? gaussian_phase_evm_sq(pn_sigma_sq) : 0.0;

  // Signal levels in sim units. Phase noise keeps the power; the rest is in band.
  p.linear_gain = mu * amp.gain;
  p.received_power = std::norm(p.linear_gain) * (1.0 + pre_sq - pn_evm_sq);
  p.sample_power = (std::norm(mu) + std::norm(nu)) * amp.sample_power + std::norm(l.dc_offset) / sh.sps;
  const double snr = std::isfinite(p.es_n0_db) ? std::pow(10.0, p.es_n0_db / 10.0) : kInf;
  p.noise_variance = std::isfinite(snr) ? p.received_power / snr : 0.0;

  std::vector<EvmContribution> all;
  double awgn_sq = 0.0;
  if (std::isfinite(snr)) {
    awgn_sq = (1.0 + pre_sq) / snr;
    std::string name = "thermal noise (Es/N0 " + fmt(p.es_n0_db, 1) + " dB)";
    if (l.noise) {
      const double b = l.noise->noise_bandwidth_hz > 0.0 ? l.noise->noise_bandwidth_hz : l.symbol_rate_hz;
      const double snr_b = p.es_n0_db - 10.0 * std::log10(b / l.symbol_rate_hz);
      name = "thermal noise (NF " + fmt(l.noise->noise_figure_db, 1) + " dB at " + fmt(l.noise->signal_dbm, 1) +
             " dBm; Es/N0 " + fmt(p.es_n0_db, 1) + " dB)";
      p.notes.push_back("SNR in " + format_number(b) + " Hz: " + fmt(snr_b, 2) + " dB = signal - (-173.98 dBm/Hz + NF + 10 log10 B)");
    }
    all.push_back(contribution(l, "awgn", name, awgn_sq, "(1 + error power ahead of the noise) / SNR"));
  }
  all.insert(all.end(), pre.begin(), pre.end());

  // Tracker jitter from everything noise-like that reaches the phase detector.
  double jitter_sigma_sq = 0.0;
  double adc_sq = 0.0;
  if (l.adc_bits > 0) {
    const AdcResult adc = l.adc_gaussian_input
                              ? adc_noise_gaussian(l, sh, p.sample_power, p.noise_variance, p.linear_gain)
                              : adc_noise_shaped(l, sh, ref, p.sample_power, p.noise_variance, amp.evm_sq);
    double clip = adc.clip_sq + std::max(adc.noise_change_sq, 0.0);
    if (adc.noise_change_sq < 0.0 && !all.empty() && all.front().key == "awgn") {
      const double e = all.front().evm_pct / 100.0;
      all.front() = contribution(l, "awgn", all.front().name, std::max(e * e + adc.noise_change_sq, 0.0),
                                 all.front().note + "; less what the ADC's clipping compresses");
    }
    adc_sq = adc.quant_sq + clip;
    all.push_back(contribution(l, "adc_quantisation", "ADC quantisation (" + std::to_string(l.adc_bits) + " bits)",
                               adc.quant_sq, "D^2/12 per rail, white; processing gain of the matched filter"));
    all.push_back(contribution(l, "adc_clipping", "ADC clipping (loading " + fmt(l.adc_loading_db, 1) + " dB)", clip,
                               std::string(l.adc_gaussian_input ? "Gaussian input" : "shaped signal plus noise") +
                                   ", " + fmt(100.0 * adc.clip_probability, 3) + " % of rail samples clipped; in band"));
  }
  if (p.tracking) {
    const PhaseLoopGains gl = phase_loop_gains(l.tracker_bandwidth, kDamping, 2);
    double inv = 0.0;
    for (const auto& pt : c.points()) inv += 1.0 / std::norm(pt);
    inv /= c.order();
    const double detector = awgn_sq + pre_sq + adc_sq - pn_evm_sq;
    jitter_sigma_sq = 0.5 * detector * inv * loop_noise_gain(gl, l.tracker_bandwidth);
    all.push_back(contribution(l, "tracker_jitter", "phase tracker jitter (B_L T " + format_number(l.tracker_bandwidth) + ")",
                               gaussian_phase_evm_sq(jitter_sigma_sq),
                               "detector noise through the loop's noise bandwidth"));
  }
  // Composite.
  double total_sq = 0.0;
  for (const auto& x : all) total_sq += (x.evm_pct / 100.0) * (x.evm_pct / 100.0);
  p.total_pct = 100.0 * std::sqrt(total_sq);
  p.total_db = 20.0 * std::log10(std::sqrt(total_sq));
  for (std::size_t i = 0; i < all.size(); ++i) {
    const double e = all[i].evm_pct / 100.0;
    all[i].share = total_sq > 0.0 ? e * e / total_sq : 0.0;
    if (all[i].share > all[p.dominant].share) p.dominant = i;
  }
  p.contributions = std::move(all);
  p.rms_phase_deg = std::sqrt(pn_sigma_sq + jitter_sigma_sq) * 180.0 / kPi;
  if (l.carrier_frequency_hz > 0.0) p.rms_jitter_s = std::sqrt(pn_sigma_sq + jitter_sigma_sq) / (2.0 * kPi * l.carrier_frequency_hz);
  p.notes.push_back("contributions are treated as independent: composite = root-sum-square");
  if (p.tracking) {
    const double margin_deg = decision_rotation_margin_deg(c);
    if (p.rms_phase_deg > margin_deg / 3.0) {
      p.notes.push_back("residual RMS phase " + fmt(p.rms_phase_deg, 2) + " deg exceeds a third of the rotation (" +
                        fmt(margin_deg, 1) + " deg) that moves the outermost point across a decision boundary: a "
                        "decision-directed tracker is likely to slip, which this linear model does not include");
    }
  }
  if (std::isfinite(snr) && p.es_n0_db < 15.0) {
    p.notes.push_back("at this SNR decisions fail often: a decision-directed EVM would read lower and a "
                      "decision-directed tracker may slip (see docs/evm.md)");
  }
  return p;
}

// ---- simulation ------------------------------------------------------------------------------

EvmSimulationSetup evm_simulation_setup(const EvmLineup& l, const EvmPrediction& p) {
  EvmSimulationSetup s;
  LinkConfig& link = s.link;
  link.frame_symbols = l.measurement_symbols;
  link.pulse = l.pulse;
  auto& im = link.impairments;
  im.symbol_rate_hz = l.symbol_rate_hz;
  im.iq_gain_db = l.iq_gain_db;
  im.iq_phase_deg = l.iq_phase_deg;
  im.dc_offset = l.dc_offset;
  im.amplifier = l.amplifier;
  im.input_backoff_db = l.input_backoff_db;
  im.rapp_smoothness = l.rapp_smoothness;
  im.cfo_hz = l.cfo_hz;
  im.phase_deg = l.phase_deg;
  im.phase_noise_linewidth_hz = l.phase_noise_linewidth_hz;
  if (l.phase_noise_mask) {
    if (l.phase_noise_mask_offset_db == 0.0) {
      im.phase_noise_mask = l.phase_noise_mask;
    } else {
      std::vector<PhaseNoisePoint> pts(l.phase_noise_mask->points().begin(), l.phase_noise_mask->points().end());
      for (auto& pt : pts) pt.dbc_hz += l.phase_noise_mask_offset_db;
      im.phase_noise_mask = std::make_shared<const PhaseNoiseMask>(std::move(pts));
    }
  }
  im.adc_bits = l.adc_bits;
  im.tracker = l.tracker;
  im.tracker_bandwidth = l.tracker_bandwidth;
  im.pilot_period = l.pilot_period;
  // Noise so that the received signal has the line-up's SNR; the link's N0 is 10^(-Es/N0 / 10)
  // in sim units.
  const double es_n0 = std::isfinite(p.es_n0_db) ? p.es_n0_db - 10.0 * std::log10(p.received_power) : 150.0;
  const double n0 = db_to_linear(-es_n0);
  // The link sets the ADC full scale from the nominal per-sample power 1/sps plus noise.
  const double nominal = 1.0 / l.pulse.samples_per_symbol;
  im.adc_loading_db = l.adc_loading_db + 10.0 * std::log10((p.sample_power + n0) / (nominal + n0));
  s.point.modulation = l.modulation;
  s.point.es_n0_db = std::min(es_n0, 150.0);
  const double bits = Constellation::from_name(l.modulation).bits_per_symbol();
  s.point.eb_n0_db = s.point.es_n0_db - 10.0 * std::log10(bits);
  s.point.stream_key = point_stream_key(l.modulation, SnrKind::es_n0, s.point.es_n0_db);
  validate(link);
  return s;
}

EvmSimulation simulate_evm(const EvmLineup& l, std::uint64_t seed, std::uint64_t frames) {
  if (frames < 1 || frames > 100000) throw ConfigError("frames", std::to_string(frames), "1 to 100000");
  const EvmPrediction p = predict_evm(l);
  EvmSimulation sim;
  sim.setup = evm_simulation_setup(l, p);
  const SymbolCapture cap = capture_symbols(sim.setup.link, sim.setup.point, seed, frames);
  const Constellation c = Constellation::from_name(l.modulation);
  const std::size_t n = l.measurement_symbols;
  EvmOptions o;
  o.remove_frequency = l.measurement_removes_frequency;
  o.keep_error_vectors = false;
  double err = 0.0, ref = 0.0;
  for (std::uint64_t f = 0; f < frames; ++f) {
    const std::span<const cf32> r(cap.received.data() + f * n, n), s(cap.transmitted.data() + f * n, n);
    const EvmMeasurement m = measure_evm(r, s, c, o);
    err += m.error_power * static_cast<double>(n);
    ref += m.normalisation_power * static_cast<double>(n);
    sim.frame_rms_pct.push_back(m.rms_pct);
  }
  sim.frames = frames;
  sim.symbols = frames * n;
  sim.rms_pct = 100.0 * std::sqrt(err / ref);
  sim.rms_db = 20.0 * std::log10(sim.rms_pct / 100.0);
  return sim;
}

// ---- allowances ------------------------------------------------------------------------------

namespace {

// Bisection for the boundary where predicted(x) crosses target, predicted increasing in x when
// `increasing`. Returns the x on the passing side.
template <class F>
double bisect(F&& predicted, double lo, double hi, double target, bool increasing, double tol) {
  for (int it = 0; it < 200 && hi - lo > tol; ++it) {
    const double mid = 0.5 * (lo + hi);
    const bool pass = predicted(mid) <= target;
    if (pass == increasing) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return increasing ? lo : hi;
}

double irr_db_of(double gain_db, double phase_deg) {
  const double g = std::pow(10.0, gain_db / 20.0), ph = phase_deg * kPi / 180.0;
  const double num = 1.0 + 2.0 * g * std::cos(ph) + g * g, den = 1.0 - 2.0 * g * std::cos(ph) + g * g;
  return den <= 0.0 ? kInf : 10.0 * std::log10(num / den);
}

}  // namespace

EvmAllowance solve_evm_allowance(const EvmLineup& lineup, EvmAllowanceKind kind, double limit_pct, double margin_db) {
  require_range_open_low("limit", limit_pct, 0.0, 100.0);
  require_range("margin_db", margin_db, 0.0, 60.0);
  validate(lineup);
  EvmAllowance a;
  a.kind = kind;
  a.target_pct = limit_pct * std::pow(10.0, -margin_db / 20.0);
  const auto eval = [&](const EvmLineup& l) { return predict_evm(l).total_pct; };
  EvmLineup l = lineup;
  if (kind == EvmAllowanceKind::phase_noise) {
    if (lineup.phase_noise_mask) {
      a.quantity = "phase-noise mask offset";
      a.unit = "dB";
      const auto at = [&](double x) {
        EvmLineup t = lineup;
        t.phase_noise_mask_offset_db = x;
        return eval(t);
      };
      const double lo = -150.0, hi = 100.0;
      if (at(lo) > a.target_pct) {
        a.reason = "the other contributions alone exceed the target";
        return a;
      }
      a.value = at(hi) <= a.target_pct ? hi : bisect(at, lo, hi, a.target_pct, true, 1e-4);
      if (a.value == hi) a.reason = "meets the target up to the top of the searched range (+100 dB)";
      l.phase_noise_mask_offset_db = a.value;
      a.detail = "mask RMS phase " + fmt(lineup.phase_noise_mask->rms_phase_deg() * std::pow(10.0, a.value / 20.0), 3) +
                 " deg over the mask span";
    } else {
      a.quantity = "Wiener linewidth";
      a.unit = "Hz";
      const double fs = lineup.symbol_rate_hz * lineup.pulse.samples_per_symbol;
      const auto at = [&](double lg) {
        EvmLineup t = lineup;
        t.phase_noise_linewidth_hz = std::min(std::pow(10.0, lg), 0.1 * fs);
        return eval(t);
      };
      const double lo = std::log10(1e-9 * lineup.symbol_rate_hz), hi = std::log10(0.1 * fs);
      if (at(lo) > a.target_pct) {
        a.reason = "the other contributions alone exceed the target";
        return a;
      }
      const double x = at(hi) <= a.target_pct ? hi : bisect(at, lo, hi, a.target_pct, true, 1e-6);
      a.value = std::min(std::pow(10.0, x), 0.1 * fs);
      if (x == hi) a.reason = "meets the target up to the largest linewidth the link models (0.1 fs)";
      l.phase_noise_linewidth_hz = a.value;
      a.detail = "linewidth / symbol rate " + format_number(a.value / lineup.symbol_rate_hz);
    }
  } else if (kind == EvmAllowanceKind::iq_imbalance) {
    a.quantity = "image rejection ratio";
    a.unit = "dB";
    // Scale the line-up's (gain, phase) direction; phase only when it has none.
    double gd = lineup.iq_gain_db, pd = lineup.iq_phase_deg;
    if (gd == 0.0 && pd == 0.0) pd = 1.0;
    const double kmax = std::min(gd != 0.0 ? 10.0 / std::abs(gd) : kInf, pd != 0.0 ? 45.0 / std::abs(pd) : kInf);
    const auto at = [&](double k) {
      EvmLineup t = lineup;
      t.iq_gain_db = k * gd;
      t.iq_phase_deg = k * pd;
      return eval(t);
    };
    if (at(0.0) > a.target_pct) {
      a.reason = "the other contributions alone exceed the target";
      return a;
    }
    const double k = at(kmax) <= a.target_pct ? kmax : bisect(at, 0.0, kmax, a.target_pct, true, 1e-9 * kmax);
    l.iq_gain_db = k * gd;
    l.iq_phase_deg = k * pd;
    a.value = irr_db_of(l.iq_gain_db, l.iq_phase_deg);
    if (k == kmax) a.reason = "meets the target up to the largest imbalance the link models";
    a.detail = "gain " + fmt(l.iq_gain_db, 3) + " dB, phase " + fmt(l.iq_phase_deg, 3) + " deg";
  } else {
    if (lineup.amplifier == AmplifierKind::none) {
      throw ConfigError("solve", "backoff", "a line-up with an amplifier (saleh or rapp)");
    }
    a.quantity = "amplifier input back-off";
    a.unit = "dB";
    const auto at = [&](double ibo) {
      EvmLineup t = lineup;
      t.input_backoff_db = ibo;
      return eval(t);
    };
    const double lo = -20.0, hi = 40.0;
    if (at(hi) > a.target_pct) {
      a.reason = "the target is missed even at 40 dB back-off: other contributions dominate";
      return a;
    }
    a.value = at(lo) <= a.target_pct ? lo : bisect(at, lo, hi, a.target_pct, false, 1e-4);
    if (a.value == lo) a.reason = "meets the target down to the smallest back-off the link models (-20 dB)";
    l.input_backoff_db = a.value;
  }
  a.found = true;
  a.lineup = l;
  a.prediction = predict_evm(l);
  return a;
}

}  // namespace qamsight
