// init_prbs: ITU-T O.150 pseudo-random binary sequences, generator and self-synchronising checker.
#include "bindings.hpp"
#include "qamsight/prbs.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_prbs(py::module_& m) {
  py::enum_<PrbsPolynomial>(m, "PrbsPolynomial", "PRBS-9, -15, -23, -31 (ITU-T O.150).")
      .value("prbs9", PrbsPolynomial::prbs9)
      .value("prbs15", PrbsPolynomial::prbs15)
      .value("prbs23", PrbsPolynomial::prbs23)
      .value("prbs31", PrbsPolynomial::prbs31);
  py::enum_<PrbsPolarity>(m, "PrbsPolarity", "Output inversion: as O.150 specifies, or forced.")
      .value("o150", PrbsPolarity::o150)
      .value("non_inverted", PrbsPolarity::non_inverted)
      .value("inverted", PrbsPolarity::inverted);
  py::class_<PrbsDefinition>(m, "PrbsDefinition", "One sequence's polynomial and O.150 polarity.")
      .def_readonly("polynomial", &PrbsDefinition::polynomial)
      .def_readonly("degree", &PrbsDefinition::degree)
      .def_readonly("tap", &PrbsDefinition::tap)
      .def_readonly("o150_inverted", &PrbsDefinition::o150_inverted)
      .def_property_readonly("name", [](const PrbsDefinition& d) { return std::string(d.name); })
      .def_property_readonly("polynomial_text", [](const PrbsDefinition& d) { return std::string(d.polynomial_text); });
  m.def("prbs_definition", &prbs_definition, "polynomial"_a, py::return_value_policy::reference);
  m.def("prbs_from_degree", &prbs_from_degree, "degree"_a, "The polynomial of degree 9, 15, 23 or 31.");
  m.def("prbs_inverted", &prbs_inverted, "polynomial"_a, "polarity"_a);
  m.def("prbs_period", &prbs_period, "polynomial"_a, "2^n - 1.");

  py::class_<PrbsGenerator>(m, "PrbsGenerator", "Generator of one sequence, bits as uint8 (0 or 1).")
      .def(py::init<PrbsPolynomial, PrbsPolarity, std::uint32_t>(), "polynomial"_a,
           "polarity"_a = PrbsPolarity::o150, "seed"_a = 0xffffffffu)
      .def_property_readonly("definition", &PrbsGenerator::definition)
      .def_property_readonly("inverted", &PrbsGenerator::inverted)
      .def("next", &PrbsGenerator::next)
      .def(
          "fill",
          [](PrbsGenerator& self, py::handle size_or_out_) {
            auto a = size_or_out<std::uint8_t>(size_or_out_, "size_or_out");
            auto s = mutable_span(a);
            py::gil_scoped_release nogil;
            self.fill(s);
            return a;
          },
          "size_or_out"_a, "The next bits: a size (new uint8 array) or a uint8 array filled in place.")
      .def_property_readonly("state", &PrbsGenerator::state)
      .def("reset", &PrbsGenerator::reset);

  py::class_<PrbsCheckerConfig>(m, "PrbsCheckerConfig", "Checker settings: sequence, lock and loss criteria.")
      .def(py::init([](PrbsPolynomial polynomial, PrbsPolarity polarity, std::size_t verify_bits,
                       std::size_t loss_window_bits, double loss_error_fraction) {
             return PrbsCheckerConfig{polynomial, polarity, verify_bits, loss_window_bits, loss_error_fraction};
           }),
           "polynomial"_a = PrbsPolynomial::prbs15, "polarity"_a = PrbsPolarity::o150, "verify_bits"_a = 32,
           "loss_window_bits"_a = 1024, "loss_error_fraction"_a = 0.35)
      .def_readwrite("polynomial", &PrbsCheckerConfig::polynomial)
      .def_readwrite("polarity", &PrbsCheckerConfig::polarity)
      .def_readwrite("verify_bits", &PrbsCheckerConfig::verify_bits)
      .def_readwrite("loss_window_bits", &PrbsCheckerConfig::loss_window_bits)
      .def_readwrite("loss_error_fraction", &PrbsCheckerConfig::loss_error_fraction);
  py::class_<PrbsCounts>(m, "PrbsCounts", "What a checker has counted.")
      .def_readonly("bits", &PrbsCounts::bits)
      .def_readonly("errors", &PrbsCounts::errors)
      .def_readonly("received", &PrbsCounts::received)
      .def_readonly("acquisitions", &PrbsCounts::acquisitions)
      .def_readonly("sync_losses", &PrbsCounts::sync_losses)
      .def_readonly("discarded_bits", &PrbsCounts::discarded_bits)
      .def_readonly("first_lock_bit", &PrbsCounts::first_lock_bit)
      .def("ber", &PrbsCounts::ber);
  py::class_<PrbsChecker>(m, "PrbsChecker", "Self-synchronising PRBS checker (locks without knowing the start).")
      .def(py::init<const PrbsCheckerConfig&>(), "config"_a)
      .def_property_readonly("config", &PrbsChecker::config)
      .def(
          "process",
          [](PrbsChecker& self, py::handle bits, py::object expected) {
            auto in = input_vector<std::uint8_t>(bits, "bits");
            if (expected.is_none()) {
              auto si = const_span(in);
              py::gil_scoped_release nogil;
              self.process(si);
              return py::object(py::none());
            }
            auto e = output_array<std::uint8_t>(expected, {static_cast<py::ssize_t>(in.size())}, "expected");
            auto si = const_span(in);
            auto se = mutable_span(e);
            {
              py::gil_scoped_release nogil;
              self.process(si, se);
            }
            return py::object(e);
          },
          "bits"_a, "expected"_a = py::none(),
          "Checks received bits (uint8, non-zero = 1); an `expected` uint8 array of the same length\n"
          "receives the predictions (2 while hunting) and is returned.")
      .def("locked", &PrbsChecker::locked)
      .def_property_readonly("counts", &PrbsChecker::counts)
      .def("reset", &PrbsChecker::reset);
}

}  // namespace qamsight::python
