// init_evm: EVM and MER of symbol-spaced captures with a least-squares carrier fit.
#include "bindings.hpp"
#include "qamsight/evm.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_evm(py::module_& m) {
  py::enum_<EvmNormalisation>(m, "EvmNormalisation", "Which constellation power the error is divided by.")
      .value("average_power", EvmNormalisation::average_power)
      .value("peak_power", EvmNormalisation::peak_power);
  py::class_<EvmOptions>(m, "EvmOptions", "How measure_evm fits and reports (see evm.hpp).")
      .def(py::init([](bool data_aided, EvmNormalisation normalisation, bool remove_frequency, bool remove_phase,
                       bool remove_gain, bool keep_error_vectors, double max_frequency, unsigned max_iterations) {
             return EvmOptions{data_aided,  normalisation,      remove_frequency, remove_phase,
                               remove_gain, keep_error_vectors, max_frequency,    max_iterations};
           }),
           "data_aided"_a = true, "normalisation"_a = EvmNormalisation::average_power, "remove_frequency"_a = true,
           "remove_phase"_a = true, "remove_gain"_a = true, "keep_error_vectors"_a = true, "max_frequency"_a = 0.5,
           "max_iterations"_a = 50)
      .def_readwrite("data_aided", &EvmOptions::data_aided)
      .def_readwrite("normalisation", &EvmOptions::normalisation)
      .def_readwrite("remove_frequency", &EvmOptions::remove_frequency)
      .def_readwrite("remove_phase", &EvmOptions::remove_phase)
      .def_readwrite("remove_gain", &EvmOptions::remove_gain)
      .def_readwrite("keep_error_vectors", &EvmOptions::keep_error_vectors)
      .def_readwrite("max_frequency", &EvmOptions::max_frequency)
      .def_readwrite("max_iterations", &EvmOptions::max_iterations);
  py::class_<CarrierFit>(m, "CarrierFit", "A least-squares fit r[n] ~ gain exp(j 2 pi frequency n) s[n].")
      .def_readonly("gain", &CarrierFit::gain)
      .def_readonly("frequency", &CarrierFit::frequency, "Cycles per symbol.");
  py::class_<EvmMeasurement>(m, "EvmMeasurement",
                             "EVM/MER figures and the fitted carrier; corrected, references and error_vectors\n"
                             "are read-only complex64 views of the measurement's buffers (empty unless kept).")
      .def_readonly("symbols", &EvmMeasurement::symbols)
      .def_readonly("data_aided", &EvmMeasurement::data_aided)
      .def_readonly("normalisation", &EvmMeasurement::normalisation)
      .def_readonly("normalisation_power", &EvmMeasurement::normalisation_power)
      .def_readonly("error_power", &EvmMeasurement::error_power)
      .def_readonly("reference_power", &EvmMeasurement::reference_power)
      .def_readonly("rms", &EvmMeasurement::rms)
      .def_readonly("rms_pct", &EvmMeasurement::rms_pct)
      .def_readonly("rms_db", &EvmMeasurement::rms_db)
      .def_readonly("peak_pct", &EvmMeasurement::peak_pct)
      .def_readonly("peak_db", &EvmMeasurement::peak_db)
      .def_readonly("peak_index", &EvmMeasurement::peak_index)
      .def_readonly("mer_db", &EvmMeasurement::mer_db)
      .def_readonly("gain", &EvmMeasurement::gain)
      .def_readonly("frequency_offset", &EvmMeasurement::frequency_offset)
      .def_readonly("iterations", &EvmMeasurement::iterations)
      .def_property_readonly("corrected",
                             [](py::object self) {
                               return readonly_view<cf32>(self.cast<const EvmMeasurement&>().corrected, self);
                             })
      .def_property_readonly("references",
                             [](py::object self) {
                               return readonly_view<cf32>(self.cast<const EvmMeasurement&>().references, self);
                             })
      .def_property_readonly("error_vectors", [](py::object self) {
        return readonly_view<cf32>(self.cast<const EvmMeasurement&>().error_vectors, self);
      });
  m.def(
      "fit_carrier",
      [](py::handle received, py::handle reference, bool fit_frequency, double max_frequency) {
        auto r = input_vector<cf32>(received, "received");
        auto s = input_vector<cf32>(reference, "reference");
        auto sr = const_span(r);
        auto ss = const_span(s);
        py::gil_scoped_release nogil;
        return fit_carrier(sr, ss, fit_frequency, max_frequency);
      },
      "received"_a, "reference"_a, "fit_frequency"_a, "max_frequency"_a = 0.5,
      "Joint least-squares fit of gain and frequency (ConfigError for mismatched lengths).");
  m.def(
      "measure_evm",
      [](py::handle received, py::object reference, const Constellation& constellation, const EvmOptions& options) {
        auto r = input_vector<cf32>(received, "received");
        InArray<cf32> s = reference.is_none() ? InArray<cf32>(0) : input_vector<cf32>(reference, "reference");
        auto sr = const_span(r);
        auto ss = const_span(s);
        py::gil_scoped_release nogil;
        return measure_evm(sr, ss, constellation, options);
      },
      "received"_a, "reference"_a, "constellation"_a, "options"_a = EvmOptions{},
      "EVM and MER of symbol-spaced samples; reference = transmitted symbols (data-aided) or None\n"
      "(decision-directed, with options.data_aided = False). GIL released.");
  m.def("evm_pct_to_db", py::vectorize([](double pct) { return evm_pct_to_db(pct); }), "pct"_a,
        "20 log10(pct / 100) (vectorised).");
  m.def("evm_db_to_pct", py::vectorize([](double db) { return evm_db_to_pct(db); }), "db"_a,
        "100 * 10^(db / 20) (vectorised).");
}

}  // namespace qamsight::python
