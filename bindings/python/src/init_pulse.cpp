// init_pulse: raised-cosine pulses, tap design, polyphase interpolator, matched decimator, FIR filter.
#include "bindings.hpp"
#include "qamsight/pulse.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

std::vector<double> real_taps(py::handle taps) {
  auto t = input_vector<double>(taps, "taps");
  return std::vector<double>(t.data(), t.data() + t.size());
}

template <class Sample>
void bind_filters(py::module_& m, const std::string& suffix, const char* dtype) {
  using Interp = PolyphaseInterpolator<Sample>;
  using Dec = MatchedDecimator<Sample>;
  using Fir = FirFilter<Sample>;
  const std::string note = std::string(" Samples are ") + dtype + ".";

  py::class_<Interp>(m, ("PolyphaseInterpolator" + suffix).c_str(),
                     ("Transmit filter: symbols in, samples_per_symbol filtered samples per symbol out (the\n"
                      "taps' group delay is kept). State carries over between calls." + note)
                         .c_str())
      .def(py::init([](py::handle taps, int sps) {
             const auto t = real_taps(taps);
             return Interp(t, sps);
           }),
           "taps"_a, "samples_per_symbol"_a)
      .def(py::init<const PulseSpec&>(), "spec"_a)
      .def_property_readonly("samples_per_symbol", &Interp::samples_per_symbol)
      .def_property_readonly("tap_count", &Interp::tap_count)
      .def_property_readonly("delay_samples", &Interp::delay_samples, "Group delay of symmetric taps, output samples.")
      .def("output_length", &Interp::output_length, "symbols"_a)
      .def(
          "process",
          [](Interp& self, py::handle symbols, py::object out) {
            auto in = input_vector<Sample>(symbols, "symbols");
            auto o = output_array<Sample>(out, {static_cast<py::ssize_t>(self.output_length(in.size()))}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            require_disjoint(si, so);
            py::gil_scoped_release nogil;
            self.process(si, so);
            return o;
          },
          "symbols"_a, "out"_a = py::none(), "Symbols -> output_length(len(symbols)) samples (not in place).")
      .def("reset", &Interp::reset);

  py::class_<Dec>(m, ("MatchedDecimator" + suffix).c_str(),
                  ("Receive filter keeping every (sps / outputs_per_symbol)-th output at `phase`; output\n"
                   "length depends on the decimation phase (output_length)." + note)
                      .c_str())
      .def(py::init([](py::handle taps, int sps, int outputs_per_symbol, int phase) {
             const auto t = real_taps(taps);
             return Dec(t, sps, outputs_per_symbol, phase);
           }),
           "taps"_a, "samples_per_symbol"_a, "outputs_per_symbol"_a = 1, "phase"_a = 0)
      .def(py::init<const PulseSpec&, int, int>(), "spec"_a, "outputs_per_symbol"_a = 1, "phase"_a = 0)
      .def_property_readonly("samples_per_symbol", &Dec::samples_per_symbol)
      .def_property_readonly("outputs_per_symbol", &Dec::outputs_per_symbol)
      .def_property_readonly("tap_count", &Dec::tap_count)
      .def("output_length", &Dec::output_length, "input_length"_a,
           "Outputs the next process() call gives for input_length samples.")
      .def(
          "process",
          [](Dec& self, py::handle samples, py::object out) {
            auto in = input_vector<Sample>(samples, "samples");
            auto o = output_array<Sample>(out, {static_cast<py::ssize_t>(self.output_length(in.size()))}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            require_disjoint(si, so);
            py::gil_scoped_release nogil;
            self.process(si, so);
            return o;
          },
          "samples"_a, "out"_a = py::none(), "Samples -> output_length(len(samples)) outputs (not in place).")
      .def("reset", &Dec::reset);

  py::class_<Fir>(m, ("FirFilter" + suffix).c_str(),
                  ("Streaming FIR y[n] = sum h[k] x[n-k] with real or complex taps (complex if the taps\n"
                   "array is complex), direct or FFT overlap-save; same length out, in place allowed." + note)
                      .c_str())
      .def(py::init([](py::handle taps, FirMethod method) {
             py::array any = py::array::ensure(taps);
             if (any && any.dtype().kind() == 'c') {
               auto t = input_vector<cf64>(taps, "taps");
               return Fir(const_span(t), method);
             }
             const auto t = real_taps(taps);
             return Fir(std::span<const double>(t), method);
           }),
           "taps"_a, "method"_a = FirMethod::automatic)
      .def_property_readonly("tap_count", &Fir::tap_count)
      .def_property_readonly("uses_overlap_save", &Fir::uses_overlap_save)
      .def_property_readonly("fft_size", &Fir::fft_size, "FFT size of the overlap-save plan (0 for direct).")
      .def("output_length", &Fir::output_length, "input_length"_a)
      .def(
          "process",
          [](Fir& self, py::handle samples, py::object out) {
            auto in = input_vector<Sample>(samples, "samples");
            auto o = output_array<Sample>(out, {static_cast<py::ssize_t>(in.size())}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            require_same_or_disjoint(si, so);
            py::gil_scoped_release nogil;
            self.process(si, so);
            return o;
          },
          "samples"_a, "out"_a = py::none(), "Filters the samples (same length; out may be the input itself).")
      .def("reset", &Fir::reset);
}

}  // namespace

void init_pulse(py::module_& m) {
  m.def("root_raised_cosine_pulse",
        py::vectorize([](double tau, double beta) { return root_raised_cosine_pulse(tau, beta); }), "tau"_a,
        "roll_off"_a, "Unit-energy RRC pulse g(tau), tau = t/T (vectorised; NaN for roll_off outside (0, 1]).");
  m.def("raised_cosine_pulse", py::vectorize([](double tau, double beta) { return raised_cosine_pulse(tau, beta); }),
        "tau"_a, "roll_off"_a, "Raised-cosine (Nyquist) pulse p(tau), p(0) = 1 (vectorised).");
  m.def("raised_cosine_spectrum",
        py::vectorize([](double f, double beta) { return raised_cosine_spectrum(f, beta); }), "f"_a, "roll_off"_a,
        "Raised-cosine spectrum X(f), f in cycles per symbol (vectorised).");

  py::enum_<PulseFamily>(m, "PulseFamily", "Raised-cosine family of a sampled pulse.")
      .value("root_raised_cosine", PulseFamily::root_raised_cosine)
      .value("raised_cosine", PulseFamily::raised_cosine);
  py::class_<PulseSpec>(m, "PulseSpec",
                        "A sampled raised-cosine-family pulse: roll_off in (0, 1], span_symbols even 4..256 with\n"
                        "span * roll_off >= 1, samples_per_symbol 1..64.")
      .def(py::init([](PulseFamily family, double roll_off, int span_symbols, int samples_per_symbol) {
             return PulseSpec{family, roll_off, span_symbols, samples_per_symbol};
           }),
           "family"_a = PulseFamily::root_raised_cosine, "roll_off"_a = 0.35, "span_symbols"_a = 10,
           "samples_per_symbol"_a = 4)
      .def_readwrite("family", &PulseSpec::family)
      .def_readwrite("roll_off", &PulseSpec::roll_off)
      .def_readwrite("span_symbols", &PulseSpec::span_symbols)
      .def_readwrite("samples_per_symbol", &PulseSpec::samples_per_symbol);
  m.def("check_pulse_spec", &check_pulse_spec, "spec"_a, "Raises ConfigError naming the field unless valid.");
  m.def("pulse_tap_count", &pulse_tap_count, "spec"_a, "span_symbols * samples_per_symbol + 1.");
  m.def(
      "pulse_taps", [](const PulseSpec& spec) { return vector_to_array(pulse_taps(spec)); }, "spec"_a,
      "The centred unit-energy taps (float64 array, no copy).");
  m.def("matched_cascade_isi_power", &matched_cascade_isi_power, "spec"_a,
        "ISI power of the pulse followed by its matched filter, relative to the peak (linear).");

  py::enum_<FirMethod>(m, "FirMethod", "How a FirFilter computes its convolution.")
      .value("automatic", FirMethod::automatic)
      .value("direct", FirMethod::direct)
      .value("overlap_save", FirMethod::overlap_save);
  m.attr("OVERLAP_SAVE_MIN_TAPS") = kOverlapSaveMinTaps;
  m.attr("OVERLAP_SAVE_MIN_COMPLEX_TAPS") = kOverlapSaveMinComplexTaps;

  bind_filters<cf32>(m, "", "complex64");
  bind_filters<cf64>(m, "D", "complex128 (the double-precision instantiation)");
}

}  // namespace qamsight::python
