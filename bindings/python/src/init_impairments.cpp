// init_impairments: the RF impairment blocks of channel.hpp (phase noise, CFO, IQ, amplifiers, ADC).
#include "bindings.hpp"
#include "qamsight/channel.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

constexpr const char* kProcessDoc =
    "Processes complex64 samples (any array-like; same shape out). out may be the input array itself\n"
    "(in place) or a separate complex64 array; the block's state carries over between calls.";

template <class Block, class... Extra>
void def_process(py::class_<Block, Extra...>& cls) {
  cls.def(
      "process",
      [](Block& self, py::handle samples, py::object out) {
        auto in = input_array<cf32>(samples, "samples");
        auto o = output_array<cf32>(out, shape_of(in), "out");
        auto si = const_span(in);
        auto so = mutable_span(o);
        require_same_or_disjoint(si, so);
        py::gil_scoped_release nogil;
        self.process(si, so);
        return o;
      },
      "samples"_a, "out"_a = py::none(), kProcessDoc);
}

template <class Block, class... Extra>
void def_process_rng(py::class_<Block, Extra...>& cls) {
  cls.def(
      "process",
      [](Block& self, RandomStream& rng, py::handle samples, py::object out) {
        auto in = input_array<cf32>(samples, "samples");
        auto o = output_array<cf32>(out, shape_of(in), "out");
        auto si = const_span(in);
        auto so = mutable_span(o);
        require_same_or_disjoint(si, so);
        py::gil_scoped_release nogil;
        self.process(rng, si, so);
        return o;
      },
      "rng"_a, "samples"_a, "out"_a = py::none(),
      "Multiplies complex64 samples by exp(j phi[n]), drawing from rng (Substream.phase_noise); out may\n"
      "be the input itself. The same numbers are drawn however a run is cut into calls.");
  cls.def(
      "generate",
      [](Block& self, RandomStream& rng, py::handle size_or_out_) {
        auto a = size_or_out<double>(size_or_out_, "size_or_out");
        auto s = mutable_span(a);
        py::gil_scoped_release nogil;
        self.generate(rng, s);
        return a;
      },
      "rng"_a, "size_or_out"_a, "The phase itself (rad, float64), advancing the state as process() does.");
}

template <class Amp, class Config>
void def_amplifier_common(py::class_<Amp>& cls) {
  cls.def(py::init<const Config&>(), "config"_a)
      .def_property_readonly("config", &Amp::config)
      .def(
          "am_am",
          [](const Amp& a, py::object r) { return py::vectorize([&a](double x) { return a.am_am(x); })(r); }, "r"_a,
           "AM/AM of the model at model input amplitude r (vectorised).")
      .def("input_saturation_power", &Amp::input_saturation_power)
      .def("output_saturation_power", &Amp::output_saturation_power)
      .def_property_readonly("drive_scale", &Amp::drive_scale)
      .def("measured_output_backoff_db", &Amp::measured_output_backoff_db,
           "OBO over the samples processed since construction or reset(); NaN if none.")
      .def("measured_input_backoff_db", &Amp::measured_input_backoff_db)
      .def_property_readonly("meter", &Amp::meter)
      .def(
          "predicted_output_backoff_db",
          [](const Amp& a, py::handle values) {
            auto v = input_vector<cf64>(values, "input_values");
            return a.predicted_output_backoff_db(const_span(v));
          },
          "input_values"_a, "OBO predicted for equiprobable input values (e.g. constellation points).")
      .def("predicted_output_backoff_db_gaussian", &Amp::predicted_output_backoff_db_gaussian,
           "OBO predicted for a circular complex Gaussian input of power mean_input_power.")
      .def("reset", &Amp::reset);
  def_process(cls);
}

}  // namespace

void init_impairments(py::module_& m) {
  // Phase noise (a): Wiener.
  py::class_<WienerPhaseNoiseConfig>(m, "WienerPhaseNoiseConfig",
                                     "Wiener phase noise of full 3-dB (Lorentzian) linewidth linewidth_hz.")
      .def(py::init([](double linewidth_hz, double sample_rate_hz, double initial_phase_rad) {
             return WienerPhaseNoiseConfig{linewidth_hz, sample_rate_hz, initial_phase_rad};
           }),
           "linewidth_hz"_a = 100.0, "sample_rate_hz"_a = 1.0e6, "initial_phase_rad"_a = 0.0)
      .def_readwrite("linewidth_hz", &WienerPhaseNoiseConfig::linewidth_hz)
      .def_readwrite("sample_rate_hz", &WienerPhaseNoiseConfig::sample_rate_hz)
      .def_readwrite("initial_phase_rad", &WienerPhaseNoiseConfig::initial_phase_rad);
  py::class_<WienerPhaseNoise> wiener(m, "WienerPhaseNoise",
                                      "Random-walk phase: increments N(0, 2 pi linewidth / fs).");
  wiener.def(py::init<const WienerPhaseNoiseConfig&>(), "config"_a)
      .def_property_readonly("config", &WienerPhaseNoise::config)
      .def("increment_variance", &WienerPhaseNoise::increment_variance, "2 pi linewidth / fs (rad^2).")
      .def_property_readonly("phase_rad", &WienerPhaseNoise::phase_rad, "Phase of the last produced sample.")
      .def("reset", &WienerPhaseNoise::reset);
  def_process_rng(wiener);

  // Phase noise (b): mask.
  py::class_<PhaseNoisePoint>(m, "PhaseNoisePoint", "One point of a single-sideband mask: L(offset) in dBc/Hz.")
      .def(py::init([](double offset_hz, double dbc_hz) { return PhaseNoisePoint{offset_hz, dbc_hz}; }),
           "offset_hz"_a = 0.0, "dbc_hz"_a = 0.0)
      .def_readwrite("offset_hz", &PhaseNoisePoint::offset_hz)
      .def_readwrite("dbc_hz", &PhaseNoisePoint::dbc_hz)
      .def("__repr__", [](const PhaseNoisePoint& p) {
        return "PhaseNoisePoint(offset_hz=" + format_number(p.offset_hz) + ", dbc_hz=" + format_number(p.dbc_hz) + ")";
      });
  py::enum_<MaskExtension>(m, "MaskExtension", "What a mask means outside its span.")
      .value("flat", MaskExtension::flat)
      .value("zero", MaskExtension::zero);
  py::class_<PhaseNoiseMask, std::shared_ptr<PhaseNoiseMask>>(
      m, "PhaseNoiseMask",
      "A single-sideband phase-noise mask (offsets > 0, strictly increasing, >= 2 points), log-log\n"
      "interpolated. density/level_dbc_hz are vectorised over offsets.")
      .def(py::init<std::vector<PhaseNoisePoint>>(), "points"_a)
      .def_static("from_csv", &PhaseNoiseMask::from_csv, "path"_a,
                  "Reads 'offset_hz,dbc_hz' lines ('#' comments, optional header); InputError names file and line.")
      .def_property_readonly("points",
                             [](const PhaseNoiseMask& k) {
                               return std::vector<PhaseNoisePoint>(k.points().begin(), k.points().end());
                             })
      .def_property_readonly("first_offset_hz", &PhaseNoiseMask::first_offset_hz)
      .def_property_readonly("last_offset_hz", &PhaseNoiseMask::last_offset_hz)
      .def(
          "density",
          [](const PhaseNoiseMask& k, py::object offset_hz, MaskExtension below, MaskExtension above) {
            return py::vectorize([&](double f) { return k.density(f, below, above); })(offset_hz);
          },
          "offset_hz"_a, "below"_a = MaskExtension::flat, "above"_a = MaskExtension::flat,
          "L(f), linear (1/Hz).")
      .def(
          "level_dbc_hz",
          [](const PhaseNoiseMask& k, py::object offset_hz) {
            return py::vectorize([&](double f) { return k.level_dbc_hz(f); })(offset_hz);
          },
          "offset_hz"_a, "L(f) in dBc/Hz inside the span (flat outside).")
      .def("integral", &PhaseNoiseMask::integral, "f_lo_hz"_a, "f_hi_hz"_a,
           "Integral of L(f) df over [f_lo, f_hi] within the span (exact for the power-law segments).")
      .def("phase_variance", &PhaseNoiseMask::phase_variance, "2 * integral of L over the span (rad^2).")
      .def("rms_phase_rad", &PhaseNoiseMask::rms_phase_rad)
      .def("rms_phase_deg", &PhaseNoiseMask::rms_phase_deg);
  py::class_<MaskPhaseNoiseConfig>(m, "MaskPhaseNoiseConfig", "Synthesis settings of mask phase noise.")
      .def(py::init([](double sample_rate_hz, MaskExtension below_first, MaskExtension above_last,
                       std::size_t filter_length) {
             return MaskPhaseNoiseConfig{sample_rate_hz, below_first, above_last, filter_length};
           }),
           "sample_rate_hz"_a = 1.0e6, "below_first"_a = MaskExtension::flat, "above_last"_a = MaskExtension::flat,
           "filter_length"_a = 0)
      .def_readwrite("sample_rate_hz", &MaskPhaseNoiseConfig::sample_rate_hz)
      .def_readwrite("below_first", &MaskPhaseNoiseConfig::below_first)
      .def_readwrite("above_last", &MaskPhaseNoiseConfig::above_last)
      .def_readwrite("filter_length", &MaskPhaseNoiseConfig::filter_length, "0 = automatic; else 2^k, 64 to 2^20.");
  py::class_<MaskPhaseNoise> masked(m, "MaskPhaseNoise",
                                    "Stationary Gaussian phase noise following a mask (FIR by frequency sampling,\n"
                                    "overlap-save).");
  masked.def(py::init<const PhaseNoiseMask&, const MaskPhaseNoiseConfig&>(), "mask"_a, "config"_a)
      .def_property_readonly("mask", &MaskPhaseNoise::mask)
      .def_property_readonly("config", &MaskPhaseNoise::config)
      .def_property_readonly("filter_length", &MaskPhaseNoise::filter_length)
      .def("synthesised_variance", &MaskPhaseNoise::synthesised_variance, "Variance of the synthesised phase (rad^2).")
      .def("reset", &MaskPhaseNoise::reset);
  def_process_rng(masked);

  // Frequency offset and rotation.
  py::class_<FrequencyOffsetConfig>(m, "FrequencyOffsetConfig", "Carrier offset; |offset| <= fs/2.")
      .def(py::init([](double offset_hz, double sample_rate_hz, double initial_phase_deg) {
             return FrequencyOffsetConfig{offset_hz, sample_rate_hz, initial_phase_deg};
           }),
           "offset_hz"_a = 0.0, "sample_rate_hz"_a = 1.0, "initial_phase_deg"_a = 0.0)
      .def_readwrite("offset_hz", &FrequencyOffsetConfig::offset_hz)
      .def_readwrite("sample_rate_hz", &FrequencyOffsetConfig::sample_rate_hz)
      .def_readwrite("initial_phase_deg", &FrequencyOffsetConfig::initial_phase_deg);
  py::class_<FrequencyOffset> cfo(m, "FrequencyOffset",
                                  "out[n] = in[n] exp(j (theta0 + 2 pi f n / fs)), phase continuous across calls.");
  cfo.def(py::init<const FrequencyOffsetConfig&>(), "config"_a)
      .def_property_readonly("config", &FrequencyOffset::config)
      .def_property_readonly("phase_cycles", &FrequencyOffset::phase_cycles, "Phase of the next sample, cycles.")
      .def("reset", &FrequencyOffset::reset);
  def_process(cfo);
  py::class_<PhaseRotationConfig>(m, "PhaseRotationConfig", "Static rotation, -360 to 360 degrees.")
      .def(py::init([](double rotation_deg) { return PhaseRotationConfig{rotation_deg}; }), "rotation_deg"_a = 0.0)
      .def_readwrite("rotation_deg", &PhaseRotationConfig::rotation_deg);
  py::class_<PhaseRotation> rot(m, "PhaseRotation", "out = in exp(j rotation).");
  rot.def(py::init<const PhaseRotationConfig&>(), "config"_a)
      .def_property_readonly("config", &PhaseRotation::config)
      .def_property_readonly("phasor", &PhaseRotation::phasor);
  def_process(rot);

  // IQ imbalance and DC offset.
  py::class_<IqImbalanceConfig>(m, "IqImbalanceConfig", "Q/I gain (dB, -10..10) and quadrature error (deg, -45..45).")
      .def(py::init([](double gain_db, double phase_deg) { return IqImbalanceConfig{gain_db, phase_deg}; }),
           "gain_db"_a = 0.0, "phase_deg"_a = 0.0)
      .def_readwrite("gain_db", &IqImbalanceConfig::gain_db)
      .def_readwrite("phase_deg", &IqImbalanceConfig::phase_deg);
  py::class_<IqImbalance> iq(m, "IqImbalance", "y = mu x + nu x*, I branch as reference.");
  iq.def(py::init<const IqImbalanceConfig&>(), "config"_a)
      .def_property_readonly("config", &IqImbalance::config)
      .def_property_readonly("mu", &IqImbalance::mu)
      .def_property_readonly("nu", &IqImbalance::nu)
      .def("image_rejection_ratio_db", &IqImbalance::image_rejection_ratio_db, "10 log10(|mu|^2/|nu|^2).");
  def_process(iq);
  py::class_<DcOffsetConfig>(m, "DcOffsetConfig", "Complex DC term relative to signal_rms.")
      .def(py::init([](cf64 offset, double signal_rms) { return DcOffsetConfig{offset, signal_rms}; }),
           "offset"_a = cf64{0.0, 0.0}, "signal_rms"_a = 1.0)
      .def_readwrite("offset", &DcOffsetConfig::offset)
      .def_readwrite("signal_rms", &DcOffsetConfig::signal_rms);
  py::class_<DcOffset> dc(m, "DcOffset", "out = in + offset * signal_rms.");
  dc.def(py::init<const DcOffsetConfig&>(), "config"_a)
      .def_property_readonly("config", &DcOffset::config)
      .def_property_readonly("value", &DcOffset::value);
  def_process(dc);

  // Amplifiers.
  py::class_<AmplifierMeter>(m, "AmplifierMeter", "Power sums of an amplifier block, in model units.")
      .def_readonly("input_power", &AmplifierMeter::input_power)
      .def_readonly("output_power", &AmplifierMeter::output_power)
      .def_readonly("count", &AmplifierMeter::count);
  py::class_<SalehConfig>(m, "SalehConfig", "Saleh TWT model parameters, input back-off and drive.")
      .def(py::init([](double alpha_a, double beta_a, double alpha_phi, double beta_phi, double input_backoff_db,
                       double mean_input_power, bool normalise_gain) {
             return SalehConfig{alpha_a, beta_a, alpha_phi, beta_phi, input_backoff_db, mean_input_power,
                                normalise_gain};
           }),
           "alpha_a"_a = SalehConfig{}.alpha_a, "beta_a"_a = SalehConfig{}.beta_a,
           "alpha_phi"_a = SalehConfig{}.alpha_phi, "beta_phi"_a = SalehConfig{}.beta_phi,
           "input_backoff_db"_a = SalehConfig{}.input_backoff_db, "mean_input_power"_a = 1.0,
           "normalise_gain"_a = true)
      .def_readwrite("alpha_a", &SalehConfig::alpha_a)
      .def_readwrite("beta_a", &SalehConfig::beta_a)
      .def_readwrite("alpha_phi", &SalehConfig::alpha_phi)
      .def_readwrite("beta_phi", &SalehConfig::beta_phi)
      .def_readwrite("input_backoff_db", &SalehConfig::input_backoff_db)
      .def_readwrite("mean_input_power", &SalehConfig::mean_input_power)
      .def_readwrite("normalise_gain", &SalehConfig::normalise_gain);
  py::class_<SalehAmplifier> saleh(m, "SalehAmplifier", "Saleh's amplitude-phase TWT model (Saleh 1981).");
  def_amplifier_common<SalehAmplifier, SalehConfig>(saleh);
  saleh.def(
      "am_pm_rad",
      [](const SalehAmplifier& a, py::object r) {
        return py::vectorize([&a](double x) { return a.am_pm_rad(x); })(r);
      },
      "r"_a,
            "AM/PM (rad) at model input amplitude r (vectorised).");
  py::class_<RappConfig>(m, "RappConfig", "Rapp solid-state model parameters, input back-off and drive.")
      .def(py::init([](double smoothness, double saturation_amplitude, double gain, double input_backoff_db,
                       double mean_input_power, bool normalise_gain) {
             return RappConfig{smoothness, saturation_amplitude, gain, input_backoff_db, mean_input_power,
                               normalise_gain};
           }),
           "smoothness"_a = 2.0, "saturation_amplitude"_a = 1.0, "gain"_a = 1.0, "input_backoff_db"_a = 6.0,
           "mean_input_power"_a = 1.0, "normalise_gain"_a = true)
      .def_readwrite("smoothness", &RappConfig::smoothness)
      .def_readwrite("saturation_amplitude", &RappConfig::saturation_amplitude)
      .def_readwrite("gain", &RappConfig::gain)
      .def_readwrite("input_backoff_db", &RappConfig::input_backoff_db)
      .def_readwrite("mean_input_power", &RappConfig::mean_input_power)
      .def_readwrite("normalise_gain", &RappConfig::normalise_gain);
  py::class_<RappAmplifier> rapp(m, "RappAmplifier", "Rapp's solid-state amplifier model (Rapp 1991), no AM/PM.");
  def_amplifier_common<RappAmplifier, RappConfig>(rapp);

  // Quantiser.
  py::enum_<ClipMode>(m, "ClipMode", "How the quantiser's full scale is set.")
      .value("full_scale", ClipMode::full_scale)
      .value("loading", ClipMode::loading);
  py::class_<QuantiserConfig>(m, "QuantiserConfig", "Mid-rise uniform I/Q quantiser (ADC) settings.")
      .def(py::init([](unsigned bits, ClipMode clip_mode, double full_scale, double loading_db, double signal_power) {
             return QuantiserConfig{bits, clip_mode, full_scale, loading_db, signal_power};
           }),
           "bits"_a = 10, "clip_mode"_a = ClipMode::loading, "full_scale"_a = 1.0, "loading_db"_a = 12.0,
           "signal_power"_a = 1.0)
      .def_readwrite("bits", &QuantiserConfig::bits)
      .def_readwrite("clip_mode", &QuantiserConfig::clip_mode)
      .def_readwrite("full_scale", &QuantiserConfig::full_scale)
      .def_readwrite("loading_db", &QuantiserConfig::loading_db)
      .def_readwrite("signal_power", &QuantiserConfig::signal_power);
  py::class_<Quantiser> adc(m, "Quantiser", "Mid-rise uniform quantiser on I and Q separately.");
  adc.def(py::init<const QuantiserConfig&>(), "config"_a)
      .def_property_readonly("config", &Quantiser::config)
      .def_property_readonly("full_scale", &Quantiser::full_scale)
      .def_property_readonly("step", &Quantiser::step)
      .def_property_readonly("clipped_rails", &Quantiser::clipped_rails)
      .def("reset", &Quantiser::reset);
  def_process(adc);

  // Multipath.
  py::class_<MultipathTap>(m, "MultipathTap", "A sample-spaced path: delay (0 to 65536) and complex gain.")
      .def(py::init([](std::size_t delay_samples, cf64 gain) { return MultipathTap{delay_samples, gain}; }),
           "delay_samples"_a = 0, "gain"_a = cf64{1.0, 0.0})
      .def_readwrite("delay_samples", &MultipathTap::delay_samples)
      .def_readwrite("gain", &MultipathTap::gain)
      .def("__repr__", [](const MultipathTap& t) {
        return "MultipathTap(delay_samples=" + std::to_string(t.delay_samples) + ", gain=(" +
               format_number(t.gain.real()) + (t.gain.imag() < 0 ? "" : "+") + format_number(t.gain.imag()) + "j))";
      });
  py::class_<MultipathConfig>(m, "MultipathConfig", "Static multipath: 1 to 4096 taps, optional energy normalisation.")
      .def(py::init([](std::vector<MultipathTap> taps, bool normalise_energy) {
             return MultipathConfig{std::move(taps), normalise_energy};
           }),
           "taps"_a = std::vector<MultipathTap>{MultipathTap{}}, "normalise_energy"_a = false)
      .def_readwrite("taps", &MultipathConfig::taps)
      .def_readwrite("normalise_energy", &MultipathConfig::normalise_energy)
      .def_static(
          "from_tap_vector",
          [](py::handle taps, bool normalise_energy) {
            auto t = input_vector<cf64>(taps, "taps");
            return MultipathConfig::from_tap_vector(const_span(t), normalise_energy);
          },
          "taps"_a, "normalise_energy"_a = false, "Taps from a dense vector: tap k has delay k.");
  py::class_<MultipathChannel> mp(m, "MultipathChannel", "y[n] = sum_k g_k x[n - d_k], streaming across calls.");
  mp.def(py::init<const MultipathConfig&>(), "config"_a)
      .def_property_readonly("taps",
                             [](const MultipathChannel& c) {
                               return std::vector<MultipathTap>(c.taps().begin(), c.taps().end());
                             })
      .def_property_readonly("max_delay", &MultipathChannel::max_delay)
      .def("reset", &MultipathChannel::reset);
  def_process(mp);
}

}  // namespace qamsight::python
