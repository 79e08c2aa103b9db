// init_llr: soft bit decisions (LLRs) of any constellation in complex AWGN.
#include <cmath>

#include "bindings.hpp"
#include "qamsight/llr.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_llr(py::module_& m) {
  py::enum_<LlrMethod>(m, "LlrMethod", "Exact log-MAP or max-log LLRs.")
      .value("exact", LlrMethod::exact)
      .value("max_log", LlrMethod::max_log);
  m.attr("LLR_LIMIT") = llr_limit;

  py::class_<LlrDemapper>(m, "LlrDemapper",
                          "Bit LLRs ln P(b=0|y)/P(b=1|y) (positive favours 0) in complex AWGN of total variance\n"
                          "N0 per sample, bits_per_symbol per sample in label order (MSB first), clamped to\n"
                          "+-LLR_LIMIT. Immutable; process may run on several threads.")
      .def(py::init<const Constellation&, LlrMethod>(), "constellation"_a, "method"_a = LlrMethod::exact)
      .def_property_readonly("method", &LlrDemapper::method)
      .def_property_readonly("bits_per_symbol", &LlrDemapper::bits_per_symbol)
      .def("uses_axis_path", &LlrDemapper::uses_axis_path, "True if the per-axis square-QAM path is in use.")
      .def(
          "process",
          [](const LlrDemapper& self, py::handle samples, double n0, py::object out) {
            if (!(n0 > 0.0 && std::isfinite(n0))) {
              throw ConfigError("n0", format_number(n0), "a positive finite noise variance");
            }
            auto in = input_vector<cf32>(samples, "samples");
            auto o = output_array<float>(out, {static_cast<py::ssize_t>(in.size() * self.bits_per_symbol())}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.process(si, n0, so);
            return o;
          },
          "samples"_a, "n0"_a, "out"_a = py::none(),
          "float32 LLRs of the samples: len(samples) * bits_per_symbol values, llr[s * k + i] for bit i.");

  m.def(
      "llr_exhaustive",
      [](const Constellation& c, cf32 y, double n0, LlrMethod method) {
        std::vector<double> out(c.bits_per_symbol());
        llr_exhaustive(c, y, n0, method, out);
        return vector_to_array(std::move(out));
      },
      "constellation"_a, "y"_a, "n0"_a, "method"_a = LlrMethod::exact,
      "Reference LLRs of one sample by exhaustive search in double (float64 array, not clamped).");
}

}  // namespace qamsight::python
