// init_figures: the standard SVG figures built from results (BER waterfall, theory curves).

#include "bindings.hpp"
#include "qamsight/figures.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_figures(py::module_& m) {
  m.def("modulation_display_name", &modulation_display_name, "modulation"_a,
        "'16-QAM', 'QPSK', '8-PSK' for '16qam', ...; the name itself otherwise.");
  m.def("waterfall_svg", &waterfall_svg, "result"_a, "title"_a = "",
        "BER against Eb/N0 (or Es/N0) with confidence bars over exact AWGN theory, as SVG text.");
  m.def(
      "theory_svg",
      [](const std::vector<std::string>& modulations, py::handle eb_n0_db) {
        auto a = input_array<double>(eb_n0_db, "eb_n0_db");
        return theory_svg(modulations, std::vector<double>(a.data(), a.data() + a.size()));
      },
      "modulations"_a, "eb_n0_db"_a, "AWGN theory BER curves of the modulations over the Eb/N0 grid, as SVG.");

  auto cls = py::reinterpret_borrow<py::class_<SweepResult>>(m.attr("SweepResult"));
  cls.def("waterfall_svg", &waterfall_svg, "title"_a = "",
          "The BER waterfall with theory overlay as SVG text (sweep --svg).");
}

}  // namespace qamsight::python
