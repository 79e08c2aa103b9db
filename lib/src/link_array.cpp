// link_array: phased-array gain (element-count model with cos^k scan loss, and the planar-lattice
// pattern model with numerically integrated directivity, side lobes and grating lobes).
#include <algorithm>
#include <array>
#include <boost/math/special_functions/bessel.hpp>
#include <cmath>
#include <complex>
#include <cstdint>
#include <numbers>
#include <utility>
#include <vector>

#include "qamsight/link.hpp"

namespace qamsight {

namespace {

constexpr double kDegree = std::numbers::pi / 180.0;
constexpr double kTwoPi = 2.0 * std::numbers::pi;

/// cos of an angle in degrees, exactly 0 at 90 (so a cos^k model is exactly zero at the horizon).
double cos_deg(double deg) { return deg >= 90.0 ? 0.0 : std::cos(deg * kDegree); }

/// I(a) = integral over the front half-space of cos^q(theta) exp(j a sin(theta) cos(phi)) dOmega,
/// the radiated-power kernel of two elements k |Delta| = a apart. Projecting the half-space onto
/// the unit disk (dOmega = du dv / cos theta) and integrating across the offset leaves
/// B(1/2, (q+1)/2) int_{-1}^{1} (1 - u^2)^{q/2} cos(a u) du, which Poisson's integral for J_nu
/// turns into
///   I(a) = pi Gamma(nu) (2/a)^nu J_nu(a),  nu = (q + 1)/2,  I(0) = 2 pi / (q + 1)
/// (q = 0: 2 pi sin(a)/a; q = 1: 2 pi J1(a)/a).
double offset_integral(double a, double q) {
  const double nu = 0.5 * (q + 1.0);
  if (a < 1e-6) return 2.0 * std::numbers::pi / (q + 1.0) * (1.0 - a * a / (4.0 * (nu + 1.0)));
  return std::numbers::pi * std::tgamma(nu) * std::pow(2.0 / a, nu) * boost::math::cyl_bessel_j(nu, a);
}

/// Number of odd integers in [lo, hi] (lo, hi >= 0).
long odd_count(long lo, long hi) { return hi < lo ? 0 : (hi + 1) / 2 - lo / 2; }

}  // namespace

// ---------------------------------------------------------------------------------------------
// Element-count model
// ---------------------------------------------------------------------------------------------

double array_gain_dbi(std::size_t elements, double element_gain_dbi) {
  if (elements == 0) throw ConfigError("elements", "0", "at least 1");
  return element_gain_dbi + linear_to_db(static_cast<double>(elements));
}

double cosine_scan_loss_db(double scan_deg, double exponent) {
  require_range("scan_deg", scan_deg, 0.0, 90.0);
  require_range("scan_loss_exponent", exponent, 0.0, 10.0);
  if (exponent == 0.0) return 0.0;
  const double c = cos_deg(scan_deg);
  return c == 0.0 ? std::numeric_limits<double>::infinity() : -exponent * linear_to_db(c);
}

double array_eirp_dbw(double element_power_dbw, std::size_t elements, double array_gain_dbi) {
  if (elements == 0) throw ConfigError("elements", "0", "at least 1");
  return element_power_dbw + linear_to_db(static_cast<double>(elements)) + array_gain_dbi;
}

double zenith_facing_scan_deg(double elevation_deg) {
  require_range("elevation_deg", elevation_deg, 0.0, 90.0);
  return 90.0 - elevation_deg;
}

// ---------------------------------------------------------------------------------------------
// Planar lattice model
// ---------------------------------------------------------------------------------------------

PlanarArray::PlanarArray(PlanarArrayConfig config) : config_(config) {
  if (config.columns < 1 || config.columns > 16384) {
    throw ConfigError("columns", std::to_string(config.columns), "1 to 16384");
  }
  if (config.rows < 1 || config.rows > 16384) {
    throw ConfigError("rows", std::to_string(config.rows), "1 to 16384");
  }
  if (std::size_t{config.columns} * config.rows > 16384) {
    throw ConfigError("elements", std::to_string(std::size_t{config.columns} * config.rows),
                      "columns x rows at most 16384");
  }
  triangular_ = config.lattice == ArrayLattice::triangular;
  if (triangular_ && (config.columns < 2 || config.rows < 2)) {
    throw ConfigError("lattice", "triangular",
                      "at least 2 columns and 2 rows (a single line is a rectangular lattice)");
  }
  require_range_open_low("column_spacing_wavelengths", config.column_spacing_wavelengths, 0.0, 10.0);
  require_range("row_spacing_wavelengths", config.row_spacing_wavelengths, 0.0, 10.0);
  require_range("element_pattern_exponent", config.element_pattern_exponent, 0.0, 20.0);
  nx_ = config.columns;
  ny_ = config.rows;
  dx_ = config.column_spacing_wavelengths;
  dy_ = config.row_spacing_wavelengths > 0.0 ? config.row_spacing_wavelengths
                                             : (triangular_ ? dx_ * std::sqrt(3.0) / 2.0 : dx_);
  const double q = config.element_pattern_exponent;

  // Co-array: offsets in units of (dx/2, dy) between all ordered element pairs and their counts.
  // Rows j1, j2 = j1 - dj contribute column offsets 2 di + s, s = parity(j1) - parity(j2) on a
  // triangular lattice, each (nx - |di|) times; the row pairs are counted in closed form.
  const long nx = nx_, ny = ny_;
  const long xw = 4 * nx - 1;  // half-unit offsets -(2nx-1) .. 2nx-1
  std::vector<double> count(static_cast<std::size_t>(xw * (2 * ny - 1)), 0.0);
  auto at = [&](long x2, long dj) -> double& {
    return count[static_cast<std::size_t>((dj + ny - 1) * xw + (x2 + 2 * nx - 1))];
  };
  for (long dj = -(ny - 1); dj <= ny - 1; ++dj) {
    const long lo = std::max(0L, dj), hi = std::min(ny - 1, ny - 1 + dj);  // range of j1
    const long pairs = hi - lo + 1;
    // (pairs with s = +1, s = 0, s = -1)
    long plus = 0, minus = 0, zero = pairs;
    if (triangular_ && (std::abs(dj) % 2 == 1)) {
      plus = odd_count(lo, hi);  // j1 odd, j2 = j1 - dj even
      minus = pairs - plus;
      zero = 0;
    }
    for (long di = -(nx - 1); di <= nx - 1; ++di) {
      const double c = static_cast<double>(nx - std::abs(di));
      if (zero) at(2 * di, dj) += c * static_cast<double>(zero);
      if (plus) at(2 * di + 1, dj) += c * static_cast<double>(plus);
      if (minus) at(2 * di - 1, dj) += c * static_cast<double>(minus);
    }
  }
  // I(|Delta|) once per distinct (|x2|, |dj|); +-Delta folded into one term of double weight.
  std::vector<double> integral(static_cast<std::size_t>(2 * nx * ny),
                               std::numeric_limits<double>::quiet_NaN());
  auto integral_at = [&](long ax2, long adj) {
    double& v = integral[static_cast<std::size_t>(adj * 2 * nx + ax2)];
    if (std::isnan(v)) {
      const double rho = std::hypot(0.5 * dx_ * static_cast<double>(ax2), dy_ * static_cast<double>(adj));
      v = offset_integral(kTwoPi * rho, q);
    }
    return v;
  };
  zero_offset_weight_ = static_cast<double>(element_count()) * integral_at(0, 0);
  for (long dj = 0; dj <= ny - 1; ++dj) {
    for (long x2 = dj == 0 ? 1 : -(2 * nx - 1); x2 <= 2 * nx - 1; ++x2) {
      const double c = at(x2, dj);
      if (c == 0.0) continue;
      offsets_.push_back({0.5 * dx_ * static_cast<double>(x2), dy_ * static_cast<double>(dj),
                          2.0 * c * integral_at(std::abs(x2), dj)});
    }
  }
}

std::vector<std::array<double, 2>> PlanarArray::element_positions_wavelengths() const {
  std::vector<std::array<double, 2>> p;
  p.reserve(element_count());
  double mx = 0.0, my = 0.0;
  for (unsigned j = 0; j < ny_; ++j) {
    for (unsigned i = 0; i < nx_; ++i) {
      const double x = (i + (triangular_ && (j % 2 == 1) ? 0.5 : 0.0)) * dx_;
      const double y = j * dy_;
      p.push_back({x, y});
      mx += x;
      my += y;
    }
  }
  mx /= static_cast<double>(p.size());
  my /= static_cast<double>(p.size());
  for (auto& e : p) e = {e[0] - mx, e[1] - my};
  return p;
}

double PlanarArray::element_factor(double cos_theta) const noexcept {
  if (cos_theta < 0.0) return 0.0;
  const double q = config_.element_pattern_exponent;
  return q == 0.0 ? 1.0 : std::pow(cos_theta, q);
}

double PlanarArray::radiated_integral(double ux, double uy) const noexcept {
  double sum = zero_offset_weight_;
  for (const auto& o : offsets_) sum += o.weight * std::cos(kTwoPi * (o.x * ux + o.y * uy));
  return sum;
}

std::complex<double> PlanarArray::array_factor(double u, double v, double u0, double v0) const noexcept {
  // Separable: sum over rows of exp(j k y (v - v0)) times the row sum along x; odd rows of a
  // triangular lattice carry the extra half-column phase.
  const double pu = kTwoPi * dx_ * (u - u0), pv = kTwoPi * dy_ * (v - v0);
  std::complex<double> ax = 0.0, even = 0.0, odd = 0.0;
  for (unsigned i = 0; i < nx_; ++i) ax += std::polar(1.0, pu * i);
  for (unsigned j = 0; j < ny_; ++j) (j % 2 == 1 && triangular_ ? odd : even) += std::polar(1.0, pv * j);
  return ax * (even + std::polar(1.0, 0.5 * pu) * odd);
}

double PlanarArray::relative_power_pattern(double theta_deg, double phi_deg, double scan_deg,
                                           double scan_azimuth_deg) const noexcept {
  const double st = std::sin(theta_deg * kDegree), s0 = std::sin(scan_deg * kDegree);
  const double u = st * std::cos(phi_deg * kDegree), v = st * std::sin(phi_deg * kDegree);
  const double u0 = s0 * std::cos(scan_azimuth_deg * kDegree);
  const double v0 = s0 * std::sin(scan_azimuth_deg * kDegree);
  const double n = static_cast<double>(element_count());
  return std::norm(array_factor(u, v, u0, v0)) / (n * n) * element_factor(cos_deg(theta_deg));
}

double PlanarArray::directivity_toward_dbi(double theta_deg, double phi_deg, double scan_deg,
                                           double scan_azimuth_deg) const {
  require_range("theta_deg", theta_deg, 0.0, 90.0);
  require_range("scan_deg", scan_deg, 0.0, 90.0);
  const double s0 = std::sin(scan_deg * kDegree);
  const double n = static_cast<double>(element_count());
  const double radiated =
      radiated_integral(s0 * std::cos(scan_azimuth_deg * kDegree), s0 * std::sin(scan_azimuth_deg * kDegree));
  const double p = relative_power_pattern(theta_deg, phi_deg, scan_deg, scan_azimuth_deg) * n * n;
  return linear_to_db(4.0 * std::numbers::pi * p / radiated);
}

double PlanarArray::directivity_dbi(double scan_deg, double scan_azimuth_deg) const {
  require_range("scan_deg", scan_deg, 0.0, 90.0);
  const double s0 = std::sin(scan_deg * kDegree);
  const double n = static_cast<double>(element_count());
  const double radiated =
      radiated_integral(s0 * std::cos(scan_azimuth_deg * kDegree), s0 * std::sin(scan_azimuth_deg * kDegree));
  return linear_to_db(4.0 * std::numbers::pi * n * n * element_factor(cos_deg(scan_deg)) / radiated);
}

double PlanarArray::scan_loss_db(double scan_deg, double scan_azimuth_deg) const {
  return directivity_dbi(0.0, scan_azimuth_deg) - directivity_dbi(scan_deg, scan_azimuth_deg);
}

double PlanarArray::aperture_directivity_dbi() const noexcept {
  return linear_to_db(4.0 * std::numbers::pi * static_cast<double>(element_count()) * dx_ * dy_);
}

std::vector<std::array<double, 2>> PlanarArray::reciprocal_vectors() const {
  // Nonzero reciprocal-lattice vectors (units of 1/lambda) with small indices. A single row
  // (or column) is periodic along one axis only.
  std::vector<std::array<double, 2>> out;
  const std::array<double, 2> b1 = {1.0 / dx_, triangular_ ? -0.5 / dy_ : 0.0};
  const std::array<double, 2> b2 = {0.0, 1.0 / dy_};
  const int mmax = nx_ > 1 ? 4 : 0, nmax = ny_ > 1 ? 4 : 0;
  for (int m = -mmax; m <= mmax; ++m) {
    for (int n = -nmax; n <= nmax; ++n) {
      if (m == 0 && n == 0) continue;
      out.push_back({m * b1[0] + n * b2[0], m * b1[1] + n * b2[1]});
    }
  }
  return out;
}

double PlanarArray::grating_lobe_free_scan_deg() const noexcept {
  const auto b = reciprocal_vectors();
  if (b.empty()) return 90.0;  // a single element
  double shortest = std::numeric_limits<double>::infinity();
  for (const auto& v : b) shortest = std::min(shortest, std::hypot(v[0], v[1]));
  if (shortest <= 1.0) return std::numeric_limits<double>::quiet_NaN();
  if (shortest >= 2.0) return 90.0;
  return std::asin(shortest - 1.0) / kDegree;
}

bool PlanarArray::grating_lobe_visible(double scan_deg, double scan_azimuth_deg) const noexcept {
  const double s0 = std::sin(scan_deg * kDegree);
  const double u0 = s0 * std::cos(scan_azimuth_deg * kDegree);
  const double v0 = s0 * std::sin(scan_azimuth_deg * kDegree);
  for (const auto& b : reciprocal_vectors()) {
    if (std::hypot(u0 + b[0], v0 + b[1]) < 1.0) return true;
  }
  return false;
}

SideLobe PlanarArray::highest_side_lobe(double scan_deg, double scan_azimuth_deg) const {
  require_range("scan_deg", scan_deg, 0.0, 90.0);
  const double s0 = std::sin(scan_deg * kDegree);
  const double u0 = s0 * std::cos(scan_azimuth_deg * kDegree);
  const double v0 = s0 * std::sin(scan_azimuth_deg * kDegree);
  const double n2 = static_cast<double>(element_count()) * static_cast<double>(element_count());
  auto pattern = [&](double u, double v) {
    const double r2 = u * u + v * v;
    if (r2 > 1.0) return -1.0;  // invisible
    return std::norm(array_factor(u, v, u0, v0)) / n2 * element_factor(std::sqrt(1.0 - r2));
  };

  // Grid over the visible disk, at least six points per side-lobe width 1/(n d) on each axis.
  auto points = [](double extent) {
    return static_cast<int>(std::clamp(std::ceil(12.0 * extent) + 1.0, 101.0, 8193.0));
  };
  const int nu = points(nx_ * dx_), nv = points(ny_ * dy_);
  const double du = 2.0 / (nu - 1), dv = 2.0 / (nv - 1);
  std::vector<double> grid(static_cast<std::size_t>(nu) * nv);
  {
    // Separable evaluation: per-u column sums and per-v row sums, combined per point.
    std::vector<std::complex<double>> ax(nu), half(nu), even(nv), odd(nv);
    for (int a = 0; a < nu; ++a) {
      const double pu = kTwoPi * dx_ * (-1.0 + a * du - u0);
      std::complex<double> s = 0.0;
      for (unsigned i = 0; i < nx_; ++i) s += std::polar(1.0, pu * i);
      ax[a] = s;
      half[a] = std::polar(1.0, 0.5 * pu);
    }
    for (int b = 0; b < nv; ++b) {
      const double pv = kTwoPi * dy_ * (-1.0 + b * dv - v0);
      std::complex<double> e = 0.0, o = 0.0;
      for (unsigned j = 0; j < ny_; ++j) (j % 2 == 1 && triangular_ ? o : e) += std::polar(1.0, pv * j);
      even[b] = e;
      odd[b] = o;
    }
    for (int b = 0; b < nv; ++b) {
      const double v = -1.0 + b * dv;
      for (int a = 0; a < nu; ++a) {
        const double u = -1.0 + a * du;
        const double r2 = u * u + v * v;
        grid[static_cast<std::size_t>(b) * nu + a] =
            r2 > 1.0
                ? -1.0
                : std::norm(ax[a] * (even[b] + half[a] * odd[b])) / n2 * element_factor(std::sqrt(1.0 - r2));
      }
    }
  }
  auto value = [&](int a, int b) { return grid[static_cast<std::size_t>(b) * nu + a]; };
  auto inside = [&](int a, int b) { return a >= 0 && b >= 0 && a < nu && b < nv && value(a, b) >= 0.0; };

  // Start at the grid point nearest the steering direction (inside the disk) and climb.
  int a0 = std::clamp(static_cast<int>(std::lround((u0 + 1.0) / du)), 0, nu - 1);
  int b0 = std::clamp(static_cast<int>(std::lround((v0 + 1.0) / dv)), 0, nv - 1);
  while (!inside(a0, b0)) {  // only at a horizon scan: step toward the centre
    a0 += a0 < nu / 2 ? 1 : (a0 > nu / 2 ? -1 : 0);
    b0 += b0 < nv / 2 ? 1 : (b0 > nv / 2 ? -1 : 0);
  }
  for (bool moved = true; moved;) {
    moved = false;
    int ba = a0, bb = b0;
    for (int db = -1; db <= 1; ++db)
      for (int da = -1; da <= 1; ++da)
        if (inside(a0 + da, b0 + db) && value(a0 + da, b0 + db) > value(ba, bb)) ba = a0 + da, bb = b0 + db;
    if (ba != a0 || bb != b0) a0 = ba, b0 = bb, moved = true;
  }
  // Main lobe: everything reached from the peak by never-rising steps (8-neighbour flood).
  std::vector<std::uint8_t> in_main(grid.size(), 0);
  std::vector<std::pair<int, int>> stack{{a0, b0}};
  in_main[static_cast<std::size_t>(b0) * nu + a0] = 1;
  while (!stack.empty()) {
    const auto [a, b] = stack.back();
    stack.pop_back();
    const double here = value(a, b) * (1.0 + 1e-12);
    for (int db = -1; db <= 1; ++db) {
      for (int da = -1; da <= 1; ++da) {
        const int na = a + da, nb = b + db;
        if (!inside(na, nb)) continue;
        auto& m = in_main[static_cast<std::size_t>(nb) * nu + na];
        if (!m && value(na, nb) <= here) {
          m = 1;
          stack.push_back({na, nb});
        }
      }
    }
  }
  // Candidates: grid local maxima outside the main lobe, highest first.
  std::vector<std::pair<double, std::pair<int, int>>> cand;
  for (int b = 0; b < nv; ++b) {
    for (int a = 0; a < nu; ++a) {
      if (in_main[static_cast<std::size_t>(b) * nu + a] || !inside(a, b)) continue;
      const double here = value(a, b);
      bool peak = true;
      for (int db = -1; db <= 1 && peak; ++db)
        for (int da = -1; da <= 1 && peak; ++da)
          if ((da || db) && inside(a + da, b + db) && value(a + da, b + db) > here) peak = false;
      if (peak) cand.push_back({here, {a, b}});
    }
  }
  std::sort(cand.begin(), cand.end(), [](const auto& x, const auto& y) { return x.first > y.first; });

  // Local refinement by compass search in (u, v), steps halving from half a grid cell, kept
  // within one cell of the grid point (the true peak of a finely sampled lobe lies there).
  auto refine = [&](double u_start, double v_start) {
    double u = u_start, v = v_start, best = pattern(u, v);
    double hu = 0.5 * du, hv = 0.5 * dv;
    while (hu > 1e-9 * du) {
      bool improved = false;
      for (const auto& [eu, ev] : {std::pair{1.0, 0.0}, {-1.0, 0.0}, {0.0, 1.0}, {0.0, -1.0}}) {
        const double nu_ = u + hu * eu, nv_ = v + hv * ev;
        if (std::abs(nu_ - u_start) > du || std::abs(nv_ - v_start) > dv) continue;
        const double p = pattern(nu_, nv_);
        if (p > best) best = p, u = nu_, v = nv_, improved = true;
      }
      if (!improved) hu *= 0.5, hv *= 0.5;
    }
    return std::array<double, 3>{best, u, v};
  };
  const auto peak = refine(-1.0 + a0 * du, -1.0 + b0 * dv);
  SideLobe out;
  out.level_db = -std::numeric_limits<double>::infinity();
  const std::size_t tries = std::min<std::size_t>(cand.size(), 6);
  for (std::size_t i = 0; i < tries; ++i) {
    const auto [a, b] = cand[i].second;
    const auto r = refine(-1.0 + a * du, -1.0 + b * dv);
    const double level = linear_to_db(r[0] / peak[0]);
    if (level > out.level_db) {
      out.level_db = level;
      const double st = std::min(1.0, std::hypot(r[1], r[2]));
      out.theta_deg = std::asin(st) / kDegree;
      out.phi_deg = std::atan2(r[2], r[1]) / kDegree;
      // An image of the main beam keeps the array factor near its peak N.
      out.grating_lobe = std::norm(array_factor(r[1], r[2], u0, v0)) / n2 > 0.5;
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Antennas of a scenario
// ---------------------------------------------------------------------------------------------

std::size_t AntennaSpec::element_count() const noexcept {
  switch (kind) {
    case AntennaKind::scan_loss_array:
      return elements;
    case AntennaKind::lattice_array:
      return lattice ? lattice->element_count() : 0;
    case AntennaKind::fixed:
      break;
  }
  return 0;
}

double AntennaSpec::broadside_gain_dbi() const {
  switch (kind) {
    case AntennaKind::scan_loss_array:
      return array_gain_dbi(elements, element_gain_dbi) - array_loss_db;
    case AntennaKind::lattice_array:
      if (!lattice) throw ConfigError("antenna.lattice", "missing", "a PlanarArray");
      return lattice->directivity_dbi(0.0, scan_azimuth_deg) - array_loss_db;
    case AntennaKind::fixed:
      break;
  }
  return gain_dbi;
}

double AntennaSpec::gain_at_scan_dbi(double scan_deg) const {
  switch (kind) {
    case AntennaKind::scan_loss_array:
      return broadside_gain_dbi() - cosine_scan_loss_db(scan_deg, scan_loss_exponent);
    case AntennaKind::lattice_array:
      if (!lattice) throw ConfigError("antenna.lattice", "missing", "a PlanarArray");
      return lattice->directivity_dbi(scan_deg, scan_azimuth_deg) - array_loss_db;
    case AntennaKind::fixed:
      break;
  }
  return gain_dbi;
}

AntennaSpec AntennaSpec::lattice_array(const PlanarArrayConfig& config) {
  AntennaSpec a;
  a.kind = AntennaKind::lattice_array;
  a.lattice = std::make_shared<const PlanarArray>(config);
  return a;
}

}  // namespace qamsight
