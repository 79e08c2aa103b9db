// init_measure: error counters, exact binomial intervals and tests, EVM/MER accumulation.
#include "bindings.hpp"
#include "qamsight/measure.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

std::string counts_repr(const ErrorCounts& c) {
  auto u = [](std::uint64_t v) { return std::to_string(v); };
  return "ErrorCounts(bits=" + u(c.bits) + ", bit_errors=" + u(c.bit_errors) + ", symbols=" + u(c.symbols) +
         ", symbol_errors=" + u(c.symbol_errors) + ", frames=" + u(c.frames) + ", frame_errors=" +
         u(c.frame_errors) + ")";
}

}  // namespace

void init_measure(py::module_& m) {
  py::class_<ErrorCounts>(m, "ErrorCounts",
                          "Integer counts of one simulation point; merged by addition (+, +=).")
      .def(py::init([](std::uint64_t bits, std::uint64_t bit_errors, std::uint64_t symbols,
                       std::uint64_t symbol_errors, std::uint64_t frames, std::uint64_t frame_errors) {
             return ErrorCounts{bits, bit_errors, symbols, symbol_errors, frames, frame_errors};
           }),
           "bits"_a = 0, "bit_errors"_a = 0, "symbols"_a = 0, "symbol_errors"_a = 0, "frames"_a = 0,
           "frame_errors"_a = 0)
      .def_readwrite("bits", &ErrorCounts::bits)
      .def_readwrite("bit_errors", &ErrorCounts::bit_errors)
      .def_readwrite("symbols", &ErrorCounts::symbols)
      .def_readwrite("symbol_errors", &ErrorCounts::symbol_errors)
      .def_readwrite("frames", &ErrorCounts::frames)
      .def_readwrite("frame_errors", &ErrorCounts::frame_errors)
      .def("__iadd__", [](ErrorCounts& a, const ErrorCounts& b) -> ErrorCounts& { return a += b; },
           py::return_value_policy::reference_internal)
      .def("__add__", [](ErrorCounts a, const ErrorCounts& b) { return a += b; })
      .def("__eq__", [](const ErrorCounts& a, const ErrorCounts& b) { return a == b; })
      .def("__repr__", &counts_repr);

  py::class_<Interval>(m, "Interval", "A two-sided confidence interval (low, high); unpacks as a tuple.")
      .def(py::init([](double low, double high) { return Interval{low, high}; }), "low"_a = 0.0, "high"_a = 1.0)
      .def_readwrite("low", &Interval::low)
      .def_readwrite("high", &Interval::high)
      .def("__iter__", [](const Interval& i) { return py::iter(py::make_tuple(i.low, i.high)); })
      .def("__repr__", [](const Interval& i) {
        return "Interval(low=" + format_number(i.low) + ", high=" + format_number(i.high) + ")";
      });

  m.def("clopper_pearson", &clopper_pearson, "k"_a, "n"_a, "confidence"_a,
        "Exact (Clopper-Pearson) two-sided interval for k successes in n trials (Boost.Math beta\n"
        "quantiles). ConfigError if k > n, n = 0 or confidence not in (0, 1).");
  m.def("binomial_test_p_value", &binomial_test_p_value, "k"_a, "n"_a, "p0"_a,
        "Two-sided exact binomial test p-value of H0: p = p0 given k of n.");
  m.def("rate_increase_p_value", &rate_increase_p_value, "k1"_a, "n1"_a, "k0"_a, "n0"_a,
        "One-sided p-value that the rate k1/n1 exceeds a baseline rate k0/n0 (conditional binomial test).");

  py::class_<EvmAccumulator>(m, "EvmAccumulator",
                             "Data-aided error-vector sums (double); merged by addition in a fixed order.")
      .def(py::init<>())
      .def_readwrite("error_power", &EvmAccumulator::error_power, "sum |r - s|^2")
      .def_readwrite("reference_power", &EvmAccumulator::reference_power, "sum |s|^2")
      .def_readwrite("peak_error_power", &EvmAccumulator::peak_error_power, "max |r - s|^2")
      .def_readwrite("count", &EvmAccumulator::count)
      .def(
          "add",
          [](EvmAccumulator& self, py::handle received, py::handle reference) {
            auto r = input_array<cf32>(received, "received");
            auto s = input_array<cf32>(reference, "reference");
            if (r.size() != s.size()) {
              throw py::value_error("received and reference lengths differ: " + describe_array(r) + " and " +
                                    describe_array(s));
            }
            auto sr = const_span(r);
            auto ss = const_span(s);
            py::gil_scoped_release nogil;
            self.add(sr, ss);
          },
          "received"_a, "reference"_a, "Adds received symbols against their references (equal sizes).")
      .def("__iadd__", [](EvmAccumulator& a, const EvmAccumulator& b) -> EvmAccumulator& { return a += b; },
           py::return_value_policy::reference_internal)
      .def("rms", &EvmAccumulator::rms, "RMS EVM relative to the mean reference power, as a ratio; NaN if empty.")
      .def("rms_percent", &EvmAccumulator::rms_percent, "RMS EVM in percent.")
      .def("rms_db", &EvmAccumulator::rms_db, "20 log10(rms()).")
      .def("mer_db", &EvmAccumulator::mer_db, "MER in dB: 10 log10(reference power / error power).")
      .def("__repr__", [](const EvmAccumulator& e) {
        return "EvmAccumulator(count=" + std::to_string(e.count) + ", rms_percent=" + format_number(e.rms_percent()) +
               ")";
      });
}

}  // namespace qamsight::python
