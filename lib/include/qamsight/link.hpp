// link: satellite link geometry, path loss, noise, phased-array gain, budgets and MODCOD choice.
#pragma once

#include <array>
#include <complex>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/sim.hpp"

// The link module answers "which MODCOD gives the most throughput with the required margin, and
// how does that change over a pass?". It is built from plain structs and pure functions for the
// budget pieces, one class for the phased-array model (PlanarArray, which plans its numerical
// integrals once), one for MODCOD tables, and a scenario (LinkScenario, read from TOML; schema in
// docs/link-scenario.md) that ties them together.
//
// Models and conventions, stated once:
// - Earth: a sphere of radius kEarthRadiusKm (the WGS-84 equatorial radius), not rotating.
//   Orbits are circular. Elevation is seen from the ground end of the link.
// - Decibels are 10 log10 of power ratios. Losses are positive numbers of dB.
// - C/N0 = EIRP - losses + G/T - 10 log10 k;  Es/N0 = C/N0 - 10 log10(Rs);  the occupied
//   bandwidth is Rs (1 + roll-off); Eb/N0 = Es/N0 - 10 log10(eta), eta = information bits per
//   symbol (the MODCOD's spectral efficiency). Throughput = Rs eta.
// - Doppler is first order: f_D = -f_c (dr/dt) / c, positive while the range shrinks.
// All functions are pure and thread-safe; PlanarArray and ModcodTable are immutable after
// construction.
namespace qamsight {

/// Speed of light in vacuum, m/s (exact, SI).
inline constexpr double kSpeedOfLightMPerS = 299'792'458.0;
/// Earth radius of the spherical-Earth model, km (WGS-84 equatorial radius).
inline constexpr double kEarthRadiusKm = 6378.137;
/// Earth's gravitational parameter GM, km^3/s^2 (WGS-84 / EGM96 value, atmosphere included).
inline constexpr double kEarthGravitationalParameterKm3PerS2 = 398'600.4418;
/// Boltzmann constant, J/K (exact since the 2019 SI redefinition).
inline constexpr double kBoltzmannJPerK = 1.380649e-23;
/// Reference temperature T0 of the noise-figure definition, K.
inline constexpr double kReferenceNoiseTemperatureK = 290.0;

/// 10 log10(k) = -228.5992 dBW/K/Hz.
double boltzmann_dbw_per_k_hz() noexcept;

// ---------------------------------------------------------------------------------------------
// Geometry over a spherical Earth
// ---------------------------------------------------------------------------------------------

/// Distance from a ground station to a satellite at `altitude_km` seen at `elevation_deg`
/// (law of cosines; Pratt & Bostian, Satellite Communications, sec. 2):
///   d = sqrt((Re + h)^2 - Re^2 cos^2 E) - Re sin E.
/// ConfigError unless 0 <= elevation <= 90 and altitude > 0.
double slant_range_km(double elevation_deg, double altitude_km);
/// Angle at the Earth's centre between station and satellite: gamma = acos(Re cos E/(Re+h)) - E.
double earth_central_angle_deg(double elevation_deg, double altitude_km);
/// Angle at the satellite between nadir and the station: sin(eta) = Re cos E / (Re + h)
/// (the scan angle of a nadir-facing satellite antenna).
double nadir_angle_deg(double elevation_deg, double altitude_km);
/// Elevation of a satellite whose sub-satellite point is `central_angle_deg` from the station:
/// tan E = (cos gamma - Re/(Re+h)) / sin gamma. Negative below the horizon.
double elevation_from_central_angle_deg(double central_angle_deg, double altitude_km);
/// One-way propagation delay d/c, s.
double propagation_delay_s(double distance_m);
/// Period of a circular orbit, 2 pi sqrt(r^3/GM), s.
double orbital_period_s(double altitude_km);
/// Angular rate of a circular orbit, sqrt(GM/r^3), rad/s.
double orbital_angular_rate_rad_per_s(double altitude_km);
/// Range rate of an overhead pass (the ground track crosses the station) at `elevation_deg`,
/// m/s, as a magnitude: dr/dt = Re r omega sin(gamma) / d. It is negative (approaching) on the
/// rising half and positive on the setting half; at 90 degrees it is 0, at 0 degrees Re omega.
double overhead_pass_range_rate_m_s(double elevation_deg, double altitude_km);
/// First-order Doppler shift f_D = -f_c (dr/dt) / c, Hz.
double doppler_shift_hz(double carrier_hz, double range_rate_m_s);

enum class PassHalf { rising, setting };

/// Where the satellite is at one instant of a pass.
struct PassState {
  double time_s = 0.0;             ///< from the highest elevation; negative while rising
  double elevation_deg = 0.0;      ///< negative below the horizon
  double central_angle_deg = 0.0;  ///< station to sub-satellite point, at the Earth's centre
  double slant_range_km = 0.0;
  double range_rate_m_s = 0.0;  ///< dr/dt; negative while approaching
  double delay_s = 0.0;         ///< one-way propagation delay
};

/// A pass of a satellite in a circular orbit over a non-rotating spherical Earth, with the given
/// highest elevation (90: overhead). The ground track is a great circle passing gamma0 (the
/// central angle at the highest elevation) from the station, swept at the orbital rate omega;
/// spherical Pythagoras gives the central angle gamma(t) from cos gamma = cos gamma0 cos(omega t),
/// the range from d^2 = Re^2 + r^2 - 2 Re r cos gamma, and
///   dr/dt = Re r omega cos(gamma0) sin(omega t) / d.
/// The Earth's rotation (up to about 0.46 km/s at the equator) and orbit eccentricity are left
/// out; use this for range, delay and Doppler profiles, not for orbit determination.
class CircularPass {
 public:
  /// ConfigError unless altitude > 0 and 0 < max_elevation_deg <= 90.
  CircularPass(double altitude_km, double max_elevation_deg = 90.0);

  double altitude_km() const noexcept { return altitude_km_; }
  double max_elevation_deg() const noexcept { return max_elevation_deg_; }
  double period_s() const noexcept;
  /// State at `time_s` from the highest elevation (below-horizon times give negative elevation).
  PassState at_time(double time_s) const noexcept;
  /// Time (negative when rising) at which the pass reaches `elevation_deg`; ConfigError unless
  /// 0 <= elevation <= max_elevation_deg.
  double time_at_elevation_s(double elevation_deg, PassHalf half) const;
  PassState at_elevation(double elevation_deg, PassHalf half) const;
  /// Time spent above `min_elevation_deg` (0 if the pass never gets that high).
  double duration_above_s(double min_elevation_deg) const;

 private:
  double altitude_km_, max_elevation_deg_, orbit_radius_km_, omega_, gamma0_;
};

// ---------------------------------------------------------------------------------------------
// Path loss and noise
// ---------------------------------------------------------------------------------------------

/// Free-space basic transmission loss, ITU-R P.525: L = 20 log10(4 pi d / lambda), dB.
/// ConfigError unless frequency and distance are > 0.
double free_space_path_loss_db(double frequency_hz, double distance_m);
/// The same in P.525's units form: L = C + 20 log10 f[MHz] + 20 log10 d[km] with the exact
/// constant C = 20 log10(4 pi 10^9 / c) = 32.44778 dB (P.525 rounds it to 32.4).
double free_space_path_loss_db_mhz_km(double frequency_mhz, double distance_km);
/// The constants of the units forms: 32.44778 dB (MHz, km) and 92.44778 dB (GHz, km).
double free_space_loss_constant_mhz_km_db() noexcept;
double free_space_loss_constant_ghz_km_db() noexcept;

/// Noise temperature of an amplifier of noise figure F: Te = T0 (F - 1), T0 = 290 K.
double noise_temperature_from_figure_k(double noise_figure_db);
/// System noise temperature referred to the antenna terminals: T_sys = T_ant + T0 (F - 1).
double system_noise_temperature_k(double antenna_temperature_k, double noise_figure_db);
/// Figure of merit G/T = G - 10 log10(T_sys), dB/K.
double g_over_t_db_k(double antenna_gain_dbi, double system_temperature_k);
/// C/N0 = EIRP - losses + G/T - 10 log10 k, dBHz (Roddy, Satellite Communications, eq. 12.38).
double carrier_to_noise_density_dbhz(double eirp_dbw, double total_losses_db, double g_over_t_db_k);
/// Es/N0 = C/N0 - 10 log10(Rs), dB.
double es_n0_db_from_c_n0(double c_over_n0_dbhz, double symbol_rate_bd);
/// Rs (1 + roll-off), Hz.
double occupied_bandwidth_hz(double symbol_rate_bd, double roll_off);
/// Smallest Es/N0 at which a spectral efficiency of eta bit/symbol is possible on the complex
/// AWGN channel (Shannon): 10 log10(2^eta - 1), dB.
double shannon_min_es_n0_db(double spectral_efficiency);

// ---------------------------------------------------------------------------------------------
// Phased arrays
// ---------------------------------------------------------------------------------------------

/// Gain of an N-element array from the element gain: G_el + 10 log10 N, dBi.
double array_gain_dbi(std::size_t elements, double element_gain_dbi);
/// Scan loss of the cos^k model, -10 k log10(cos scan), dB (infinite at 90 degrees). Common
/// practice: k = 1 is the projected aperture; measured arrays lose more towards wide scan
/// angles, and 1.2 to 1.5 are usual planning values (kDefaultScanLossExponent).
double cosine_scan_loss_db(double scan_deg, double exponent);
/// Common-practice exponent of the cos^k scan-loss model (no source; a planning value).
inline constexpr double kDefaultScanLossExponent = 1.2;
/// EIRP of an array whose N elements each radiate `element_power_dbw` (all in phase toward the
/// beam): P_el + 10 log10 N + G_array. With G_array = G_el + 10 log10 N this is
/// P_el + 20 log10 N + G_el.
double array_eirp_dbw(double element_power_dbw, std::size_t elements, double array_gain_dbi);
/// Scan angle of a terminal whose array faces the zenith: 90 - elevation.
double zenith_facing_scan_deg(double elevation_deg);

enum class ArrayLattice { rectangular, triangular };

/// A planar array in the x-y plane, `columns` elements along x and `rows` along y, uniform
/// amplitudes. On a triangular lattice every odd row is shifted by half a column spacing.
struct PlanarArrayConfig {
  ArrayLattice lattice = ArrayLattice::rectangular;
  unsigned columns = 16;
  unsigned rows = 16;
  double column_spacing_wavelengths = 0.5;  ///< dx, along x
  /// dy, along y; 0 means dx on a rectangular lattice and dx sqrt(3)/2 (equilateral
  /// triangles) on a triangular one.
  double row_spacing_wavelengths = 0.0;
  /// Element power pattern cos^q(theta) in the front half-space and zero behind it (a ground
  /// plane). q = 1 is the projected-aperture pattern of an element in a large array.
  double element_pattern_exponent = 1.0;
};

/// The highest side lobe of a steered pattern.
struct SideLobe {
  double level_db = 0.0;   ///< relative to the main-beam peak (negative)
  double theta_deg = 0.0;  ///< direction of the side-lobe peak
  double phi_deg = 0.0;
  bool grating_lobe = false;  ///< the peak is a grating lobe (an image of the main beam)
};

/// Pattern and directivity of a uniformly fed planar array, steered by per-element phase shifts
/// w_n = exp(-j k r_n . u0) toward (scan, scan azimuth). The power pattern is
///   P(u) = |sum_n w_n exp(j k r_n . u)|^2 cos^q(theta)       (front half-space)
/// and the directivity D(u0) = 4 pi P(u0) / integral of P over the half-space. The integral is
/// done on the co-array: integral P = sum over element-pair offsets Delta of
///   count(Delta) cos(k Delta . u0) I(k |Delta|),  I(a) = int cos^q(theta) e^{j a sin(theta)
///   cos(phi)} dOmega = pi Gamma(nu) (2/a)^nu J_nu(a),  nu = (q + 1)/2,
/// which is exact for this pattern (the half-space projected onto the unit disk, then Poisson's
/// integral for J_nu). I is evaluated once per distinct |Delta| in the constructor, and each
/// directivity is then one pass over the co-array (about 4 N terms). tests/reference checks it
/// against brute-force (theta, phi) quadrature. The directivity is the gain of a lossless,
/// matched array; mutual coupling is outside the model. Building a 32 x 32 or a 1 x 1024 array
/// takes milliseconds.
class PlanarArray {
 public:
  /// ConfigError for zero columns or rows, more than 16384 elements, a triangular lattice of a
  /// single row or column, spacings outside (0, 10] wavelengths, or q outside [0, 20].
  explicit PlanarArray(PlanarArrayConfig config);

  const PlanarArrayConfig& config() const noexcept { return config_; }
  std::size_t element_count() const noexcept { return std::size_t{nx_} * ny_; }
  double column_spacing_wavelengths() const noexcept { return dx_; }
  double row_spacing_wavelengths() const noexcept { return dy_; }
  /// Element positions in wavelengths, centred on the array's centroid, as (x, y) pairs.
  std::vector<std::array<double, 2>> element_positions_wavelengths() const;

  /// Directivity toward the steering direction, dBi (-inf at 90 degrees of scan when q > 0).
  /// ConfigError unless 0 <= scan <= 90.
  double directivity_dbi(double scan_deg, double scan_azimuth_deg = 0.0) const;
  /// Directivity toward any direction (theta, phi) with the beam steered to (scan, azimuth).
  double directivity_toward_dbi(double theta_deg, double phi_deg, double scan_deg,
                                double scan_azimuth_deg = 0.0) const;
  /// directivity(0) - directivity(scan), dB.
  double scan_loss_db(double scan_deg, double scan_azimuth_deg = 0.0) const;
  /// Power pattern relative to N^2 (the array factor's peak), linear.
  double relative_power_pattern(double theta_deg, double phi_deg, double scan_deg,
                                double scan_azimuth_deg = 0.0) const noexcept;
  /// Aperture directivity 4 pi A / lambda^2 with A = N dx dy (the lattice cell area per
  /// element), dBi; a large array with dx, dy <= lambda/2 and q = 1 approaches it at broadside.
  double aperture_directivity_dbi() const noexcept;
  /// The highest side lobe of the whole front half-space, found on a (u, v) grid of at least six
  /// points per side-lobe width and refined by a local search. The main lobe is the set of grid
  /// points reached from the peak by never-rising steps. level_db is -inf for a single element.
  /// Costs about 10 ms for a 32 x 32 array and about a second for 1024 elements in a line; not
  /// for inner loops.
  SideLobe highest_side_lobe(double scan_deg, double scan_azimuth_deg = 0.0) const;
  /// Largest scan angle, at any azimuth, that keeps every grating lobe out of visible space:
  /// asin(min(1, L - 1)) in degrees, L the length of the shortest nonzero reciprocal-lattice
  /// vector in units of 1/lambda. On a rectangular lattice this is the textbook condition
  /// d/lambda < 1/(1 + sin theta_max) per axis; on an equilateral triangular lattice
  /// d/lambda < 2/(sqrt(3)(1 + sin theta_max)). NaN when a grating lobe is visible at broadside.
  double grating_lobe_free_scan_deg() const noexcept;
  /// True when a grating lobe lies inside visible space for this steering direction.
  bool grating_lobe_visible(double scan_deg, double scan_azimuth_deg = 0.0) const noexcept;

 private:
  struct Offset {
    double x, y;    // wavelengths
    double weight;  // pair count times I(|Delta|), with +-Delta folded together
  };
  double radiated_integral(double ux, double uy) const noexcept;
  double element_factor(double cos_theta) const noexcept;
  std::complex<double> array_factor(double u, double v, double u0, double v0) const noexcept;
  std::vector<std::array<double, 2>> reciprocal_vectors() const;

  PlanarArrayConfig config_;
  unsigned nx_ = 0, ny_ = 0;
  double dx_ = 0.0, dy_ = 0.0;
  bool triangular_ = false;
  double zero_offset_weight_ = 0.0;
  std::vector<Offset> offsets_;
};

// ---------------------------------------------------------------------------------------------
// MODCOD tables
// ---------------------------------------------------------------------------------------------

/// One modulation and coding combination and the Es/N0 it needs for the target error rate.
struct Modcod {
  std::string name;                  ///< e.g. "QPSK 3/4"
  std::string modulation;            ///< e.g. "qpsk", "8psk", "16apsk"
  std::string code;                  ///< e.g. "LDPC+BCH 64800", "convolutional K=7"
  double rate = 1.0;                 ///< code rate in (0, 1]
  double spectral_efficiency = 0.0;  ///< information bits per symbol (bits_per_symbol_info)
  double required_es_n0_db = 0.0;    ///< at the table's target BER/FER/PER
  std::string source;                ///< where the threshold comes from
};

/// Validated MODCOD rows. Every row satisfies: a non-empty unique name; 0 < rate <= 1;
/// 0 < spectral efficiency <= rate log2(M) when the modulation's order M is known; and a
/// required Es/N0 at or above the Shannon bound 10 log10(2^eta - 1). A row breaking a rule is
/// rejected with ConfigError naming the row ("modcods[3] 'QPSK 9/10'.required_es_n0_db").
///
/// CSV and JSON files have the columns / keys
///   name, modulation, code, rate, bits_per_symbol_info, required_es_n0_db, source
/// (rate as a decimal or a fraction "3/4"). JSON is an array of such objects or an object with
/// a "modcods" array. This is the file a coded sweep writes.
class ModcodTable {
 public:
  ModcodTable() = default;
  explicit ModcodTable(std::vector<Modcod> rows);

  /// Appends a row after the checks above.
  void add(Modcod row);
  const std::vector<Modcod>& rows() const noexcept { return rows_; }
  std::size_t size() const noexcept { return rows_.size(); }
  bool empty() const noexcept { return rows_.empty(); }

  /// The 28 ideal DVB-S2 thresholds of ETSI EN 302 307-1, Table 13 (QEF, PER 1e-7, normal
  /// 64800-bit FECFRAME, no pilots, AWGN). Values from memory, corroborated: six rows match a
  /// peer-reviewed paper's table, eta follows from the BCH payload sizes exactly, and every
  /// threshold lies 1.07 to 3.65 dB above the Shannon bound. Ideal demodulation: add an
  /// implementation margin.
  static ModcodTable dvb_s2_normal_frame();
  /// Rows from the GMI (BICM) threshold of each named constellation at each code rate, plus a
  /// stated gap: required Es/N0 = bicm_threshold_es_n0_db(c, rate log2 M) + gap_db. The
  /// threshold is where the generalised mutual information reaches rate log2 M (information.hpp).
  static ModcodTable from_gmi_threshold(const std::vector<std::string>& modulations,
                                        const std::vector<double>& code_rates, double gap_db);
  /// Parses a CSV / JSON table; InputError naming `source`, line or row, and column.
  static ModcodTable from_csv(std::string_view text, const std::string& source);
  static ModcodTable from_json(std::string_view text, const std::string& source);

  std::string to_csv() const;
  std::string to_json() const;

 private:
  std::vector<Modcod> rows_;
};

/// Error rate at which simulate_modcod_table reads the thresholds.
enum class ModcodTarget { ber, fer };

/// A MODCOD table from our own coded simulations: each (modulation, code) pair is swept over
/// an ascending Es/N0 grid (coded sweeps of sim.hpp, symbol-rate AWGN unless `link` says
/// otherwise) until a point lies confidently below the target (the upper end of its interval
/// is below it), and the required Es/N0 is read off the measured curve.
struct ModcodSimulationConfig {
  std::vector<std::string> modulations = {"qpsk"};
  std::vector<std::string> codes = {"conv-k7-r1/2"};  ///< fec.hpp code_names()
  ModcodTarget target = ModcodTarget::fer;
  double target_rate = 1e-2;             ///< in (0, 0.5)
  std::vector<double> es_n0_db;          ///< ascending, at least two values, -30 to 100 dB
  std::uint64_t min_errors = 100;        ///< errors of the target's kind that end a point; >= 1
  /// Information bits after which a point ends; 0 = automatic: 30 / target_rate bits (BER)
  /// or 30 / target_rate frames (FER), enough to tell a point at a third of the target from it.
  std::uint64_t max_bits = 0;
  double confidence = 0.95;              ///< of the intervals behind the threshold's bounds
  std::uint64_t seed = 1;
  unsigned threads = 0;                  ///< 0 = all cores
  LinkConfig link;                       ///< channel and receiver; `code` is set per pair
};

/// The result for one (modulation, code) pair.
struct ModcodSimulationRow {
  std::string modulation, code;
  double code_rate = 1.0;            ///< k / n of the code
  double spectral_efficiency = 0.0;  ///< information bits per symbol (with symbol padding)
  bool available = false;            ///< the measured curve crosses the target inside the grid
  /// Es/N0 where the measured curve crosses the target: log-linear interpolation of the rate
  /// between the two bracketing grid points. A zero-error point below the target enters with
  /// the upper end of its interval (so the estimate errs high).
  double required_es_n0_db = 0.0;
  /// Where the lower and the upper interval ends of the points cross the target (the same
  /// interpolation): the Monte-Carlo uncertainty of the threshold. NaN when that crossing lies
  /// outside the grid (then the bound is beyond the first or last point). For a BER target the
  /// intervals treat bit errors as independent, but decoders make them in bursts, so these
  /// bounds are too narrow (by about sqrt(3) for the K = 7 code); FER bounds are exact.
  double required_low_db = 0.0, required_high_db = 0.0;
  std::vector<PointResult> curve;    ///< the points simulated, in grid order
  std::string note;                  ///< why a row is unavailable, or a caveat
};

struct ModcodSimulation {
  ModcodSimulationConfig config;
  ModcodTable table;                      ///< the available rows, in (modulation, code) order
  std::vector<ModcodSimulationRow> rows;  ///< every pair, in the same order
};

/// Runs the simulations. ConfigError for bad settings (unknown modulation or code, a grid that is
/// not ascending, a target outside (0, 0.5)); `progress`, if set, gets one line per point.
ModcodSimulation simulate_modcod_table(const ModcodSimulationConfig& config,
                                       const std::function<void(const std::string&)>& progress = {});
/// Es/N0 where the curve (x ascending, y the rates) first falls from >= target to < target,
/// interpolating log y linearly in x; NaN when it does not cross inside the grid. When the point
/// after the crossing has y = 0 (no logarithm), the point before it is returned: a lower bound.
double log_linear_crossing(const std::vector<double>& x, const std::vector<double>& y, double target);

/// The margin of one MODCOD at a link Es/N0.
struct ModcodMargin {
  std::size_t index = 0;        ///< row in the table
  double margin_db = 0.0;       ///< link Es/N0 - required - implementation margin
  double eb_n0_db = 0.0;        ///< link Es/N0 - 10 log10(eta)
  double throughput_bps = 0.0;  ///< Rs eta
  bool meets_margin = false;    ///< margin_db >= the required margin
};

/// Margins of every row and the best one that meets the required margin.
struct ModcodChoice {
  std::vector<ModcodMargin> margins;  ///< in table order
  /// Row with the highest throughput among those meeting the margin (ties: the larger margin);
  /// empty when none does or the link is unavailable.
  std::optional<std::size_t> best;
  double throughput_bps() const noexcept;  ///< 0 without a choice
  const ModcodMargin* best_margin() const noexcept;
};

/// Chooses the MODCOD. ConfigError for a non-positive symbol rate or non-finite margins; a
/// non-finite link Es/N0 (link unavailable) gives no choice.
ModcodChoice select_modcod(const ModcodTable& table, double link_es_n0_db, double symbol_rate_bd,
                           double implementation_margin_db, double required_margin_db);

// ---------------------------------------------------------------------------------------------
// Scenario and budget
// ---------------------------------------------------------------------------------------------

enum class Platform { satellite, ground };
enum class AntennaKind {
  fixed,            ///< a dish or horn of fixed gain kept pointed at the other end
  scan_loss_array,  ///< N elements of a given gain, cos^k scan loss
  lattice_array,    ///< a PlanarArray: gain and scan loss from the pattern model
};
enum class LossScaling {
  none,      ///< atmospheric and rain losses are taken as given at every elevation
  cosecant,  ///< they are zenith values scaled by 1/sin(E) (flat slab; common practice, poor
             ///< below about 10 degrees)
};

/// One antenna. A ground antenna faces the zenith (its scan angle is 90 - elevation), a satellite
/// antenna faces nadir (its scan angle is the nadir angle).
struct AntennaSpec {
  AntennaKind kind = AntennaKind::fixed;
  double gain_dbi = 0.0;                                 ///< fixed antennas
  std::size_t elements = 0;                              ///< scan_loss_array
  double element_gain_dbi = 0.0;                         ///< scan_loss_array
  double scan_loss_exponent = kDefaultScanLossExponent;  ///< scan_loss_array
  std::shared_ptr<const PlanarArray> lattice;            ///< lattice_array (built once, shared)
  /// Azimuth of the scan plane in the array's x-y frame (lattice arrays): fixed over the pass,
  /// exact for an overhead pass.
  double scan_azimuth_deg = 0.0;
  /// Largest usable scan angle (arrays); NaN: no limit beyond 90 degrees.
  double max_scan_deg = std::numeric_limits<double>::quiet_NaN();
  double array_loss_db = 0.0;  ///< feed network and ohmic loss of an array
  /// Number of radiating elements (0 for fixed antennas).
  std::size_t element_count() const noexcept;
  /// Gain toward the other end at `scan_deg`, and its broadside gain, dBi.
  double broadside_gain_dbi() const;
  double gain_at_scan_dbi(double scan_deg) const;
  bool is_array() const noexcept { return kind != AntennaKind::fixed; }
  /// A lattice antenna from its configuration (builds the PlanarArray).
  static AntennaSpec lattice_array(const PlanarArrayConfig& config);
};

struct TransmitterSpec {
  Platform platform = Platform::satellite;
  std::string name;
  /// Exactly one of: EIRP directly; the total power into the antenna; the power of each
  /// element of an array antenna.
  std::optional<double> eirp_dbw;
  std::optional<double> power_dbw;
  std::optional<double> element_power_dbw;
  double feeder_loss_db = 0.0;         ///< between amplifier and antenna
  std::optional<AntennaSpec> antenna;  ///< required unless eirp_dbw is given
};

struct ReceiverSpec {
  Platform platform = Platform::ground;
  std::string name;
  std::optional<AntennaSpec> antenna;  ///< required unless g_over_t_db_k is given
  /// Either G/T directly (then no antenna), or a system temperature, or antenna temperature and
  /// noise figure (T_sys = T_ant + T0 (F - 1)).
  std::optional<double> g_over_t_db_k;
  std::optional<double> system_temperature_k;
  std::optional<double> antenna_temperature_k;
  std::optional<double> noise_figure_db;
  /// Loss between antenna and receiver, counted as a carrier loss as in Roddy eq. 12.38; its
  /// own noise is not added (fold it into the temperatures if it matters).
  double feeder_loss_db = 0.0;
};

struct PathLosses {
  double atmospheric_db = 0.0;
  double rain_db = 0.0;
  double pointing_db = 0.0;
  double polarisation_db = 0.0;
  double other_db = 0.0;
  LossScaling scaling = LossScaling::none;
};

/// Everything a budget and a pass need. parse_link_scenario builds and checks one from TOML;
/// compute_budget re-checks what it uses.
struct LinkScenario {
  std::string name;
  std::string source;  ///< file it came from (for messages)
  double altitude_km = 0.0;
  double max_elevation_deg = 90.0;                ///< highest elevation of the pass (90: overhead)
  std::vector<double> pass_elevations_deg;        ///< elevations of the pass table, ascending
  std::optional<double> reference_elevation_deg;  ///< budget table; default lowest pass point
  double frequency_hz = 0.0;
  double symbol_rate_bd = 0.0;
  double roll_off = 0.0;
  double required_margin_db = 0.0;        ///< margin a MODCOD must keep
  double implementation_margin_db = 0.0;  ///< subtracted from every MODCOD's margin
  PathLosses losses;
  TransmitterSpec transmitter;
  ReceiverSpec receiver;
  ModcodTable modcods;
  std::string modcod_source;  ///< description of where the table came from
};

/// One named line of a budget table (value in `unit`; NaN lines are left out of tables).
struct BudgetLine {
  std::string key;    ///< stable identifier (JSON)
  std::string label;  ///< human-readable item
  double value = 0.0;
  std::string unit;
};

/// A link budget at one elevation with every line item kept.
struct LinkBudget {
  double elevation_deg = 0.0;
  double slant_range_km = 0.0;
  double central_angle_deg = 0.0;
  double nadir_angle_deg = 0.0;
  double delay_s = 0.0;
  double range_rate_m_s = 0.0;  ///< rising half of the pass; NaN above the pass's top
  double doppler_hz = 0.0;      ///< at the carrier, rising half (positive)
  double frequency_hz = 0.0;
  double wavelength_m = 0.0;

  double tx_power_dbw = std::numeric_limits<double>::quiet_NaN();  ///< total, when given
  double tx_element_power_dbw = std::numeric_limits<double>::quiet_NaN();
  double tx_elements = std::numeric_limits<double>::quiet_NaN();
  double tx_broadside_gain_dbi = std::numeric_limits<double>::quiet_NaN();
  double tx_scan_deg = std::numeric_limits<double>::quiet_NaN();
  double tx_scan_loss_db = std::numeric_limits<double>::quiet_NaN();
  double tx_antenna_gain_dbi = std::numeric_limits<double>::quiet_NaN();  ///< toward the other end
  double tx_feeder_loss_db = 0.0;
  double eirp_dbw = 0.0;

  double free_space_loss_db = 0.0;
  double atmospheric_loss_db = 0.0;
  double rain_loss_db = 0.0;
  double pointing_loss_db = 0.0;
  double polarisation_loss_db = 0.0;
  double other_loss_db = 0.0;
  double rx_feeder_loss_db = 0.0;
  double total_loss_db = 0.0;  ///< sum of the losses above

  double rx_broadside_gain_dbi = std::numeric_limits<double>::quiet_NaN();
  double rx_scan_deg = std::numeric_limits<double>::quiet_NaN();
  double rx_scan_loss_db = std::numeric_limits<double>::quiet_NaN();
  double rx_antenna_gain_dbi = std::numeric_limits<double>::quiet_NaN();
  double system_temperature_k = std::numeric_limits<double>::quiet_NaN();
  double g_over_t_db_k = 0.0;

  double boltzmann_dbw_per_k_hz = 0.0;
  double c_over_n0_dbhz = 0.0;
  double symbol_rate_bd = 0.0;
  double es_n0_db = 0.0;
  double occupied_bandwidth_hz = 0.0;
  double c_over_n_db = 0.0;  ///< C/N in the occupied bandwidth

  /// False when an array would scan beyond its limit (or to 90 degrees): Es/N0 is then -inf.
  bool available = true;
  std::string unavailable_reason;

  /// The table lines in order: transmitter, path, receiver, result.
  std::vector<BudgetLine> lines() const;
};

/// Reads a scenario from TOML (schema in docs/link-scenario.md and link_scenario.cpp). Relative
/// MODCOD file paths are taken relative to the directory of `source`. InputError for syntax
/// errors, unknown keys, missing or conflicting keys, wrong types and out-of-range values; the
/// message names `source`, the line when known, and the full key ("orbit.altitude_km").
LinkScenario parse_link_scenario(std::string_view toml_text, const std::string& source);
/// Reads the file and parses it.
LinkScenario load_link_scenario(const std::string& path);

/// The budget at one elevation. ConfigError unless 0 <= elevation <= 90 and the scenario's
/// numbers are usable (positive altitude, frequency, symbol rate, ...).
LinkBudget compute_budget(const LinkScenario& scenario, double elevation_deg);

/// One elevation of the pass table.
struct PassPoint {
  LinkBudget budget;
  ModcodChoice choice;
};

/// The scenario worked out: the budget and every MODCOD's margin at the reference elevation,
/// the pass table, and the notes that go with them.
struct LinkAnalysis {
  LinkBudget reference;
  ModcodChoice reference_choice;
  std::vector<PassPoint> pass;
  std::vector<std::string> notes;     ///< antenna-model summaries (array size, side lobes)
  std::vector<std::string> warnings;  ///< grating lobes, elevations out of scan range, ...
  std::vector<std::string> cautions;  ///< transmit power, RF exposure, licensing
};

/// Caution printed whenever a transmit power is given.
extern const char* const kTransmitPowerCaution;

/// Works out the scenario; `reference_elevation_deg` overrides the scenario's.
LinkAnalysis analyse_link(const LinkScenario& scenario,
                          std::optional<double> reference_elevation_deg = std::nullopt);

/// JSON of an analysis: scenario summary, reference budget lines, MODCOD margins, the pass
/// table, warnings and cautions. Non-finite numbers are null.
std::string link_analysis_to_json(const LinkScenario& scenario, const LinkAnalysis& analysis);
/// Throughput against elevation as a step line, each segment labelled with its MODCOD.
std::string link_throughput_svg(const LinkScenario& scenario, const LinkAnalysis& analysis);
/// Link Es/N0 against elevation with the thresholds (required Es/N0 + implementation margin +
/// required margin) of the MODCODs chosen somewhere in the pass as reference lines.
std::string link_es_n0_svg(const LinkScenario& scenario, const LinkAnalysis& analysis);

}  // namespace qamsight
