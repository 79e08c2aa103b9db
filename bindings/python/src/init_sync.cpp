// init_sync: receiver synchronisation: loop gains and the symbol-rate carrier phase tracker.
#include <complex>

#include "bindings.hpp"
#include "qamsight/sync.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_sync(py::module_& m) {
  py::class_<PhaseLoopGains>(m, "PhaseLoopGains", "Loop filter gains kp (proportional), ki (integral).")
      .def(py::init([](double kp, double ki) { return PhaseLoopGains{kp, ki}; }), "kp"_a = 0.0, "ki"_a = 0.0)
      .def_readwrite("kp", &PhaseLoopGains::kp)
      .def_readwrite("ki", &PhaseLoopGains::ki);
  m.def("phase_loop_gains", &phase_loop_gains, "loop_bandwidth"_a, "damping"_a, "order"_a,
        "Gains for a noise bandwidth B_L T_u and damping (second order: bilinear map of the\n"
        "continuous loop; first order: kp = 4 b / (1 + 2 b)).");

  py::enum_<PhaseDetector>(m, "PhaseDetector",
                           "Phase detector of the tracker: arg (decision angle) or soft (posterior-mean symbol).")
      .value("arg", PhaseDetector::arg)
      .value("soft", PhaseDetector::soft);
  m.def(
      "soft_symbol",
      [](const Constellation& c, std::complex<double> y, double n0) {
        require_range_open_low("n0", n0, 0.0, 1e9);
        return soft_symbol(c, y, n0);
      },
      "constellation"_a, "y"_a, "n0"_a,
      "Posterior mean E[d | y] of a uniform constellation point after complex AWGN of total variance n0.");

  py::class_<PhaseTrackerConfig>(m, "PhaseTrackerConfig", "Settings of the decision-directed phase tracker.")
      .def(py::init([](double loop_bandwidth, double damping, unsigned order, std::size_t pilot_period,
                       std::size_t preamble_symbols, bool decisions_between_pilots, double initial_phase_rad,
                       double initial_frequency_rad, PhaseDetector detector, double noise_variance) {
             return PhaseTrackerConfig{loop_bandwidth,           damping,           order,
                                       pilot_period,             preamble_symbols,  decisions_between_pilots,
                                       initial_phase_rad,        initial_frequency_rad, detector,
                                       noise_variance};
           }),
           "loop_bandwidth"_a = 0.01, "damping"_a = 0.7071, "order"_a = 2, "pilot_period"_a = 0,
           "preamble_symbols"_a = 0, "decisions_between_pilots"_a = true, "initial_phase_rad"_a = 0.0,
           "initial_frequency_rad"_a = 0.0, "detector"_a = PhaseDetector::arg, "noise_variance"_a = 0.0)
      .def_readwrite("detector", &PhaseTrackerConfig::detector)
      .def_readwrite("noise_variance", &PhaseTrackerConfig::noise_variance)
      .def_readwrite("loop_bandwidth", &PhaseTrackerConfig::loop_bandwidth)
      .def_readwrite("damping", &PhaseTrackerConfig::damping)
      .def_readwrite("order", &PhaseTrackerConfig::order)
      .def_readwrite("pilot_period", &PhaseTrackerConfig::pilot_period)
      .def_readwrite("preamble_symbols", &PhaseTrackerConfig::preamble_symbols)
      .def_readwrite("decisions_between_pilots", &PhaseTrackerConfig::decisions_between_pilots)
      .def_readwrite("initial_phase_rad", &PhaseTrackerConfig::initial_phase_rad)
      .def_readwrite("initial_frequency_rad", &PhaseTrackerConfig::initial_frequency_rad);

  py::class_<PhaseTracker>(m, "PhaseTracker",
                           "Decision-directed (optionally pilot-aided) carrier phase tracker at symbol rate.")
      .def(py::init<const PhaseTrackerConfig&, const Constellation&>(), "config"_a, "constellation"_a)
      .def_property_readonly("config", &PhaseTracker::config)
      .def_property_readonly("symbol_gains", &PhaseTracker::symbol_gains)
      .def_property_readonly("pilot_gains", &PhaseTracker::pilot_gains)
      .def(
          "process",
          [](PhaseTracker& self, py::handle in, py::object reference, py::object out, bool phase_estimate) {
            auto x = input_vector<cf32>(in, "samples");
            const auto n = static_cast<py::ssize_t>(x.size());
            InArray<cf32> ref = reference.is_none() ? InArray<cf32>(0) : input_vector<cf32>(reference, "reference");
            const bool needs_reference = self.config().pilot_period > 0 || self.config().preamble_symbols > 0;
            if (!reference.is_none() && ref.size() != n) {
              throw py::value_error("reference: expected " + std::to_string(n) + " symbols (one per input), got " +
                                    std::to_string(ref.size()));
            }
            if (reference.is_none() && needs_reference && n > 0) {
              throw py::value_error("reference: this tracker has pilots or a preamble; pass the known symbols "
                                    "(one per input; only pilot and preamble positions are read)");
            }
            auto y = output_array<cf32>(out, {n}, "out");
            py::array_t<double> phases(phase_estimate ? n : 0);
            auto sx = const_span(x);
            auto sy = mutable_span(y);
            require_same_or_disjoint(sx, std::span<const cf32>(sy));
            auto sr = const_span(ref);
            auto sp = mutable_span(phases);
            {
              py::gil_scoped_release nogil;
              self.process(sx, sy, sr, sp);
            }
            if (phase_estimate) return py::object(py::make_tuple(y, phases));
            return py::object(y);
          },
          "samples"_a, "reference"_a = py::none(), "out"_a = py::none(), "phase_estimate"_a = false,
          "De-rotated symbols (complex64; out may be the input for in-place). reference: known symbols at\n"
          "the same indices (needed with pilots or a preamble). phase_estimate=True returns (out, theta)\n"
          "with theta[n] in rad (float64).")
      .def_property_readonly("phase_rad", &PhaseTracker::phase_rad)
      .def_property_readonly("frequency_rad", &PhaseTracker::frequency_rad, "rad per symbol.")
      .def_property_readonly("symbols", &PhaseTracker::symbols)
      .def("error_rms_rad", &PhaseTracker::error_rms_rad, "RMS detector error since reset (NaN before).")
      .def("reset", &PhaseTracker::reset)
      .def("set_noise_variance", &PhaseTracker::set_noise_variance, "n0"_a,
           "The noise variance the soft detector assumes (0 < n0 <= 1e9).");
}

}  // namespace qamsight::python
