// init_channel: the AWGN block and its Es/N0 convention (impairments are in init_impairments).
#include "bindings.hpp"
#include "qamsight/channel.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_channel(py::module_& m) {
  py::class_<AwgnConfig>(m, "AwgnConfig",
                         "AWGN settings: es_n0_db is Es/N0 at the matched-filter output (dB, -50 to 150);\n"
                         "symbol_energy the input's mean energy per symbol (> 0).")
      .def(py::init([](double es_n0_db, double symbol_energy) { return AwgnConfig{es_n0_db, symbol_energy}; }),
           "es_n0_db"_a = 10.0, "symbol_energy"_a = 1.0)
      .def_readwrite("es_n0_db", &AwgnConfig::es_n0_db)
      .def_readwrite("symbol_energy", &AwgnConfig::symbol_energy)
      .def("__repr__", [](const AwgnConfig& c) {
        return "AwgnConfig(es_n0_db=" + format_number(c.es_n0_db) + ", symbol_energy=" + format_number(c.symbol_energy) +
               ")";
      });

  py::class_<AwgnChannel>(m, "AwgnChannel",
                          "Complex AWGN of total variance N0 per sample (N0/2 per real dimension), with\n"
                          "N0 = symbol_energy / (Es/N0). Raises ConfigError for settings out of range.")
      .def(py::init<const AwgnConfig&>(), "config"_a)
      .def_property_readonly("noise_variance", &AwgnChannel::noise_variance, "N0, the total complex variance per sample.")
      .def_property_readonly("config", &AwgnChannel::config)
      .def(
          "process",
          [](const AwgnChannel& self, RandomStream& rng, py::handle samples, py::object out) {
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
          "samples + noise as complex64 (same shape); out may be the samples array itself (in place).\n"
          "Draws from rng (use Substream.awgn) in whole blocks.");
}

}  // namespace qamsight::python
