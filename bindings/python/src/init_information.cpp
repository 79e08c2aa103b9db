// init_information: CM and BICM capacities in AWGN, their thresholds, and GMI from LLRs.
#include "bindings.hpp"
#include "qamsight/information.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_information(py::module_& m) {
  py::class_<GaussHermiteRule>(m, "GaussHermiteRule", "Nodes and weights for int e^(-t^2) f(t) dt (float64 views).")
      .def_property_readonly(
          "nodes", [](py::object self) { return readonly_view<double>(self.cast<const GaussHermiteRule&>().nodes, self); })
      .def_property_readonly("weights", [](py::object self) {
        return readonly_view<double>(self.cast<const GaussHermiteRule&>().weights, self);
      });
  m.def("gauss_hermite_rule", &gauss_hermite_rule, "n"_a, "The n-node rule by Golub-Welsch (1 <= n <= 1000).");
  m.attr("GAUSS_HERMITE_NODES_1D") = gauss_hermite_nodes_1d;
  m.attr("GAUSS_HERMITE_NODES_2D") = gauss_hermite_nodes_2d;

  py::class_<InformationRates>(m, "InformationRates", "CM and BICM rates, bit/symbol.")
      .def_readonly("cm", &InformationRates::cm)
      .def_readonly("bicm", &InformationRates::bicm)
      .def("__repr__", [](const InformationRates& r) {
        return "InformationRates(cm=" + format_number(r.cm) + ", bicm=" + format_number(r.bicm) + ")";
      });
  m.def(
      "information_rates",
      [](const Constellation& c, double es_n0_db) {
        py::gil_scoped_release nogil;
        return information_rates(c, es_n0_db);
      },
      "constellation"_a, "es_n0_db"_a, "CM and BICM rates in AWGN at es_n0_db (Gauss-Hermite quadrature).");
  m.def(
      "cm_capacity",
      [](const Constellation& c, py::object es_n0_db) {
        return py::vectorize([&c](double es) { return cm_capacity(c, es); })(es_n0_db);
      },
      "constellation"_a, "es_n0_db"_a, "Coded-modulation capacity, bit/symbol (vectorised over es_n0_db).");
  m.def(
      "bicm_capacity",
      [](const Constellation& c, py::object es_n0_db) {
        return py::vectorize([&c](double es) { return bicm_capacity(c, es); })(es_n0_db);
      },
      "constellation"_a, "es_n0_db"_a, "BICM capacity, bit/symbol (vectorised over es_n0_db).");
  m.def(
      "bicm_threshold_es_n0_db",
      [](const Constellation& c, double rate) {
        py::gil_scoped_release nogil;
        return bicm_threshold_es_n0_db(c, rate);
      },
      "constellation"_a, "rate_bits_per_symbol"_a, "Es/N0 (dB) at which the BICM capacity equals the rate.");
  m.def(
      "cm_threshold_es_n0_db",
      [](const Constellation& c, double rate) {
        py::gil_scoped_release nogil;
        return cm_threshold_es_n0_db(c, rate);
      },
      "constellation"_a, "rate_bits_per_symbol"_a, "Es/N0 (dB) at which the CM capacity equals the rate.");

  py::class_<GmiEstimate>(m, "GmiEstimate", "A GMI estimate (bit/symbol) with its normal confidence interval.")
      .def_readonly("value", &GmiEstimate::value)
      .def_readonly("low", &GmiEstimate::low)
      .def_readonly("high", &GmiEstimate::high)
      .def_readonly("standard_error", &GmiEstimate::standard_error)
      .def_readonly("symbols", &GmiEstimate::symbols)
      .def_readonly("confidence", &GmiEstimate::confidence)
      .def("__repr__", [](const GmiEstimate& g) {
        return "GmiEstimate(value=" + format_number(g.value) + ", low=" + format_number(g.low) +
               ", high=" + format_number(g.high) + ")";
      });
  py::class_<GmiAccumulator>(m, "GmiAccumulator", "Running GMI statistics over symbols (Welford, Chan merge).")
      .def(py::init<unsigned>(), "bits_per_symbol"_a)
      .def(
          "add",
          [](GmiAccumulator& self, py::handle llr, py::handle bits) {
            auto l = input_vector<float>(llr, "llr");
            auto b = input_vector<std::uint8_t>(bits, "bits");
            if (l.size() != b.size() || static_cast<std::size_t>(l.size()) % self.bits_per_symbol() != 0) {
              throw py::value_error("llr and bits must have the same length, a multiple of bits_per_symbol (" +
                                    std::to_string(self.bits_per_symbol()) + "); got " + std::to_string(l.size()) +
                                    " and " + std::to_string(b.size()));
            }
            auto sl = const_span(l);
            auto sb = const_span(b);
            py::gil_scoped_release nogil;
            self.add(sl, sb);
          },
          "llr"_a, "bits"_a, "Adds symbols: float32 LLRs and the transmitted uint8 bits, in the same bit order.")
      .def(
          "__iadd__",
          [](GmiAccumulator& a, const GmiAccumulator& b) -> GmiAccumulator& {
            if (a.bits_per_symbol() != b.bits_per_symbol()) {
              throw py::value_error("cannot merge GMI accumulators of " + std::to_string(a.bits_per_symbol()) +
                                    " and " + std::to_string(b.bits_per_symbol()) + " bits per symbol");
            }
            return a += b;
          },
           py::return_value_policy::reference_internal)
      .def_property_readonly("bits_per_symbol", &GmiAccumulator::bits_per_symbol)
      .def_property_readonly("symbols", &GmiAccumulator::symbols)
      .def("estimate", &GmiAccumulator::estimate, "confidence"_a, "Estimate and interval at the confidence.");
  m.attr("GMI_STREAM_BASE") = gmi_stream_base;
  m.def(
      "gmi_monte_carlo",
      [](const Constellation& c, double es_n0_db, std::uint64_t symbols, std::uint64_t seed, LlrMethod method,
         double confidence) {
        py::gil_scoped_release nogil;
        return gmi_monte_carlo(c, es_n0_db, symbols, seed, method, confidence);
      },
      "constellation"_a, "es_n0_db"_a, "symbols"_a, "seed"_a, "method"_a, "confidence"_a,
      "Monte Carlo GMI with the library's LLR demapper (GIL released).");
}

}  // namespace qamsight::python
