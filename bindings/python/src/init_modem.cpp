// init_modem: Constellation (points, labels, mapping, slicing) and the Gray code helpers.

#include "bindings.hpp"
#include "qamsight/modem.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

std::size_t bits_per(const Constellation& c) { return c.bits_per_symbol(); }

void require_bit_multiple(const Constellation& c, const py::array& bits, const char* what) {
  if (static_cast<std::size_t>(bits.size()) % bits_per(c) != 0) {
    throw py::value_error(std::string(what) + ": length " + std::to_string(bits.size()) +
                          " is not a multiple of bits_per_symbol (" + std::to_string(bits_per(c)) + ") of " +
                          c.name());
  }
}

}  // namespace

void init_modem(py::module_& m) {
  py::enum_<ConstellationFamily>(m, "ConstellationFamily",
                                 "The family of a constellation; it selects the theory curve and the slicer.")
      .value("bpsk", ConstellationFamily::bpsk)
      .value("psk", ConstellationFamily::psk)
      .value("square_qam", ConstellationFamily::square_qam)
      .value("custom", ConstellationFamily::custom);

  py::class_<Constellation> c(
      m, "Constellation",
      "A set of points with bit labels, at unit average energy (unless built with normalise=False).\n\n"
      "Labels are integers in [0, M); a label's bits are sent most significant bit first. Square QAM\n"
      "is Gray-mapped per axis, M-PSK places label gray(i) at angle 2 pi i / M, BPSK maps label 0 to\n"
      "-1. Immutable. Array methods take any array-like (copied only if it is not already a\n"
      "C-contiguous array of the exact dtype) and an optional `out` array of the exact dtype and\n"
      "shape that is filled in place and returned. Labels are taken modulo M, as in C++.");
  c.def_static("from_name", &Constellation::from_name, "name"_a,
               "Built-in constellation by name: bpsk, qpsk (alias 4qam), 8psk, 16qam, 64qam, 256qam, 1024qam.")
      .def_static("builtin_names", &Constellation::builtin_names, "The names from_name accepts, by size.")
      .def_static("square_qam", &Constellation::square_qam, "order"_a, "Gray-mapped square M-QAM, M = 4^n.")
      .def_static("psk", &Constellation::psk, "order"_a, "Gray-labelled M-PSK, M a power of two from 4.")
      .def_static("bpsk", &Constellation::bpsk, "BPSK: label 0 -> -1, label 1 -> +1.")
      .def_static(
          "custom",
          [](std::string name, py::handle points, py::handle labels, bool normalise) {
            auto p = input_vector<cf64>(points, "points");
            auto l = input_vector<std::uint32_t>(labels, "labels");
            return Constellation::custom(std::move(name), std::vector<cf64>(p.data(), p.data() + p.size()),
                                         std::vector<std::uint32_t>(l.data(), l.data() + l.size()), normalise);
          },
          "name"_a, "points"_a, "labels"_a, "normalise"_a = true,
          "A user constellation: points (complex) and their labels (a permutation of 0..M-1, M a power\n"
          "of two). Scaled to unit average energy unless normalise is False.")
      .def_property_readonly("name", &Constellation::name)
      .def_property_readonly("family", &Constellation::family)
      .def_property_readonly("order", &Constellation::order, "Number of points M.")
      .def_property_readonly("bits_per_symbol", &Constellation::bits_per_symbol)
      .def_property_readonly(
          "points", [](py::object self) { return readonly_view(self.cast<const Constellation&>().points(), self); },
          "Point of each label (points[label]) as a read-only complex128 view (no copy).")
      .def_property_readonly(
          "points_f",
          [](py::object self) { return readonly_view(self.cast<const Constellation&>().points_f(), self); },
          "The points as a read-only complex64 view (the values the mapper writes).")
      .def("average_energy", &Constellation::average_energy)
      .def("peak_energy", &Constellation::peak_energy)
      .def("min_distance", &Constellation::min_distance, "Smallest distance between two points (O(M^2)).")
      .def_property_readonly("levels_per_axis", &Constellation::levels_per_axis,
                             "sqrt(M) for square QAM; 0 otherwise.")
      .def_property_readonly("qam_half_spacing", &Constellation::qam_half_spacing,
                             "Half the spacing of adjacent levels (square QAM).")
      .def(
          "map_labels",
          [](const Constellation& self, py::handle labels, py::object out) {
            auto in = input_array<std::uint32_t>(labels, "labels");
            auto o = output_array<cf32>(out, shape_of(in), "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.map_labels(si, so);
            return o;
          },
          "labels"_a, "out"_a = py::none(), "Labels -> complex64 points (same shape).")
      .def(
          "map_bits",
          [](const Constellation& self, py::handle bits, py::object out) {
            auto in = input_vector<std::uint8_t>(bits, "bits");
            require_bit_multiple(self, in, "bits");
            auto o = output_array<cf32>(out, {static_cast<py::ssize_t>(in.size() / bits_per(self))}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.map_bits(si, so);
            return o;
          },
          "bits"_a, "out"_a = py::none(),
          "Bits (uint8, one per element, bits_per_symbol per symbol, MSB first) -> complex64 points.")
      .def(
          "labels_to_bits",
          [](const Constellation& self, py::handle labels, py::object out) {
            auto in = input_vector<std::uint32_t>(labels, "labels");
            auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(in.size() * bits_per(self))}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.labels_to_bits(si, so);
            return o;
          },
          "labels"_a, "out"_a = py::none(), "Labels -> uint8 bits, MSB first.")
      .def(
          "bits_to_labels",
          [](const Constellation& self, py::handle bits, py::object out) {
            auto in = input_vector<std::uint8_t>(bits, "bits");
            require_bit_multiple(self, in, "bits");
            auto o = output_array<std::uint32_t>(out, {static_cast<py::ssize_t>(in.size() / bits_per(self))}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.bits_to_labels(si, so);
            return o;
          },
          "bits"_a, "out"_a = py::none(), "Bits -> uint32 labels.")
      .def(
          "slice",
          [](const Constellation& self, py::handle samples, py::object out) {
            auto in = input_array<cf32>(samples, "samples");
            auto o = output_array<std::uint32_t>(out, shape_of(in), "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.slice(si, so);
            return o;
          },
          "samples"_a, "out"_a = py::none(), "Nearest-point hard decisions as uint32 labels (same shape).")
      .def(
          "slice_points",
          [](const Constellation& self, py::handle samples, py::object out) {
            auto in = input_array<cf32>(samples, "samples");
            auto o = output_array<cf32>(out, shape_of(in), "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            require_same_or_disjoint(si, so);
            py::gil_scoped_release nogil;
            self.slice_points(si, so);
            return o;
          },
          "samples"_a, "out"_a = py::none(), "Hard decisions as the ideal complex64 points (same shape).")
      .def("slice_exhaustive", &Constellation::slice_exhaustive, "sample"_a,
           "Reference minimum-distance decision of one sample (exhaustive search), as a label.")
      .def("__repr__", [](const Constellation& self) {
        return "Constellation('" + self.name() + "', order=" + std::to_string(self.order()) + ")";
      });

  m.def("gray_encode", py::vectorize([](std::uint32_t i) { return gray_encode(i); }), "i"_a,
        "Binary-reflected Gray code of i (vectorised).");
  m.def("gray_decode", py::vectorize([](std::uint32_t g) { return gray_decode(g); }), "g"_a,
        "Inverse of gray_encode (vectorised).");
}

}  // namespace qamsight::python
