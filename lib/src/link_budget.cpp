// link_budget: spherical-Earth geometry, circular passes, free-space loss, noise and the budget.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>

#include "qamsight/link.hpp"

namespace qamsight {

namespace {

constexpr double kDegree = std::numbers::pi / 180.0;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

void require_elevation(double elevation_deg) { require_range("elevation_deg", elevation_deg, 0.0, 90.0); }
void require_altitude(double altitude_km) {
  // Up to about the Moon's distance: the formulas hold for any circular orbit.
  require_range_open_low("altitude_km", altitude_km, 0.0, 1.0e6);
}

double clamp_unit(double x) { return std::clamp(x, -1.0, 1.0); }

}  // namespace

double boltzmann_dbw_per_k_hz() noexcept { return 10.0 * std::log10(kBoltzmannJPerK); }

// ---------------------------------------------------------------------------------------------
// Geometry
// ---------------------------------------------------------------------------------------------

double slant_range_km(double elevation_deg, double altitude_km) {
  require_elevation(elevation_deg);
  require_altitude(altitude_km);
  const double e = elevation_deg * kDegree;
  const double r = kEarthRadiusKm + altitude_km;
  const double rc = kEarthRadiusKm * std::cos(e);
  // Written as (r - Re cos E)(r + Re cos E) so the difference of squares keeps its digits.
  return std::sqrt((r - rc) * (r + rc)) - kEarthRadiusKm * std::sin(e);
}

double earth_central_angle_deg(double elevation_deg, double altitude_km) {
  require_elevation(elevation_deg);
  require_altitude(altitude_km);
  const double e = elevation_deg * kDegree;
  const double r = kEarthRadiusKm + altitude_km;
  return (std::acos(clamp_unit(kEarthRadiusKm * std::cos(e) / r)) - e) / kDegree;
}

double nadir_angle_deg(double elevation_deg, double altitude_km) {
  require_elevation(elevation_deg);
  require_altitude(altitude_km);
  const double r = kEarthRadiusKm + altitude_km;
  return std::asin(clamp_unit(kEarthRadiusKm * std::cos(elevation_deg * kDegree) / r)) / kDegree;
}

double elevation_from_central_angle_deg(double central_angle_deg, double altitude_km) {
  require_range("central_angle_deg", central_angle_deg, 0.0, 180.0);
  require_altitude(altitude_km);
  const double g = central_angle_deg * kDegree;
  const double ratio = kEarthRadiusKm / (kEarthRadiusKm + altitude_km);
  return std::atan2(std::cos(g) - ratio, std::sin(g)) / kDegree;
}

double propagation_delay_s(double distance_m) {
  require_range("distance_m", distance_m, 0.0, 1.0e13);
  return distance_m / kSpeedOfLightMPerS;
}

double orbital_angular_rate_rad_per_s(double altitude_km) {
  require_altitude(altitude_km);
  const double r = kEarthRadiusKm + altitude_km;
  return std::sqrt(kEarthGravitationalParameterKm3PerS2 / (r * r * r));
}

double orbital_period_s(double altitude_km) {
  return 2.0 * std::numbers::pi / orbital_angular_rate_rad_per_s(altitude_km);
}

double overhead_pass_range_rate_m_s(double elevation_deg, double altitude_km) {
  const double gamma = earth_central_angle_deg(elevation_deg, altitude_km) * kDegree;
  const double d = slant_range_km(elevation_deg, altitude_km);
  const double r = kEarthRadiusKm + altitude_km;
  const double omega = orbital_angular_rate_rad_per_s(altitude_km);
  return 1000.0 * kEarthRadiusKm * r * omega * std::sin(gamma) / d;
}

double doppler_shift_hz(double carrier_hz, double range_rate_m_s) {
  return -carrier_hz * range_rate_m_s / kSpeedOfLightMPerS;
}

// ---------------------------------------------------------------------------------------------
// Circular pass
// ---------------------------------------------------------------------------------------------

CircularPass::CircularPass(double altitude_km, double max_elevation_deg)
    : altitude_km_(altitude_km), max_elevation_deg_(max_elevation_deg) {
  require_altitude(altitude_km);
  require_range_open_low("max_elevation_deg", max_elevation_deg, 0.0, 90.0);
  orbit_radius_km_ = kEarthRadiusKm + altitude_km;
  omega_ = orbital_angular_rate_rad_per_s(altitude_km);
  gamma0_ = earth_central_angle_deg(max_elevation_deg, altitude_km) * kDegree;
}

double CircularPass::period_s() const noexcept { return 2.0 * std::numbers::pi / omega_; }

PassState CircularPass::at_time(double time_s) const noexcept {
  PassState s;
  s.time_s = time_s;
  const double wt = omega_ * time_s;
  const double cos_gamma = clamp_unit(std::cos(gamma0_) * std::cos(wt));
  const double gamma = std::acos(cos_gamma);
  const double re = kEarthRadiusKm, r = orbit_radius_km_;
  const double d = std::sqrt(std::max(0.0, re * re + r * r - 2.0 * re * r * cos_gamma));
  s.central_angle_deg = gamma / kDegree;
  s.elevation_deg = std::atan2(cos_gamma - re / r, std::sin(gamma)) / kDegree;
  s.slant_range_km = d;
  s.range_rate_m_s = 1000.0 * re * r * omega_ * std::cos(gamma0_) * std::sin(wt) / d;
  s.delay_s = 1000.0 * d / kSpeedOfLightMPerS;
  return s;
}

double CircularPass::time_at_elevation_s(double elevation_deg, PassHalf half) const {
  require_range("elevation_deg", elevation_deg, 0.0, max_elevation_deg_);
  const double gamma = earth_central_angle_deg(elevation_deg, altitude_km_) * kDegree;
  const double wt = std::acos(clamp_unit(std::cos(gamma) / std::cos(gamma0_)));
  return (half == PassHalf::rising ? -wt : wt) / omega_;
}

PassState CircularPass::at_elevation(double elevation_deg, PassHalf half) const {
  PassState s = at_time(time_at_elevation_s(elevation_deg, half));
  s.elevation_deg = elevation_deg;  // exact, not the round trip through the time
  return s;
}

double CircularPass::duration_above_s(double min_elevation_deg) const {
  require_range("min_elevation_deg", min_elevation_deg, 0.0, 90.0);
  if (min_elevation_deg > max_elevation_deg_) return 0.0;
  return 2.0 * time_at_elevation_s(min_elevation_deg, PassHalf::setting);
}

// ---------------------------------------------------------------------------------------------
// Path loss and noise
// ---------------------------------------------------------------------------------------------

double free_space_loss_constant_mhz_km_db() noexcept {
  return 20.0 * std::log10(4.0 * std::numbers::pi * 1.0e9 / kSpeedOfLightMPerS);
}

double free_space_loss_constant_ghz_km_db() noexcept {
  return 20.0 * std::log10(4.0 * std::numbers::pi * 1.0e12 / kSpeedOfLightMPerS);
}

double free_space_path_loss_db(double frequency_hz, double distance_m) {
  require_range_open_low("frequency_hz", frequency_hz, 0.0, 1.0e15);
  require_range_open_low("distance_m", distance_m, 0.0, 1.0e13);
  return 20.0 * std::log10(4.0 * std::numbers::pi * distance_m * frequency_hz / kSpeedOfLightMPerS);
}

double free_space_path_loss_db_mhz_km(double frequency_mhz, double distance_km) {
  require_range_open_low("frequency_mhz", frequency_mhz, 0.0, 1.0e9);
  require_range_open_low("distance_km", distance_km, 0.0, 1.0e10);
  return free_space_loss_constant_mhz_km_db() + 20.0 * std::log10(frequency_mhz) +
         20.0 * std::log10(distance_km);
}

double noise_temperature_from_figure_k(double noise_figure_db) {
  require_range("noise_figure_db", noise_figure_db, 0.0, 40.0);
  return kReferenceNoiseTemperatureK * (db_to_linear(noise_figure_db) - 1.0);
}

double system_noise_temperature_k(double antenna_temperature_k, double noise_figure_db) {
  require_range("antenna_temperature_k", antenna_temperature_k, 0.0, 1.0e5);
  return antenna_temperature_k + noise_temperature_from_figure_k(noise_figure_db);
}

double g_over_t_db_k(double antenna_gain_dbi, double system_temperature_k) {
  require_range_open_low("system_temperature_k", system_temperature_k, 0.0, 1.0e6);
  return antenna_gain_dbi - linear_to_db(system_temperature_k);
}

double carrier_to_noise_density_dbhz(double eirp_dbw, double total_losses_db, double g_over_t_db_k) {
  return eirp_dbw - total_losses_db + g_over_t_db_k - boltzmann_dbw_per_k_hz();
}

double es_n0_db_from_c_n0(double c_over_n0_dbhz, double symbol_rate_bd) {
  require_range_open_low("symbol_rate_bd", symbol_rate_bd, 0.0, 1.0e13);
  return c_over_n0_dbhz - linear_to_db(symbol_rate_bd);
}

double occupied_bandwidth_hz(double symbol_rate_bd, double roll_off) {
  require_range_open_low("symbol_rate_bd", symbol_rate_bd, 0.0, 1.0e13);
  require_range("roll_off", roll_off, 0.0, 1.0);
  return symbol_rate_bd * (1.0 + roll_off);
}

double shannon_min_es_n0_db(double spectral_efficiency) {
  require_range_open_low("spectral_efficiency", spectral_efficiency, 0.0, 64.0);
  return linear_to_db(std::expm1(spectral_efficiency * std::numbers::ln2));
}

// ---------------------------------------------------------------------------------------------
// Budget
// ---------------------------------------------------------------------------------------------

namespace {

/// Scan angle of an antenna on `platform` toward the other end.
double scan_angle_deg(Platform platform, double elevation_deg, double altitude_km) {
  return platform == Platform::ground ? zenith_facing_scan_deg(elevation_deg)
                                      : nadir_angle_deg(elevation_deg, altitude_km);
}

struct AntennaLook {
  double broadside_dbi = kNaN;
  double scan_deg = kNaN;
  double scan_loss_db = kNaN;
  double gain_dbi = kNaN;
  std::string unavailable;  // reason, empty when usable
};

AntennaLook look(const AntennaSpec& a, double scan_deg, const char* end) {
  AntennaLook l;
  l.broadside_dbi = a.broadside_gain_dbi();
  if (!a.is_array()) {
    l.gain_dbi = l.broadside_dbi;
    return l;
  }
  l.scan_deg = scan_deg;
  l.gain_dbi = a.gain_at_scan_dbi(scan_deg);
  l.scan_loss_db = l.broadside_dbi - l.gain_dbi;
  if (std::isfinite(a.max_scan_deg) && scan_deg > a.max_scan_deg + 1e-9) {
    l.unavailable = std::string(end) + " array would scan to " +
                    format_number(std::round(scan_deg * 100) / 100) + " deg, beyond its max_scan_deg " +
                    format_number(a.max_scan_deg);
  } else if (!std::isfinite(l.gain_dbi)) {
    l.unavailable = std::string(end) + " array has no gain at a scan angle of " +
                    format_number(std::round(scan_deg * 100) / 100) + " deg";
  }
  return l;
}

}  // namespace

LinkBudget compute_budget(const LinkScenario& s, double elevation_deg) {
  require_elevation(elevation_deg);
  require_altitude(s.altitude_km);
  require_range_open_low("frequency_hz", s.frequency_hz, 0.0, 1.0e15);
  require_range_open_low("symbol_rate_bd", s.symbol_rate_bd, 0.0, 1.0e13);
  require_range("roll_off", s.roll_off, 0.0, 1.0);

  LinkBudget b;
  b.elevation_deg = elevation_deg;
  b.frequency_hz = s.frequency_hz;
  b.wavelength_m = kSpeedOfLightMPerS / s.frequency_hz;
  b.slant_range_km = slant_range_km(elevation_deg, s.altitude_km);
  b.central_angle_deg = earth_central_angle_deg(elevation_deg, s.altitude_km);
  b.nadir_angle_deg = nadir_angle_deg(elevation_deg, s.altitude_km);
  b.delay_s = propagation_delay_s(1000.0 * b.slant_range_km);
  if (elevation_deg <= s.max_elevation_deg) {
    const CircularPass pass(s.altitude_km, s.max_elevation_deg);
    b.range_rate_m_s = pass.at_elevation(elevation_deg, PassHalf::rising).range_rate_m_s;
  } else {
    b.range_rate_m_s = kNaN;
  }
  b.doppler_hz = doppler_shift_hz(s.frequency_hz, b.range_rate_m_s);

  std::vector<std::string> unavailable;

  // Transmitter.
  const TransmitterSpec& tx = s.transmitter;
  b.tx_feeder_loss_db = tx.feeder_loss_db;
  if (tx.eirp_dbw) {
    b.eirp_dbw = *tx.eirp_dbw;
  } else {
    if (!tx.antenna) {
      throw ConfigError("transmitter.antenna", "missing", "an antenna when eirp_dbw is not given");
    }
    const AntennaLook l =
        look(*tx.antenna, scan_angle_deg(tx.platform, elevation_deg, s.altitude_km), "transmit");
    if (!l.unavailable.empty()) unavailable.push_back(l.unavailable);
    b.tx_broadside_gain_dbi = l.broadside_dbi;
    b.tx_scan_deg = l.scan_deg;
    b.tx_scan_loss_db = l.scan_loss_db;
    b.tx_antenna_gain_dbi = l.gain_dbi;
    if (tx.power_dbw) {
      b.tx_power_dbw = *tx.power_dbw;
      b.eirp_dbw = *tx.power_dbw - tx.feeder_loss_db + l.gain_dbi;
    } else if (tx.element_power_dbw) {
      const std::size_t n = tx.antenna->element_count();
      if (n == 0) {
        throw ConfigError("transmitter.element_power_dbw", format_number(*tx.element_power_dbw),
                          "only with an array antenna");
      }
      b.tx_element_power_dbw = *tx.element_power_dbw;
      b.tx_elements = static_cast<double>(n);
      b.tx_power_dbw = *tx.element_power_dbw + linear_to_db(static_cast<double>(n));
      b.eirp_dbw = array_eirp_dbw(*tx.element_power_dbw, n, l.gain_dbi) - tx.feeder_loss_db;
    } else {
      throw ConfigError("transmitter", "no power", "one of eirp_dbw, power_dbw, element_power_dbw");
    }
  }

  // Path.
  b.free_space_loss_db = free_space_path_loss_db(s.frequency_hz, 1000.0 * b.slant_range_km);
  const double cosec =
      s.losses.scaling == LossScaling::cosecant ? 1.0 / std::sin(elevation_deg * kDegree) : 1.0;
  b.atmospheric_loss_db = s.losses.atmospheric_db * cosec;
  b.rain_loss_db = s.losses.rain_db * cosec;
  if (!std::isfinite(cosec)) unavailable.push_back("cosecant loss scaling is infinite at 0 deg elevation");
  b.pointing_loss_db = s.losses.pointing_db;
  b.polarisation_loss_db = s.losses.polarisation_db;
  b.other_loss_db = s.losses.other_db;
  b.rx_feeder_loss_db = s.receiver.feeder_loss_db;
  b.total_loss_db = b.free_space_loss_db + b.atmospheric_loss_db + b.rain_loss_db + b.pointing_loss_db +
                    b.polarisation_loss_db + b.other_loss_db + b.rx_feeder_loss_db;

  // Receiver.
  const ReceiverSpec& rx = s.receiver;
  if (rx.g_over_t_db_k) {
    b.g_over_t_db_k = *rx.g_over_t_db_k;
    b.system_temperature_k = rx.system_temperature_k.value_or(kNaN);
  } else {
    if (!rx.antenna) {
      throw ConfigError("receiver.antenna", "missing", "an antenna when g_over_t_db_k is not given");
    }
    const AntennaLook l =
        look(*rx.antenna, scan_angle_deg(rx.platform, elevation_deg, s.altitude_km), "receive");
    if (!l.unavailable.empty()) unavailable.push_back(l.unavailable);
    b.rx_broadside_gain_dbi = l.broadside_dbi;
    b.rx_scan_deg = l.scan_deg;
    b.rx_scan_loss_db = l.scan_loss_db;
    b.rx_antenna_gain_dbi = l.gain_dbi;
    if (rx.system_temperature_k) {
      b.system_temperature_k = *rx.system_temperature_k;
    } else if (rx.antenna_temperature_k && rx.noise_figure_db) {
      b.system_temperature_k = system_noise_temperature_k(*rx.antenna_temperature_k, *rx.noise_figure_db);
    } else {
      throw ConfigError("receiver", "no noise temperature",
                        "g_over_t_db_k, system_temperature_k, or antenna_temperature_k with "
                        "noise_figure_db");
    }
    b.g_over_t_db_k = g_over_t_db_k(l.gain_dbi, b.system_temperature_k);
  }

  b.boltzmann_dbw_per_k_hz = boltzmann_dbw_per_k_hz();
  b.symbol_rate_bd = s.symbol_rate_bd;
  b.occupied_bandwidth_hz = occupied_bandwidth_hz(s.symbol_rate_bd, s.roll_off);
  if (unavailable.empty()) {
    b.c_over_n0_dbhz = carrier_to_noise_density_dbhz(b.eirp_dbw, b.total_loss_db, b.g_over_t_db_k);
    b.es_n0_db = es_n0_db_from_c_n0(b.c_over_n0_dbhz, s.symbol_rate_bd);
    b.c_over_n_db = b.c_over_n0_dbhz - linear_to_db(b.occupied_bandwidth_hz);
  } else {
    b.available = false;
    for (std::size_t i = 0; i < unavailable.size(); ++i) {
      b.unavailable_reason += (i ? "; " : "") + unavailable[i];
    }
    b.c_over_n0_dbhz = b.es_n0_db = b.c_over_n_db = -std::numeric_limits<double>::infinity();
  }
  return b;
}

std::vector<BudgetLine> LinkBudget::lines() const {
  std::vector<BudgetLine> out;
  auto add = [&](const char* key, const std::string& label, double v, const char* unit) {
    if (!std::isnan(v)) out.push_back({key, label, v, unit});
  };
  add("elevation_deg", "elevation", elevation_deg, "deg");
  add("slant_range_km", "slant range", slant_range_km, "km");
  add("delay_ms", "one-way delay", 1000.0 * delay_s, "ms");
  add("range_rate_m_s", "range rate (rising half)", range_rate_m_s, "m/s");
  add("doppler_khz", "Doppler at the carrier (rising half)", doppler_hz / 1000.0, "kHz");
  add("frequency_ghz", "carrier frequency", frequency_hz / 1e9, "GHz");
  add("tx_element_power_dbw", "transmit power per element", tx_element_power_dbw, "dBW");
  add("tx_elements", "transmit elements", tx_elements, "");
  add("tx_power_dbw", "transmit power", tx_power_dbw, "dBW");
  add("tx_feeder_loss_db", "transmit feeder loss", tx_feeder_loss_db, "dB");
  add("tx_broadside_gain_dbi", "transmit antenna gain, broadside", tx_broadside_gain_dbi, "dBi");
  add("tx_scan_deg", "transmit scan angle", tx_scan_deg, "deg");
  add("tx_scan_loss_db", "transmit scan loss", tx_scan_loss_db, "dB");
  add("tx_antenna_gain_dbi", "transmit antenna gain toward the link", tx_antenna_gain_dbi, "dBi");
  add("eirp_dbw", "EIRP", eirp_dbw, "dBW");
  add("free_space_loss_db", "free-space path loss (ITU-R P.525)", free_space_loss_db, "dB");
  add("atmospheric_loss_db", "atmospheric loss", atmospheric_loss_db, "dB");
  add("rain_loss_db", "rain loss", rain_loss_db, "dB");
  add("pointing_loss_db", "pointing loss", pointing_loss_db, "dB");
  add("polarisation_loss_db", "polarisation loss", polarisation_loss_db, "dB");
  add("other_loss_db", "other losses", other_loss_db, "dB");
  add("rx_feeder_loss_db", "receive feeder loss", rx_feeder_loss_db, "dB");
  add("total_loss_db", "total losses", total_loss_db, "dB");
  add("rx_broadside_gain_dbi", "receive antenna gain, broadside", rx_broadside_gain_dbi, "dBi");
  add("rx_scan_deg", "receive scan angle", rx_scan_deg, "deg");
  add("rx_scan_loss_db", "receive scan loss", rx_scan_loss_db, "dB");
  add("rx_antenna_gain_dbi", "receive antenna gain toward the link", rx_antenna_gain_dbi, "dBi");
  add("system_temperature_k", "system noise temperature", system_temperature_k, "K");
  add("g_over_t_db_k", "G/T", g_over_t_db_k, "dB/K");
  add("boltzmann_dbw_per_k_hz", "Boltzmann constant", boltzmann_dbw_per_k_hz, "dBW/K/Hz");
  add("c_over_n0_dbhz", "C/N0", c_over_n0_dbhz, "dBHz");
  add("symbol_rate_dbhz", "symbol rate 10 log10(Rs)", linear_to_db(symbol_rate_bd), "dBHz");
  add("es_n0_db", "Es/N0", es_n0_db, "dB");
  add("occupied_bandwidth_mhz", "occupied bandwidth Rs(1 + roll-off)", occupied_bandwidth_hz / 1e6, "MHz");
  add("c_over_n_db", "C/N in the occupied bandwidth", c_over_n_db, "dB");
  return out;
}

// ---------------------------------------------------------------------------------------------
// Analysis
// ---------------------------------------------------------------------------------------------

const char* const kTransmitPowerCaution =
    "Caution: transmit power and EIRP figures are for analysis only; operating a transmitter "
    "requires a licence and compliance with local RF-exposure and spectrum regulations.";

namespace {

std::string fixed2(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  return buf;
}

/// One line describing an array antenna's model (and, for lattices, its side lobes at broadside
/// and at the widest scan the analysis needs).
void array_note(const AntennaSpec& a, const char* end, double worst_scan_deg, std::vector<std::string>& out) {
  if (a.kind == AntennaKind::scan_loss_array) {
    out.push_back(std::string(end) + " array: " + std::to_string(a.elements) + " elements of " +
                  format_number(a.element_gain_dbi) + " dBi, broadside gain " +
                  fixed2(a.broadside_gain_dbi()) + " dBi, scan loss cos^" +
                  format_number(a.scan_loss_exponent) + " (common practice)");
    return;
  }
  if (a.kind != AntennaKind::lattice_array || !a.lattice) return;
  const PlanarArray& p = *a.lattice;
  const auto& c = p.config();
  const double scan = std::min(worst_scan_deg, std::isfinite(a.max_scan_deg) ? a.max_scan_deg : 90.0);
  std::string line = std::string(end) + " array: " + std::to_string(c.columns) + " x " +
                     std::to_string(c.rows) +
                     (c.lattice == ArrayLattice::triangular ? " triangular" : " rectangular") + " lattice, " +
                     format_number(std::round(p.column_spacing_wavelengths() * 1000) / 1000) + " x " +
                     format_number(std::round(p.row_spacing_wavelengths() * 1000) / 1000) +
                     " wavelengths, cos^" + format_number(c.element_pattern_exponent) +
                     " elements; directivity " + fixed2(p.directivity_dbi(0.0, a.scan_azimuth_deg)) +
                     " dBi at broadside (aperture " + fixed2(p.aperture_directivity_dbi()) + " dBi)";
  if (p.element_count() > 1) {
    auto lobe = [&](double at) {
      const SideLobe l = p.highest_side_lobe(at, a.scan_azimuth_deg);
      return fixed2(l.level_db) + " dB" + (l.grating_lobe ? " (a grating lobe)" : "");
    };
    line += ", highest side lobe " + lobe(0.0);
    if (scan > 0.0 && scan < 90.0) {
      line += "; at " + format_number(std::round(scan * 10) / 10) + " deg scan " + lobe(scan);
    }
  }
  out.push_back(line);
}

void array_warnings(const AntennaSpec& a, const char* end, double worst_scan_deg,
                    std::vector<std::string>& out) {
  if (a.kind != AntennaKind::lattice_array || !a.lattice) return;
  const double limit =
      std::isfinite(a.max_scan_deg) ? std::min(a.max_scan_deg, worst_scan_deg) : worst_scan_deg;
  const double free_scan = a.lattice->grating_lobe_free_scan_deg();
  if (std::isnan(free_scan)) {
    out.push_back(std::string(end) + " array: a grating lobe is visible even at broadside; the " +
                  "element spacing is too wide");
  } else if (limit > free_scan + 1e-9) {
    out.push_back(std::string(end) + " array: grating lobes enter visible space beyond " +
                  format_number(std::round(free_scan * 10) / 10) + " deg of scan, and the pass " + "needs " +
                  format_number(std::round(limit * 10) / 10) +
                  " deg; reduce the element spacing or the scan range");
  }
}

}  // namespace

LinkAnalysis analyse_link(const LinkScenario& s, std::optional<double> reference_elevation_deg) {
  LinkAnalysis a;
  std::optional<double> ref = reference_elevation_deg ? reference_elevation_deg : s.reference_elevation_deg;
  if (!ref && !s.pass_elevations_deg.empty()) {
    ref = *std::min_element(s.pass_elevations_deg.begin(), s.pass_elevations_deg.end());
  }
  if (!ref) throw ConfigError("elevation_deg", "missing", "a reference elevation or a pass");
  require_range("elevation_deg", *ref, 0.0, 90.0);

  a.reference = compute_budget(s, *ref);
  a.reference_choice = select_modcod(s.modcods, a.reference.es_n0_db, s.symbol_rate_bd,
                                     s.implementation_margin_db, s.required_margin_db);
  for (double e : s.pass_elevations_deg) {
    PassPoint p;
    p.budget = compute_budget(s, e);
    p.choice = select_modcod(s.modcods, p.budget.es_n0_db, s.symbol_rate_bd, s.implementation_margin_db,
                             s.required_margin_db);
    a.pass.push_back(std::move(p));
  }

  // Grating lobes over the scan range the pass (and the reference point) needs.
  double lowest = *ref;
  for (double e : s.pass_elevations_deg) lowest = std::min(lowest, e);
  auto worst_scan = [&](Platform p) {
    return p == Platform::ground ? zenith_facing_scan_deg(lowest) : nadir_angle_deg(lowest, s.altitude_km);
  };
  if (s.transmitter.antenna && !s.transmitter.eirp_dbw) {
    array_note(*s.transmitter.antenna, "transmit", worst_scan(s.transmitter.platform), a.notes);
  }
  if (s.receiver.antenna && !s.receiver.g_over_t_db_k) {
    array_note(*s.receiver.antenna, "receive", worst_scan(s.receiver.platform), a.notes);
  }
  if (s.transmitter.antenna && !s.transmitter.eirp_dbw) {
    array_warnings(*s.transmitter.antenna, "transmit", worst_scan(s.transmitter.platform), a.warnings);
  }
  if (s.receiver.antenna && !s.receiver.g_over_t_db_k) {
    array_warnings(*s.receiver.antenna, "receive", worst_scan(s.receiver.platform), a.warnings);
  }
  std::size_t unavailable = 0;
  const LinkBudget* first = nullptr;
  for (const auto& p : a.pass) {
    if (p.budget.available) continue;
    ++unavailable;
    if (!first) first = &p.budget;
  }
  if (first) {
    a.warnings.push_back(std::to_string(unavailable) + " of " + std::to_string(a.pass.size()) +
                         " pass elevations have no link (at " + format_number(first->elevation_deg) +
                         " deg: " + first->unavailable_reason + ")");
  }
  if (s.transmitter.power_dbw || s.transmitter.element_power_dbw) {
    a.cautions.push_back(kTransmitPowerCaution);
  }
  return a;
}

}  // namespace qamsight
