// information: Gauss-Hermite capacities, TOMS 748 thresholds, Monte Carlo GMI with intervals.
#include "qamsight/information.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <limits>
#include <map>
#include <mutex>
#include <numbers>
#include <string>

#include "qamsight/channel.hpp"

namespace qamsight {

namespace {

// Nodes whose weight (normalised to a total of 1) is below this are skipped: the integrand
// there is at most a few hundred bits, so the omission is below 1e-18 bit.
constexpr double kNodeWeightFloor = 1e-22;
// For each transmitted point, points whose exponent is below -kTermFloor at every kept node
// are left out of the sums; the term of the transmitted point itself is exp(0), so they change
// each logarithm by less than M e^-50 (< 1e-17 for M <= 4096).
constexpr double kTermFloor = 50.0;
constexpr unsigned kMaxPointsGeneral = 4096;  // beyond square QAM; cost grows as M^2

// A quadrature node for E[f(n)] with n = sqrt(N0) (ta + j tb); w sums to 1 over the rule.
struct Node {
  double ta, tb, w;
};

std::vector<Node> nodes_1d(unsigned n) {
  const GaussHermiteRule r = gauss_hermite_rule(n);
  const double norm = 1.0 / std::sqrt(std::numbers::pi);
  std::vector<Node> out;
  for (unsigned i = 0; i < n; ++i) {
    const double w = r.weights[i] * norm;
    if (w >= kNodeWeightFloor) out.push_back({r.nodes[i], 0.0, w});
  }
  return out;
}

std::vector<Node> nodes_2d(unsigned n) {
  const GaussHermiteRule r = gauss_hermite_rule(n);
  const double norm = 1.0 / std::numbers::pi;
  std::vector<Node> out;
  for (unsigned a = 0; a < n; ++a)
    for (unsigned b = 0; b < n; ++b) {
      const double w = r.weights[a] * r.weights[b] * norm;
      if (w >= kNodeWeightFloor) out.push_back({r.nodes[a], r.nodes[b], w});
    }
  return out;
}

struct Losses {
  double cm = 0.0;    // (1/M) sum_j E[log2 sum_l exp(m_l)], bits
  double bicm = 0.0;  // (1/M) sum_j sum_i E[log2 (sum_all / sum_same_i)], bits
};

// The expectations of the header comment for points pts with labels labels (nbits bits),
// transmitted point uniform, noise n = sqrt(N0) t over the given nodes. In one dimension the
// points and the nodes are real (tb = 0, imaginary parts 0).
Losses quadrature_losses(std::span<const cf64> pts, std::span<const std::uint32_t> labels,
                         unsigned nbits, const std::vector<Node>& nodes, double n0) {
  const std::size_t M = pts.size();
  const double s = 1.0 / std::sqrt(n0);
  double r_t = 0.0;
  for (const Node& q : nodes) r_t = std::max(r_t, std::hypot(q.ta, q.tb));
  // Exponent -(|e|^2 + 2 Re(e conj t)) <= -|e| (|e| - 2 |t|): below -kTermFloor at every node
  // once |e| exceeds this radius (e = (x_j - x_l) / sqrt(N0)).
  const double e_cut = r_t + std::sqrt(r_t * r_t + kTermFloor);

  struct Neighbour {
    double er, ei;
    std::uint32_t diff;  // label bits that differ from the transmitted point's
  };
  std::vector<Neighbour> nb;
  nb.reserve(M);
  std::vector<double> e(M);
  double cm_total = 0.0, bicm_total = 0.0;
  for (std::size_t j = 0; j < M; ++j) {
    nb.clear();
    for (std::size_t l = 0; l < M; ++l) {
      const cf64 d = (pts[j] - pts[l]) * s;
      if (std::abs(d) <= e_cut) nb.push_back({d.real(), d.imag(), labels[j] ^ labels[l]});
    }
    const std::size_t n = nb.size();  // includes j itself (e = 0, diff = 0)
    double cm_j = 0.0, bicm_j = 0.0;
    for (const Node& q : nodes) {
      double m_max = -std::numeric_limits<double>::infinity();
      std::size_t arg = 0;
      for (std::size_t i = 0; i < n; ++i) {
        const double m = -(nb[i].er * nb[i].er + nb[i].ei * nb[i].ei) - 2.0 * (nb[i].er * q.ta + nb[i].ei * q.tb);
        e[i] = m;
        if (m > m_max) {
          m_max = m;
          arg = i;
        }
      }
      // Sums of exp(m - m_max) without the largest term (which is 1), so that log1p keeps
      // the small losses of high SNR exact. m_max <= |t|^2 <= ~52 at the kept nodes, so the
      // transmitted point's own term exp(-m_max) never underflows.
      double other = 0.0;
      std::array<double, 32> same{};
      for (std::size_t i = 0; i < n; ++i) {
        if (i == arg) continue;
        const double v = std::exp(e[i] - m_max);
        other += v;
        const std::uint32_t diff = nb[i].diff;
        for (unsigned b = 0; b < nbits; ++b)
          if (!((diff >> b) & 1u)) same[b] += v;
      }
      const double ln_all = std::log1p(other);  // ln sum_all - m_max
      cm_j += q.w * (m_max + ln_all);
      double bt = 0.0;
      const std::uint32_t arg_diff = nb[arg].diff;
      for (unsigned b = 0; b < nbits; ++b) {
        const double ln_same = ((arg_diff >> b) & 1u) ? std::log(same[b]) : std::log1p(same[b]);
        bt += ln_all - ln_same;
      }
      bicm_j += q.w * bt;
    }
    cm_total += cm_j;
    bicm_total += bicm_j;
  }
  const double to_bits = 1.0 / (static_cast<double>(M) * std::numbers::ln2);
  return {cm_total * to_bits, bicm_total * to_bits};
}

bool on_real_axis(const Constellation& c) {
  for (const cf64& p : c.points())
    if (p.imag() != 0.0) return false;
  return true;
}

// Quadrature rules by dimension and node count, built once each (Golub-Welsch is O(n^3)) and
// kept for the life of the program; the map's nodes never move, so references stay valid.
const std::vector<Node>& cached_nodes(unsigned dims, unsigned n) {
  static std::mutex mutex;
  static std::map<std::pair<unsigned, unsigned>, std::vector<Node>> cache;
  const std::lock_guard<std::mutex> lock(mutex);
  auto it = cache.find({dims, n});
  if (it == cache.end()) it = cache.emplace(std::make_pair(dims, n), dims == 1 ? nodes_1d(n) : nodes_2d(n)).first;
  return it->second;
}

void check_size(const Constellation& c) {
  if (c.family() != ConstellationFamily::square_qam && c.order() > kMaxPointsGeneral) {
    throw ConfigError("constellation", c.name() + " (" + std::to_string(c.order()) + " points)",
                      "square QAM or at most 4096 points");
  }
}

// Rates without the public SNR range check (the threshold search may look below -100 dB).
InformationRates rates_impl(const Constellation& c, double es_n0_db, unsigned n1, unsigned n2) {
  check_size(c);
  const double n0 = c.average_energy() / db_to_linear(es_n0_db);
  const unsigned k = c.bits_per_symbol();
  auto clamp_rate = [](double v, double hi) { return std::clamp(v, 0.0, hi); };
  if (c.family() == ConstellationFamily::square_qam) {
    // Gray PAM of one axis: levels ascending, level l labelled gray(l).
    const unsigned L = c.levels_per_axis(), h = k / 2;
    std::vector<cf64> lev(L);
    std::vector<std::uint32_t> lab(L);
    for (unsigned l = 0; l < L; ++l) {
      lev[l] = cf64((2.0 * l - (L - 1.0)) * c.qam_half_spacing(), 0.0);
      lab[l] = gray_encode(l);
    }
    const Losses loss = quadrature_losses(lev, lab, h, cached_nodes(1, n1), n0);
    return {clamp_rate(2.0 * (h - loss.cm), k), clamp_rate(2.0 * (h - loss.bicm), k)};
  }
  std::vector<std::uint32_t> lab(c.order());
  for (unsigned l = 0; l < c.order(); ++l) lab[l] = l;  // points()[label]
  const bool real_axis = on_real_axis(c);
  const Losses loss = quadrature_losses(c.points(), lab, k, real_axis ? cached_nodes(1, n1) : cached_nodes(2, n2), n0);
  return {clamp_rate(k - loss.cm, k), clamp_rate(k - loss.bicm, k)};
}

InformationRates rates_default(const Constellation& c, double es_n0_db) {
  return rates_impl(c, es_n0_db, gauss_hermite_nodes_1d, gauss_hermite_nodes_2d);
}

double threshold(const Constellation& c, double rate, bool bicm) {
  const unsigned k = c.bits_per_symbol();
  if (!(rate > 0.0 && rate < static_cast<double>(k))) {
    throw ConfigError("rate_bits_per_symbol", format_number(rate),
                      "strictly between 0 and " + std::to_string(k) + " (bits per symbol of " + c.name() + ")");
  }
  check_size(c);
  auto f = [&](double db) {
    const InformationRates r = rates_default(c, db);
    return (bicm ? r.bicm : r.cm) - rate;
  };
  // Both capacities are below Shannon's log2(1 + SNR), so the rate needs at least
  // 10 log10(2^R - 1); rounding may put the capacity a hair above there, hence the step down.
  double lo = linear_to_db(std::expm1(rate * std::numbers::ln2));
  double flo = f(lo);
  while (flo > 0.0 && lo > -300.0) {
    lo -= 1.0;
    flo = f(lo);
  }
  if (flo == 0.0) return lo;
  double step = 2.0, hi = lo + step;
  double fhi = f(hi);
  while (fhi < 0.0) {
    lo = hi;
    flo = fhi;
    step *= 2.0;
    hi = std::min(hi + step, 400.0);
    fhi = f(hi);
    if (hi >= 400.0 && fhi < 0.0) return std::numeric_limits<double>::infinity();
  }
  if (fhi == 0.0) return hi;
  std::uintmax_t iterations = 200;
  const auto tol = [](double a, double b) { return std::abs(b - a) <= 1e-10; };
  const auto root = boost::math::tools::toms748_solve(f, lo, hi, flo, fhi, tol, iterations);
  return 0.5 * (root.first + root.second);
}

}  // namespace

GaussHermiteRule gauss_hermite_rule(unsigned n) {
  if (n < 1 || n > 1000) throw ConfigError("gauss-hermite nodes", std::to_string(n), "1 to 1000");
  // Jacobi matrix of the Hermite polynomials (weight e^-t^2): zero diagonal, off-diagonal
  // sqrt(k/2); nodes are its eigenvalues, weights mu0 v_0^2 with mu0 = int e^-t^2 = sqrt(pi).
  Eigen::VectorXd diag = Eigen::VectorXd::Zero(n);
  Eigen::VectorXd sub(n > 1 ? n - 1 : 0);
  for (unsigned i = 1; i < n; ++i) sub[i - 1] = std::sqrt(0.5 * i);
  GaussHermiteRule rule;
  rule.nodes.resize(n);
  rule.weights.resize(n);
  if (n == 1) {
    rule.nodes[0] = 0.0;
    rule.weights[0] = std::sqrt(std::numbers::pi);
    return rule;
  }
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver;
  solver.computeFromTridiagonal(diag, sub, Eigen::ComputeEigenvectors);
  const Eigen::VectorXd& ev = solver.eigenvalues();  // ascending
  const Eigen::MatrixXd& vec = solver.eigenvectors();
  for (unsigned i = 0; i < n; ++i) {
    rule.nodes[i] = ev[i];
    rule.weights[i] = std::sqrt(std::numbers::pi) * vec(0, i) * vec(0, i);
  }
  return rule;
}

InformationRates information_rates(const Constellation& c, double es_n0_db) {
  require_range("es_n0_db", es_n0_db, -100.0, 400.0);
  return rates_default(c, es_n0_db);
}

double cm_capacity(const Constellation& c, double es_n0_db) { return information_rates(c, es_n0_db).cm; }
double bicm_capacity(const Constellation& c, double es_n0_db) {
  return information_rates(c, es_n0_db).bicm;
}

double bicm_threshold_es_n0_db(const Constellation& c, double rate_bits_per_symbol) {
  return threshold(c, rate_bits_per_symbol, true);
}
double cm_threshold_es_n0_db(const Constellation& c, double rate_bits_per_symbol) {
  return threshold(c, rate_bits_per_symbol, false);
}

namespace detail {
InformationRates information_rates_with_nodes(const Constellation& c, double es_n0_db, unsigned nodes_1d,
                                              unsigned nodes_2d) {
  require_range("es_n0_db", es_n0_db, -100.0, 400.0);
  if (nodes_1d < 1 || nodes_1d > 1000 || nodes_2d < 1 || nodes_2d > 1000) {
    throw ConfigError("gauss-hermite nodes", std::to_string(nodes_1d) + ", " + std::to_string(nodes_2d), "1 to 1000");
  }
  return rates_impl(c, es_n0_db, nodes_1d, nodes_2d);
}
}  // namespace detail

// ---------------------------------------------------------------------------------------------
// GMI
// ---------------------------------------------------------------------------------------------

GmiAccumulator::GmiAccumulator(unsigned bits_per_symbol) : bits_(bits_per_symbol) {
  if (bits_per_symbol < 1 || bits_per_symbol > 32) {
    throw ConfigError("bits_per_symbol", std::to_string(bits_per_symbol), "1 to 32");
  }
}

void GmiAccumulator::add(std::span<const float> llr, std::span<const std::uint8_t> bits) noexcept {
  QAMSIGHT_ASSERT(llr.size() == bits.size(), "LLR and bit counts differ");
  QAMSIGHT_ASSERT(llr.size() % bits_ == 0, "LLR count is not a multiple of bits per symbol");
  const std::size_t n = llr.size() / bits_;
  const double k = bits_;
  for (std::size_t s = 0; s < n; ++s) {
    // g = k - sum_i log2(1 + exp(x_i)), x_i = -(1 - 2 b_i) L_i, with the stable softplus
    // log(1 + e^x) = max(x, 0) + log1p(e^-|x|).
    double nats = 0.0;
    for (unsigned i = 0; i < bits_; ++i) {
      const double L = llr[s * bits_ + i];
      const double x = (bits[s * bits_ + i] & 1u) ? L : -L;
      nats += std::max(x, 0.0) + std::log1p(std::exp(-std::abs(x)));
    }
    const double g = k - nats / std::numbers::ln2;
    ++count_;
    const double delta = g - mean_;
    mean_ += delta / static_cast<double>(count_);
    m2_ += delta * (g - mean_);
  }
}

GmiAccumulator& GmiAccumulator::operator+=(const GmiAccumulator& o) noexcept {
  QAMSIGHT_ASSERT(o.bits_ == bits_, "merging GMI accumulators of different bits per symbol");
  if (o.count_ == 0) return *this;
  if (count_ == 0) {
    count_ = o.count_;
    mean_ = o.mean_;
    m2_ = o.m2_;
    return *this;
  }
  const double na = static_cast<double>(count_), nb = static_cast<double>(o.count_);
  const double n = na + nb;
  const double delta = o.mean_ - mean_;
  mean_ += delta * nb / n;
  m2_ += o.m2_ + delta * delta * na * nb / n;
  count_ += o.count_;
  return *this;
}

GmiEstimate GmiAccumulator::estimate(double confidence) const {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    throw ConfigError("confidence", format_number(confidence), "strictly between 0 and 1");
  }
  GmiEstimate e;
  e.symbols = count_;
  e.confidence = confidence;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  e.value = count_ == 0 ? nan : mean_;
  if (count_ < 2) {
    e.low = e.high = e.standard_error = nan;
    return e;
  }
  const double n = static_cast<double>(count_);
  e.standard_error = std::sqrt(m2_ / (n - 1.0) / n);
  const double z = boost::math::quantile(boost::math::normal_distribution<double>(), 0.5 + 0.5 * confidence);
  e.low = mean_ - z * e.standard_error;
  e.high = mean_ + z * e.standard_error;
  return e;
}

GmiEstimate gmi_monte_carlo(const Constellation& c, double es_n0_db, std::uint64_t symbols, std::uint64_t seed,
                            LlrMethod method, double confidence) {
  if (symbols < 2) throw ConfigError("symbols", std::to_string(symbols), "at least 2");
  if (!(confidence > 0.0 && confidence < 1.0)) {
    throw ConfigError("confidence", format_number(confidence), "strictly between 0 and 1");
  }
  const AwgnChannel channel(AwgnConfig{es_n0_db, c.average_energy()});
  const LlrDemapper demapper(c, method);
  const unsigned k = c.bits_per_symbol();
  GmiAccumulator acc(k);
  constexpr std::size_t kChunk = 4096;
  constexpr unsigned kSegmentShift = 24;  // symbols per random stream: 2^24 (a multiple of kChunk)
  std::vector<std::uint32_t> labels(kChunk);
  std::vector<cf32> x(kChunk), y(kChunk);
  std::vector<float> llr(kChunk * k);
  std::vector<std::uint8_t> bits(kChunk * k);
  std::uint64_t done = 0;
  while (done < symbols) {
    const std::uint64_t segment = done >> kSegmentShift;
    RandomStream payload(seed, gmi_stream_base + segment, Substream::payload);
    RandomStream noise(seed, gmi_stream_base + segment, Substream::awgn);
    const std::uint64_t segment_end = std::min(symbols, (segment + 1) << kSegmentShift);
    while (done < segment_end) {
      const std::size_t m = static_cast<std::size_t>(std::min<std::uint64_t>(kChunk, segment_end - done));
      payload.fill_labels(std::span(labels.data(), m), k);
      c.map_labels(std::span<const std::uint32_t>(labels.data(), m), std::span(x.data(), m));
      channel.process(noise, std::span<const cf32>(x.data(), m), std::span(y.data(), m));
      demapper.process(std::span<const cf32>(y.data(), m), channel.noise_variance(), std::span(llr.data(), m * k));
      c.labels_to_bits(std::span<const std::uint32_t>(labels.data(), m), std::span(bits.data(), m * k));
      acc.add(std::span<const float>(llr.data(), m * k), std::span<const std::uint8_t>(bits.data(), m * k));
      done += m;
    }
  }
  return acc.estimate(confidence);
}

}  // namespace qamsight
