// init_link: link geometry, path loss, noise, phased arrays, MODCOD tables, budgets and passes.
#include "bindings.hpp"
#include "qamsight/link.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

// A scalar function of doubles, vectorised over NumPy arrays.
template <class F>
auto vec(F f) {
  return py::vectorize(f);
}

}  // namespace

void init_link(py::module_& m) {
  m.attr("SPEED_OF_LIGHT_M_PER_S") = kSpeedOfLightMPerS;
  m.attr("EARTH_RADIUS_KM") = kEarthRadiusKm;
  m.attr("EARTH_GRAVITATIONAL_PARAMETER_KM3_PER_S2") = kEarthGravitationalParameterKm3PerS2;
  m.attr("BOLTZMANN_J_PER_K") = kBoltzmannJPerK;
  m.attr("REFERENCE_NOISE_TEMPERATURE_K") = kReferenceNoiseTemperatureK;
  m.attr("DEFAULT_SCAN_LOSS_EXPONENT") = kDefaultScanLossExponent;
  m.attr("TRANSMIT_POWER_CAUTION") = std::string(kTransmitPowerCaution);
  m.def("boltzmann_dbw_per_k_hz", &boltzmann_dbw_per_k_hz, "10 log10(k) = -228.5992 dBW/K/Hz.");

  // Geometry (vectorised; ConfigError for values out of range).
  m.def("slant_range_km", vec([](double e, double h) { return slant_range_km(e, h); }), "elevation_deg"_a,
        "altitude_km"_a, "Station-satellite distance at an elevation over a spherical Earth.");
  m.def("earth_central_angle_deg", vec([](double e, double h) { return earth_central_angle_deg(e, h); }),
        "elevation_deg"_a, "altitude_km"_a);
  m.def("nadir_angle_deg", vec([](double e, double h) { return nadir_angle_deg(e, h); }), "elevation_deg"_a,
        "altitude_km"_a, "Angle at the satellite between nadir and the station.");
  m.def("elevation_from_central_angle_deg",
        vec([](double g, double h) { return elevation_from_central_angle_deg(g, h); }), "central_angle_deg"_a,
        "altitude_km"_a);
  m.def("propagation_delay_s", vec([](double d) { return propagation_delay_s(d); }), "distance_m"_a);
  m.def("orbital_period_s", vec([](double h) { return orbital_period_s(h); }), "altitude_km"_a);
  m.def("orbital_angular_rate_rad_per_s", vec([](double h) { return orbital_angular_rate_rad_per_s(h); }),
        "altitude_km"_a);
  m.def("overhead_pass_range_rate_m_s", vec([](double e, double h) { return overhead_pass_range_rate_m_s(e, h); }),
        "elevation_deg"_a, "altitude_km"_a, "Range-rate magnitude of an overhead pass at an elevation, m/s.");
  m.def("doppler_shift_hz", vec([](double f, double rr) { return doppler_shift_hz(f, rr); }), "carrier_hz"_a,
        "range_rate_m_s"_a, "First-order Doppler shift -f_c (dr/dt) / c.");

  py::enum_<PassHalf>(m, "PassHalf").value("rising", PassHalf::rising).value("setting", PassHalf::setting);
  py::class_<PassState>(m, "PassState", "Where the satellite is at one instant of a pass.")
      .def_readonly("time_s", &PassState::time_s)
      .def_readonly("elevation_deg", &PassState::elevation_deg)
      .def_readonly("central_angle_deg", &PassState::central_angle_deg)
      .def_readonly("slant_range_km", &PassState::slant_range_km)
      .def_readonly("range_rate_m_s", &PassState::range_rate_m_s)
      .def_readonly("delay_s", &PassState::delay_s);
  py::class_<CircularPass>(m, "CircularPass", "A circular-orbit pass over a non-rotating spherical Earth.")
      .def(py::init<double, double>(), "altitude_km"_a, "max_elevation_deg"_a = 90.0)
      .def_property_readonly("altitude_km", &CircularPass::altitude_km)
      .def_property_readonly("max_elevation_deg", &CircularPass::max_elevation_deg)
      .def("period_s", &CircularPass::period_s)
      .def("at_time", &CircularPass::at_time, "time_s"_a)
      .def("time_at_elevation_s", &CircularPass::time_at_elevation_s, "elevation_deg"_a, "half"_a)
      .def("at_elevation", &CircularPass::at_elevation, "elevation_deg"_a, "half"_a)
      .def("duration_above_s", &CircularPass::duration_above_s, "min_elevation_deg"_a);

  // Path loss and noise.
  m.def("free_space_path_loss_db", vec([](double f, double d) { return free_space_path_loss_db(f, d); }),
        "frequency_hz"_a, "distance_m"_a, "ITU-R P.525: 20 log10(4 pi d / lambda), dB.");
  m.def("free_space_path_loss_db_mhz_km",
        vec([](double f, double d) { return free_space_path_loss_db_mhz_km(f, d); }), "frequency_mhz"_a,
        "distance_km"_a);
  m.def("free_space_loss_constant_mhz_km_db", &free_space_loss_constant_mhz_km_db);
  m.def("free_space_loss_constant_ghz_km_db", &free_space_loss_constant_ghz_km_db);
  m.def("noise_temperature_from_figure_k", vec([](double f) { return noise_temperature_from_figure_k(f); }),
        "noise_figure_db"_a, "Te = T0 (F - 1), T0 = 290 K.");
  m.def("system_noise_temperature_k",
        vec([](double t, double f) { return system_noise_temperature_k(t, f); }), "antenna_temperature_k"_a,
        "noise_figure_db"_a);
  m.def("g_over_t_db_k", vec([](double g, double t) { return g_over_t_db_k(g, t); }), "antenna_gain_dbi"_a,
        "system_temperature_k"_a);
  m.def("carrier_to_noise_density_dbhz",
        vec([](double e, double l, double gt) { return carrier_to_noise_density_dbhz(e, l, gt); }), "eirp_dbw"_a,
        "total_losses_db"_a, "g_over_t_db_k"_a, "C/N0 = EIRP - losses + G/T - 10 log10 k, dBHz.");
  m.def("es_n0_db_from_c_n0", vec([](double c, double rs) { return es_n0_db_from_c_n0(c, rs); }),
        "c_over_n0_dbhz"_a, "symbol_rate_bd"_a);
  m.def("occupied_bandwidth_hz", vec([](double rs, double b) { return occupied_bandwidth_hz(rs, b); }),
        "symbol_rate_bd"_a, "roll_off"_a);
  m.def("shannon_min_es_n0_db", vec([](double eta) { return shannon_min_es_n0_db(eta); }), "spectral_efficiency"_a,
        "10 log10(2^eta - 1), dB.");

  // Arrays.
  m.def("array_gain_dbi", &array_gain_dbi, "elements"_a, "element_gain_dbi"_a);
  m.def("cosine_scan_loss_db", vec([](double s, double k) { return cosine_scan_loss_db(s, k); }), "scan_deg"_a,
        "exponent"_a, "-10 k log10(cos scan), dB.");
  m.def("array_eirp_dbw", &array_eirp_dbw, "element_power_dbw"_a, "elements"_a, "array_gain_dbi"_a);
  m.def("zenith_facing_scan_deg", vec([](double e) { return zenith_facing_scan_deg(e); }), "elevation_deg"_a);
  py::enum_<ArrayLattice>(m, "ArrayLattice")
      .value("rectangular", ArrayLattice::rectangular)
      .value("triangular", ArrayLattice::triangular);
  py::class_<PlanarArrayConfig>(m, "PlanarArrayConfig", "A uniformly fed planar array in the x-y plane.")
      .def(py::init([](ArrayLattice lattice, unsigned columns, unsigned rows, double dx, double dy, double q) {
             return PlanarArrayConfig{lattice, columns, rows, dx, dy, q};
           }),
           "lattice"_a = ArrayLattice::rectangular, "columns"_a = 16, "rows"_a = 16,
           "column_spacing_wavelengths"_a = 0.5, "row_spacing_wavelengths"_a = 0.0,
           "element_pattern_exponent"_a = 1.0)
      .def_readwrite("lattice", &PlanarArrayConfig::lattice)
      .def_readwrite("columns", &PlanarArrayConfig::columns)
      .def_readwrite("rows", &PlanarArrayConfig::rows)
      .def_readwrite("column_spacing_wavelengths", &PlanarArrayConfig::column_spacing_wavelengths)
      .def_readwrite("row_spacing_wavelengths", &PlanarArrayConfig::row_spacing_wavelengths)
      .def_readwrite("element_pattern_exponent", &PlanarArrayConfig::element_pattern_exponent);
  py::class_<SideLobe>(m, "SideLobe", "The highest side lobe of a steered pattern.")
      .def_readonly("level_db", &SideLobe::level_db)
      .def_readonly("theta_deg", &SideLobe::theta_deg)
      .def_readonly("phi_deg", &SideLobe::phi_deg)
      .def_readonly("grating_lobe", &SideLobe::grating_lobe);
  py::class_<PlanarArray, std::shared_ptr<PlanarArray>>(m, "PlanarArray",
                                                        "Pattern and directivity of a planar array (co-array model).")
      .def(py::init<PlanarArrayConfig>(), "config"_a)
      .def_property_readonly("config", &PlanarArray::config)
      .def("element_count", &PlanarArray::element_count)
      .def("column_spacing_wavelengths", &PlanarArray::column_spacing_wavelengths)
      .def("row_spacing_wavelengths", &PlanarArray::row_spacing_wavelengths)
      .def(
          "element_positions_wavelengths",
          [](const PlanarArray& a) {
            const auto pos = a.element_positions_wavelengths();
            py::array_t<double> out({static_cast<py::ssize_t>(pos.size()), py::ssize_t{2}});
            auto* p = out.mutable_data();
            for (std::size_t i = 0; i < pos.size(); ++i) p[2 * i] = pos[i][0], p[2 * i + 1] = pos[i][1];
            return out;
          },
          "Element positions (x, y) in wavelengths, centred, as an (N, 2) float64 array.")
      .def("directivity_dbi", &PlanarArray::directivity_dbi, "scan_deg"_a, "scan_azimuth_deg"_a = 0.0)
      .def("directivity_toward_dbi", &PlanarArray::directivity_toward_dbi, "theta_deg"_a, "phi_deg"_a, "scan_deg"_a,
           "scan_azimuth_deg"_a = 0.0)
      .def("scan_loss_db", &PlanarArray::scan_loss_db, "scan_deg"_a, "scan_azimuth_deg"_a = 0.0)
      .def(
          "relative_power_pattern",
          [](const PlanarArray& a, py::object theta, py::object phi, double scan, double az) {
            return py::vectorize([&](double t, double p) { return a.relative_power_pattern(t, p, scan, az); })(theta,
                                                                                                               phi);
          },
          "theta_deg"_a, "phi_deg"_a, "scan_deg"_a, "scan_azimuth_deg"_a = 0.0,
          "Power pattern relative to N^2 (vectorised over theta and phi).")
      .def("aperture_directivity_dbi", &PlanarArray::aperture_directivity_dbi)
      .def(
          "highest_side_lobe",
          [](const PlanarArray& a, double scan, double az) {
            py::gil_scoped_release nogil;
            return a.highest_side_lobe(scan, az);
          },
          "scan_deg"_a, "scan_azimuth_deg"_a = 0.0, "The highest side lobe of the front half-space (GIL released).")
      .def("grating_lobe_free_scan_deg", &PlanarArray::grating_lobe_free_scan_deg)
      .def("grating_lobe_visible", &PlanarArray::grating_lobe_visible, "scan_deg"_a, "scan_azimuth_deg"_a = 0.0);

  // MODCOD tables.
  py::class_<Modcod>(m, "Modcod", "One modulation and coding combination and the Es/N0 it needs.")
      .def(py::init([](std::string name, std::string modulation, std::string code, double rate,
                       double spectral_efficiency, double required_es_n0_db, std::string source) {
             return Modcod{std::move(name), std::move(modulation), std::move(code), rate, spectral_efficiency,
                           required_es_n0_db, std::move(source)};
           }),
           "name"_a = "", "modulation"_a = "", "code"_a = "", "rate"_a = 1.0, "spectral_efficiency"_a = 0.0,
           "required_es_n0_db"_a = 0.0, "source"_a = "")
      .def_readwrite("name", &Modcod::name)
      .def_readwrite("modulation", &Modcod::modulation)
      .def_readwrite("code", &Modcod::code)
      .def_readwrite("rate", &Modcod::rate)
      .def_readwrite("spectral_efficiency", &Modcod::spectral_efficiency)
      .def_readwrite("required_es_n0_db", &Modcod::required_es_n0_db)
      .def_readwrite("source", &Modcod::source)
      .def("__repr__", [](const Modcod& r) {
        return "Modcod('" + r.name + "', required_es_n0_db=" + format_number(r.required_es_n0_db) + ")";
      });
  py::class_<ModcodTable>(m, "ModcodTable", "Validated MODCOD rows (ConfigError names the offending row).")
      .def(py::init<>())
      .def(py::init<std::vector<Modcod>>(), "rows"_a)
      .def("add", &ModcodTable::add, "row"_a)
      .def_property_readonly("rows", &ModcodTable::rows)
      .def("size", &ModcodTable::size)
      .def("__len__", &ModcodTable::size)
      .def("empty", &ModcodTable::empty)
      .def_static("dvb_s2_normal_frame", &ModcodTable::dvb_s2_normal_frame,
                  "The 28 ideal DVB-S2 thresholds (EN 302 307-1 Table 13; values from memory, see link.hpp).")
      .def_static(
          "from_gmi_threshold",
          [](const std::vector<std::string>& mods, const std::vector<double>& rates, double gap_db) {
            py::gil_scoped_release nogil;
            return ModcodTable::from_gmi_threshold(mods, rates, gap_db);
          },
          "modulations"_a, "code_rates"_a, "gap_db"_a, "Rows from the BICM threshold of each modulation and rate.")
      .def_static("from_csv", &ModcodTable::from_csv, "text"_a, "source"_a = "<string>")
      .def_static("from_json", &ModcodTable::from_json, "text"_a, "source"_a = "<string>")
      .def("to_csv", &ModcodTable::to_csv)
      .def("to_json", &ModcodTable::to_json);
  py::class_<ModcodMargin>(m, "ModcodMargin", "The margin of one MODCOD at a link Es/N0.")
      .def_readonly("index", &ModcodMargin::index)
      .def_readonly("margin_db", &ModcodMargin::margin_db)
      .def_readonly("eb_n0_db", &ModcodMargin::eb_n0_db)
      .def_readonly("throughput_bps", &ModcodMargin::throughput_bps)
      .def_readonly("meets_margin", &ModcodMargin::meets_margin);
  py::class_<ModcodChoice>(m, "ModcodChoice", "Margins of every row and the best row meeting the margin.")
      .def_readonly("margins", &ModcodChoice::margins)
      .def_readonly("best", &ModcodChoice::best, "Row index, or None.")
      .def("throughput_bps", &ModcodChoice::throughput_bps)
      .def(
          "best_margin",
          [](const ModcodChoice& c) -> std::optional<ModcodMargin> {
            if (const auto* b = c.best_margin()) return *b;
            return std::nullopt;
          },
          "The best row's margin, or None.");
  m.def("select_modcod", &select_modcod, "table"_a, "link_es_n0_db"_a, "symbol_rate_bd"_a,
        "implementation_margin_db"_a, "required_margin_db"_a);

  // Scenario and budget.
  py::enum_<Platform>(m, "Platform").value("satellite", Platform::satellite).value("ground", Platform::ground);
  py::enum_<AntennaKind>(m, "AntennaKind")
      .value("fixed", AntennaKind::fixed)
      .value("scan_loss_array", AntennaKind::scan_loss_array)
      .value("lattice_array", AntennaKind::lattice_array);
  py::enum_<LossScaling>(m, "LossScaling").value("none", LossScaling::none).value("cosecant", LossScaling::cosecant);
  py::class_<AntennaSpec>(m, "AntennaSpec", "One antenna: fixed gain, cos^k scan-loss array, or lattice array.")
      .def(py::init<>())
      .def_readwrite("kind", &AntennaSpec::kind)
      .def_readwrite("gain_dbi", &AntennaSpec::gain_dbi)
      .def_readwrite("elements", &AntennaSpec::elements)
      .def_readwrite("element_gain_dbi", &AntennaSpec::element_gain_dbi)
      .def_readwrite("scan_loss_exponent", &AntennaSpec::scan_loss_exponent)
      .def_property(
          "lattice", [](const AntennaSpec& a) { return std::const_pointer_cast<PlanarArray>(a.lattice); },
          [](AntennaSpec& a, std::shared_ptr<PlanarArray> p) { a.lattice = std::move(p); }, "A PlanarArray or None.")
      .def_readwrite("scan_azimuth_deg", &AntennaSpec::scan_azimuth_deg)
      .def_readwrite("max_scan_deg", &AntennaSpec::max_scan_deg)
      .def_readwrite("array_loss_db", &AntennaSpec::array_loss_db)
      .def("element_count", &AntennaSpec::element_count)
      .def("broadside_gain_dbi", &AntennaSpec::broadside_gain_dbi)
      .def("gain_at_scan_dbi", &AntennaSpec::gain_at_scan_dbi, "scan_deg"_a)
      .def("is_array", &AntennaSpec::is_array)
      .def_static("lattice_array", &AntennaSpec::lattice_array, "config"_a);
  py::class_<TransmitterSpec>(m, "TransmitterSpec", "Transmitter: exactly one of eirp_dbw, power_dbw, element_power_dbw.")
      .def(py::init<>())
      .def_readwrite("platform", &TransmitterSpec::platform)
      .def_readwrite("name", &TransmitterSpec::name)
      .def_readwrite("eirp_dbw", &TransmitterSpec::eirp_dbw)
      .def_readwrite("power_dbw", &TransmitterSpec::power_dbw)
      .def_readwrite("element_power_dbw", &TransmitterSpec::element_power_dbw)
      .def_readwrite("feeder_loss_db", &TransmitterSpec::feeder_loss_db)
      .def_readwrite("antenna", &TransmitterSpec::antenna);
  py::class_<ReceiverSpec>(m, "ReceiverSpec", "Receiver: G/T directly, or an antenna and noise temperatures.")
      .def(py::init<>())
      .def_readwrite("platform", &ReceiverSpec::platform)
      .def_readwrite("name", &ReceiverSpec::name)
      .def_readwrite("antenna", &ReceiverSpec::antenna)
      .def_readwrite("g_over_t_db_k", &ReceiverSpec::g_over_t_db_k)
      .def_readwrite("system_temperature_k", &ReceiverSpec::system_temperature_k)
      .def_readwrite("antenna_temperature_k", &ReceiverSpec::antenna_temperature_k)
      .def_readwrite("noise_figure_db", &ReceiverSpec::noise_figure_db)
      .def_readwrite("feeder_loss_db", &ReceiverSpec::feeder_loss_db);
  py::class_<PathLosses>(m, "PathLosses", "Losses besides free space, dB (positive).")
      .def(py::init<>())
      .def_readwrite("atmospheric_db", &PathLosses::atmospheric_db)
      .def_readwrite("rain_db", &PathLosses::rain_db)
      .def_readwrite("pointing_db", &PathLosses::pointing_db)
      .def_readwrite("polarisation_db", &PathLosses::polarisation_db)
      .def_readwrite("other_db", &PathLosses::other_db)
      .def_readwrite("scaling", &PathLosses::scaling);
  py::class_<LinkScenario>(m, "LinkScenario",
                           "Everything a budget and a pass need (usually from load_link_scenario). Nested\n"
                           "structs read by reference; list and optional attributes are copies (assign anew).")
      .def(py::init<>())
      .def_readwrite("name", &LinkScenario::name)
      .def_readwrite("source", &LinkScenario::source)
      .def_readwrite("altitude_km", &LinkScenario::altitude_km)
      .def_readwrite("max_elevation_deg", &LinkScenario::max_elevation_deg)
      .def_readwrite("pass_elevations_deg", &LinkScenario::pass_elevations_deg)
      .def_readwrite("reference_elevation_deg", &LinkScenario::reference_elevation_deg)
      .def_readwrite("frequency_hz", &LinkScenario::frequency_hz)
      .def_readwrite("symbol_rate_bd", &LinkScenario::symbol_rate_bd)
      .def_readwrite("roll_off", &LinkScenario::roll_off)
      .def_readwrite("required_margin_db", &LinkScenario::required_margin_db)
      .def_readwrite("implementation_margin_db", &LinkScenario::implementation_margin_db)
      .def_readwrite("losses", &LinkScenario::losses)
      .def_readwrite("transmitter", &LinkScenario::transmitter)
      .def_readwrite("receiver", &LinkScenario::receiver)
      .def_readwrite("modcods", &LinkScenario::modcods)
      .def_readwrite("modcod_source", &LinkScenario::modcod_source);
  py::class_<BudgetLine>(m, "BudgetLine", "One named line of a budget table.")
      .def_readonly("key", &BudgetLine::key)
      .def_readonly("label", &BudgetLine::label)
      .def_readonly("value", &BudgetLine::value)
      .def_readonly("unit", &BudgetLine::unit)
      .def("__repr__", [](const BudgetLine& l) {
        return "BudgetLine('" + l.key + "', " + format_number(l.value) + " " + l.unit + ")";
      });
  py::class_<LinkBudget>(m, "LinkBudget", "A link budget at one elevation with every line item kept.")
      .def_readonly("elevation_deg", &LinkBudget::elevation_deg)
      .def_readonly("slant_range_km", &LinkBudget::slant_range_km)
      .def_readonly("central_angle_deg", &LinkBudget::central_angle_deg)
      .def_readonly("nadir_angle_deg", &LinkBudget::nadir_angle_deg)
      .def_readonly("delay_s", &LinkBudget::delay_s)
      .def_readonly("range_rate_m_s", &LinkBudget::range_rate_m_s)
      .def_readonly("doppler_hz", &LinkBudget::doppler_hz)
      .def_readonly("frequency_hz", &LinkBudget::frequency_hz)
      .def_readonly("wavelength_m", &LinkBudget::wavelength_m)
      .def_readonly("tx_power_dbw", &LinkBudget::tx_power_dbw)
      .def_readonly("tx_element_power_dbw", &LinkBudget::tx_element_power_dbw)
      .def_readonly("tx_elements", &LinkBudget::tx_elements)
      .def_readonly("tx_broadside_gain_dbi", &LinkBudget::tx_broadside_gain_dbi)
      .def_readonly("tx_scan_deg", &LinkBudget::tx_scan_deg)
      .def_readonly("tx_scan_loss_db", &LinkBudget::tx_scan_loss_db)
      .def_readonly("tx_antenna_gain_dbi", &LinkBudget::tx_antenna_gain_dbi)
      .def_readonly("tx_feeder_loss_db", &LinkBudget::tx_feeder_loss_db)
      .def_readonly("eirp_dbw", &LinkBudget::eirp_dbw)
      .def_readonly("free_space_loss_db", &LinkBudget::free_space_loss_db)
      .def_readonly("atmospheric_loss_db", &LinkBudget::atmospheric_loss_db)
      .def_readonly("rain_loss_db", &LinkBudget::rain_loss_db)
      .def_readonly("pointing_loss_db", &LinkBudget::pointing_loss_db)
      .def_readonly("polarisation_loss_db", &LinkBudget::polarisation_loss_db)
      .def_readonly("other_loss_db", &LinkBudget::other_loss_db)
      .def_readonly("rx_feeder_loss_db", &LinkBudget::rx_feeder_loss_db)
      .def_readonly("total_loss_db", &LinkBudget::total_loss_db)
      .def_readonly("rx_broadside_gain_dbi", &LinkBudget::rx_broadside_gain_dbi)
      .def_readonly("rx_scan_deg", &LinkBudget::rx_scan_deg)
      .def_readonly("rx_scan_loss_db", &LinkBudget::rx_scan_loss_db)
      .def_readonly("rx_antenna_gain_dbi", &LinkBudget::rx_antenna_gain_dbi)
      .def_readonly("system_temperature_k", &LinkBudget::system_temperature_k)
      .def_readonly("g_over_t_db_k", &LinkBudget::g_over_t_db_k)
      .def_readonly("boltzmann_dbw_per_k_hz", &LinkBudget::boltzmann_dbw_per_k_hz)
      .def_readonly("c_over_n0_dbhz", &LinkBudget::c_over_n0_dbhz)
      .def_readonly("symbol_rate_bd", &LinkBudget::symbol_rate_bd)
      .def_readonly("es_n0_db", &LinkBudget::es_n0_db)
      .def_readonly("occupied_bandwidth_hz", &LinkBudget::occupied_bandwidth_hz)
      .def_readonly("c_over_n_db", &LinkBudget::c_over_n_db)
      .def_readonly("available", &LinkBudget::available)
      .def_readonly("unavailable_reason", &LinkBudget::unavailable_reason)
      .def("lines", &LinkBudget::lines, "The table lines in order: transmitter, path, receiver, result.");
  m.def("parse_link_scenario", &parse_link_scenario, "toml_text"_a, "source"_a = "<string>",
        "A scenario from TOML (docs/link-scenario.md); InputError names source, line and key.");
  m.def("load_link_scenario", &load_link_scenario, "path"_a);
  m.def("compute_budget", &compute_budget, "scenario"_a, "elevation_deg"_a);
  py::class_<PassPoint>(m, "PassPoint", "One elevation of the pass table.")
      .def_readonly("budget", &PassPoint::budget)
      .def_readonly("choice", &PassPoint::choice);
  py::class_<LinkAnalysis>(m, "LinkAnalysis", "A scenario worked out: reference budget, choices, pass, notes.")
      .def_readonly("reference", &LinkAnalysis::reference)
      .def_readonly("reference_choice", &LinkAnalysis::reference_choice)
      .def_readonly("pass_", &LinkAnalysis::pass, "The pass table (`pass` is a Python keyword).")
      .def_readonly("notes", &LinkAnalysis::notes)
      .def_readonly("warnings", &LinkAnalysis::warnings)
      .def_readonly("cautions", &LinkAnalysis::cautions);
  m.def(
      "analyse_link",
      [](const LinkScenario& s, std::optional<double> reference_elevation_deg) {
        py::gil_scoped_release nogil;
        return analyse_link(s, reference_elevation_deg);
      },
      "scenario"_a, "reference_elevation_deg"_a = py::none(), "Works out the scenario (GIL released).");
  m.def("link_analysis_to_json", &link_analysis_to_json, "scenario"_a, "analysis"_a,
        "JSON of an analysis (as `qamsight link --json`).");
  m.def("link_throughput_svg", &link_throughput_svg, "scenario"_a, "analysis"_a);
  m.def("link_es_n0_svg", &link_es_n0_svg, "scenario"_a, "analysis"_a);
}

}  // namespace qamsight::python
