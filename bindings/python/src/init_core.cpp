// init_core: version, exception types and translators, the counter-based random stream.
#include <cmath>
#include <limits>

#include "bindings.hpp"
#include "qamsight/core.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

std::string shape_text(const std::vector<py::ssize_t>& shape) {
  std::string s = "(";
  for (std::size_t i = 0; i < shape.size(); ++i) s += (i ? ", " : "") + std::to_string(shape[i]);
  if (shape.size() == 1) s += ",";
  return s + ")";
}

std::vector<py::ssize_t> shape_of(const py::array& a) {
  return std::vector<py::ssize_t>(a.shape(), a.shape() + a.ndim());
}

std::string describe_array(const py::array& a) {
  return std::string(py::str(a.dtype())) + " array of shape " + shape_text(shape_of(a));
}

std::uint64_t to_count(const char* what, py::handle obj) {
  if (PyFloat_Check(obj.ptr())) {
    const double v = PyFloat_AsDouble(obj.ptr());
    if (!(v >= 0.0 && v < 18446744073709551616.0 && std::floor(v) == v)) {
      throw ConfigError(what, format_number(v), "a whole number from 0 to 2^64 - 1");
    }
    return static_cast<std::uint64_t>(v);
  }
  if (!PyIndex_Check(obj.ptr()) || PyBool_Check(obj.ptr())) {
    throw py::type_error(std::string(what) + ": expected a whole number, got " +
                         std::string(py::str(py::type::handle_of(obj).attr("__name__"))));
  }
  py::int_ i = py::reinterpret_steal<py::int_>(PyNumber_Index(obj.ptr()));
  if (!i) throw py::error_already_set();
  if (py::int_(0) > i || i > py::int_(std::numeric_limits<std::uint64_t>::max())) {
    throw ConfigError(what, std::string(py::str(i)), "a whole number from 0 to 2^64 - 1");
  }
  return i.cast<std::uint64_t>();
}

namespace {

// The Python exception types live for the whole process: they are referenced by the
// translator after the module object may be gone, so they are deliberately never released.
PyObject* g_config_error = nullptr;
PyObject* g_input_error = nullptr;

void raise_config_error(const ConfigError& e) {
  py::object type = py::reinterpret_borrow<py::object>(g_config_error);
  py::object exc = type(e.what());
  exc.attr("parameter") = e.parameter();
  exc.attr("value") = e.value();
  exc.attr("allowed") = e.allowed();
  PyErr_SetObject(g_config_error, exc.ptr());
}

// RandomStream label fills (one label per word, or packed): size or out array, bits checked.
template <void (RandomStream::*Fill)(std::span<std::uint32_t>, unsigned) noexcept>
auto label_filler() {
  return [](RandomStream& rs, py::handle size_or_out_, unsigned bits) {
    if (bits < 1 || bits > 32) throw ConfigError("bits", std::to_string(bits), "1 to 32");
    auto a = size_or_out<std::uint32_t>(size_or_out_, "size_or_out");
    auto s = mutable_span(a);
    py::gil_scoped_release nogil;
    (rs.*Fill)(s, bits);
    return a;
  };
}

}  // namespace

void init_core(py::module_& m) {
  g_config_error = PyErr_NewExceptionWithDoc(
      "qamsight.ConfigError",
      "A configuration value outside its allowed range (C++ qamsight::ConfigError).\n\n"
      "A ValueError whose message reads '<parameter> = <value> is not allowed; allowed: <allowed>';\n"
      "the three parts are the attributes parameter, value and allowed.",
      PyExc_ValueError, nullptr);
  g_input_error = PyErr_NewExceptionWithDoc(
      "qamsight.InputError",
      "A file or data stream that cannot be read as what it claims to be (C++ qamsight::InputError).\n\n"
      "A ValueError whose message names the file and, where there is one, the key.",
      PyExc_ValueError, nullptr);
  if (!g_config_error || !g_input_error) throw py::error_already_set();
  m.attr("ConfigError") = py::handle(g_config_error);
  m.attr("InputError") = py::handle(g_input_error);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const ConfigError& e) {
      raise_config_error(e);
    } catch (const InputError& e) {
      PyErr_SetString(g_input_error, e.what());
    }
  });

  m.def("version", [] { return std::string(version()); }, "The library's version string ('major.minor.patch').");
  m.def("format_number", &format_number, "value"_a,
        "A float the way error messages and tables show it (shortest round-trip form; 'nan', 'inf').");
  m.def("db_to_linear", py::vectorize([](double db) { return db_to_linear(db); }), "db"_a,
        "Power ratio from dB: 10^(db/10). Vectorised over arrays.");
  m.def("linear_to_db", py::vectorize([](double x) { return linear_to_db(x); }), "linear"_a,
        "Power ratio in dB: 10 log10(linear). Vectorised over arrays.");

  py::enum_<Substream>(m, "Substream",
                       "Purposes of random numbers within one frame; each has its own substream.")
      .value("payload", Substream::payload)
      .value("awgn", Substream::awgn)
      .value("phase_noise", Substream::phase_noise)
      .value("timing", Substream::timing)
      .value("user", Substream::user);

  m.def(
      "philox4x32",
      [](std::array<std::uint32_t, 4> counter, std::array<std::uint32_t, 2> key, int rounds) {
        return philox4x32(counter, key, rounds);
      },
      "counter"_a, "key"_a, "rounds"_a = 10,
      "One Philox4x32 block (Salmon et al., SC 2011): four 32-bit words from a 128-bit counter and a\n"
      "64-bit key (as 4 and 2 words).");
  m.def("box_muller", &box_muller, "a0"_a, "a1"_a, "b0"_a, "b1"_a,
        "The standard normal pair of the library's Box-Muller transform from two 32-bit word pairs.");
  m.def("box_muller_f32", &box_muller_f32, "a0"_a, "a1"_a, "b0"_a, "b1"_a,
        "The single-precision pair from the same words (b1 unused): the generator of float streams\n"
        "and of the sweeps' noise; returned as Python floats holding float32 values.");

  py::class_<RandomStream>(m, "RandomStream",
                           "Sequential reader of one Philox4x32-10 stream keyed by (seed, stream, substream).\n\n"
                           "The same arguments give the same numbers on any machine. fill_* methods take a\n"
                           "size (a new array is returned) or an array of the exact dtype, filled in place and\n"
                           "returned. Not safe to share between Python threads.")
      .def(py::init<std::uint64_t, std::uint64_t, Substream>(), "seed"_a, "stream"_a, "substream"_a)
      .def(py::init<std::uint64_t, std::uint64_t, std::uint32_t>(), "seed"_a, "stream"_a, "substream"_a)
      .def("next_block", &RandomStream::next_block, "Next four raw 32-bit words (one Philox block).")
      .def("next_u32", &RandomStream::next_u32)
      .def("next_u64", &RandomStream::next_u64)
      .def("uniform", &RandomStream::uniform, "Uniform on [0, 1) with 53-bit resolution.")
      .def("gaussian", &RandomStream::gaussian, "Standard normal sample.")
      .def(
          "fill_uniform",
          [](RandomStream& rs, py::handle size_or_out_) {
            auto a = size_or_out<float>(size_or_out_, "size_or_out");
            auto s = mutable_span(a);
            py::gil_scoped_release nogil;
            rs.fill_uniform(s);
            return a;
          },
          "size_or_out"_a, "Uniform [0, 1) float32 values (24-bit resolution).")
      .def(
          "fill_gaussian",
          [](RandomStream& rs, py::handle size_or_out_, py::object dtype) -> py::array {
            const bool is_array = py::isinstance<py::array>(size_or_out_);
            const py::dtype want = is_array ? py::reinterpret_borrow<py::array>(size_or_out_).dtype()
                                            : py::dtype::from_args(dtype);
            if (want.equal(py::dtype::of<double>())) {
              auto a = size_or_out<double>(size_or_out_, "size_or_out");
              auto s = mutable_span(a);
              py::gil_scoped_release nogil;
              rs.fill_gaussian(s);
              return a;
            }
            auto a = size_or_out<float>(size_or_out_, "size_or_out");
            auto s = mutable_span(a);
            py::gil_scoped_release nogil;
            rs.fill_gaussian(s);
            return a;
          },
          "size_or_out"_a, "dtype"_a = py::dtype::of<float>(),
          "Independent standard normal samples (variance 1), float32 or float64 (the dtype of `out`,\n"
          "or `dtype` with a size).")
      .def(
          "fill_complex_gaussian",
          [](RandomStream& rs, py::handle size_or_out_, double variance) {
            auto a = size_or_out<cf32>(size_or_out_, "size_or_out");
            auto s = mutable_span(a);
            py::gil_scoped_release nogil;
            rs.fill_complex_gaussian(s, variance);
            return a;
          },
          "size_or_out"_a, "variance"_a = 1.0,
          "Circular complex Gaussian complex64 samples of total variance `variance` (half per part).")
      .def("fill_labels", label_filler<&RandomStream::fill_labels>(), "size_or_out"_a, "bits"_a,
           "Uniformly random uint32 labels in [0, 2^bits), bits in 1..32.")
      .def("fill_packed_labels", label_filler<&RandomStream::fill_packed_labels>(), "size_or_out"_a, "bits"_a,
           "Uniformly random uint32 labels in [0, 2^bits), 32 // bits of them per random word (the sweeps' "
           "payload), starting at a block boundary.")
      .def(
          "fill_bits",
          [](RandomStream& rs, py::handle size_or_out_) {
            auto a = size_or_out<std::uint8_t>(size_or_out_, "size_or_out");
            auto s = mutable_span(a);
            py::gil_scoped_release nogil;
            rs.fill_bits(s);
            return a;
          },
          "size_or_out"_a, "Random bits, one per uint8 (values 0 or 1).")
      .def("seek_block", &RandomStream::seek_block, "block"_a,
           "Skips to an absolute block index (random access into the stream).")
      .def_property_readonly("block_index", &RandomStream::block_index);
}

}  // namespace qamsight::python
