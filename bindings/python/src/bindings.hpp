// bindings: the init functions of qamsight._core and the array conversions they share.
#pragma once

#include <pybind11/complex.h>
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cstdint>
#include <cstring>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "qamsight/core.hpp"

namespace qamsight::python {

namespace py = pybind11;

// One per library module, each in src/init_<module>.cpp. module.cpp calls them in dependency
// order (core first: it registers the exception types the others rely on).
void init_core(py::module_& m);
void init_modem(py::module_& m);
void init_channel(py::module_& m);
void init_theory(py::module_& m);
void init_measure(py::module_& m);
void init_sim(py::module_& m);
void init_io(py::module_& m);
void init_regression(py::module_& m);
void init_figures(py::module_& m);
// Modules finished by others; module.cpp calls those whose init file is compiled in
// (QAMSIGHT_PY_HAVE_<MODULE> is defined by CMake per present file).
void init_pulse(py::module_& m);
void init_impairments(py::module_& m);
void init_spectrum(py::module_& m);
void init_views(py::module_& m);
void init_llr(py::module_& m);
void init_information(py::module_& m);
void init_fec(py::module_& m);
void init_link(py::module_& m);
void init_evm(py::module_& m);
void init_prbs(py::module_& m);
void init_sigmf(py::module_& m);
void init_evm_budget(py::module_& m);
void init_sync(py::module_& m);
void init_waveform(py::module_& m);

// ---------------------------------------------------------------------------------------------
// Array conversions. The rules (documented in the package docstring):
//  - An input is used in place, without a copy, when it already is a C-contiguous NumPy array
//    of the exact dtype (complex64 samples, float32 LLRs, uint32 labels, uint8 bits) in native
//    byte order. Anything else of an acceptable kind (a list, complex128, a strided slice,
//    float64 for float32, int64 for labels) is converted to a temporary copy first. Arrays of
//    a kind that cannot mean the value (float for labels, complex for LLRs, strings, objects)
//    raise TypeError.
//  - An output is a fresh NumPy array filled in place by the C++ code, or the caller's `out`
//    array, which must be a writeable C-contiguous array of the exact dtype and shape
//    (TypeError / ValueError otherwise) and is returned itself, so nothing is copied.
// ---------------------------------------------------------------------------------------------

template <class T>
struct DtypeInfo;
template <>
struct DtypeInfo<cf32> {
  static constexpr const char* name = "complex64";
  static constexpr const char* kinds = "cfiu";
};
template <>
struct DtypeInfo<cf64> {
  static constexpr const char* name = "complex128";
  static constexpr const char* kinds = "cfiu";
};
template <>
struct DtypeInfo<float> {
  static constexpr const char* name = "float32";
  static constexpr const char* kinds = "fiu";
};
template <>
struct DtypeInfo<double> {
  static constexpr const char* name = "float64";
  static constexpr const char* kinds = "fiu";
};
template <>
struct DtypeInfo<std::uint32_t> {
  static constexpr const char* name = "uint32";
  static constexpr const char* kinds = "iu";
};
template <>
struct DtypeInfo<std::uint8_t> {
  static constexpr const char* name = "uint8";
  static constexpr const char* kinds = "iub";
};

template <class T>
using InArray = py::array_t<T, py::array::c_style | py::array::forcecast>;

/// "float64 array of shape (3, 4)" for messages.
std::string describe_array(const py::array& a);
/// "(3, 4)".
std::string shape_text(const std::vector<py::ssize_t>& shape);
std::vector<py::ssize_t> shape_of(const py::array& a);

/// The input rule above. `what` names the argument in messages.
template <class T>
InArray<T> input_array(py::handle obj, const char* what) {
  py::array any = py::array::ensure(obj);
  if (!any) {
    PyErr_Clear();
    throw py::type_error(std::string(what) + ": expected an array of numbers (" + DtypeInfo<T>::name +
                         "), got " + std::string(py::str(py::type::handle_of(obj).attr("__name__"))));
  }
  if (!std::strchr(DtypeInfo<T>::kinds, any.dtype().kind())) {
    throw py::type_error(std::string(what) + ": expected a " + DtypeInfo<T>::name + " array, got " +
                         describe_array(any));
  }
  InArray<T> typed = InArray<T>::ensure(any);
  if (!typed) throw py::error_already_set();
  return typed;
}

/// One-dimensional input (bit and label vectors whose length has a meaning).
template <class T>
InArray<T> input_vector(py::handle obj, const char* what) {
  InArray<T> a = input_array<T>(obj, what);
  if (a.ndim() != 1) {
    throw py::value_error(std::string(what) + ": expected a one-dimensional array, got " + describe_array(a));
  }
  return a;
}

/// The output rule above: a new array of `shape`, or `out` checked against it.
template <class T>
py::array_t<T> output_array(const py::object& out, const std::vector<py::ssize_t>& shape, const char* what) {
  if (out.is_none()) return py::array_t<T>(shape);
  if (!py::isinstance<py::array>(out)) {
    throw py::type_error(std::string(what) + ": expected a NumPy array of " + DtypeInfo<T>::name + ", got " +
                         std::string(py::str(py::type::handle_of(out).attr("__name__"))));
  }
  py::array a = py::reinterpret_borrow<py::array>(out);
  if (!a.dtype().is(py::dtype::of<T>()) && !a.dtype().equal(py::dtype::of<T>())) {
    throw py::type_error(std::string(what) + ": expected a " + DtypeInfo<T>::name + " array, got " +
                         describe_array(a) + " (outputs are filled in place, so the dtype must match)");
  }
  if (!(a.flags() & py::array::c_style)) {
    throw py::type_error(std::string(what) + ": expected a C-contiguous array (outputs are filled in place)");
  }
  if (!a.writeable()) throw py::type_error(std::string(what) + ": the array is read-only");
  if (shape_of(a) != shape) {
    throw py::value_error(std::string(what) + ": expected shape " + shape_text(shape) + ", got " + describe_array(a));
  }
  return py::reinterpret_borrow<py::array_t<T>>(a);
}

template <class T, int F>
std::span<const T> const_span(const py::array_t<T, F>& a) {
  return {a.data(), static_cast<std::size_t>(a.size())};
}
template <class T>
std::span<T> mutable_span(py::array_t<T>& a) {
  return {a.mutable_data(), static_cast<std::size_t>(a.size())};
}

/// For blocks that allow in-place processing: out is either the input itself or disjoint from it.
template <class A, class B>
void require_same_or_disjoint(std::span<A> in, std::span<B> out) {
  const auto* a0 = reinterpret_cast<const char*>(in.data());
  const auto* a1 = a0 + in.size_bytes();
  const auto* b0 = reinterpret_cast<const char*>(out.data());
  const auto* b1 = b0 + out.size_bytes();
  if (a0 != b0 && a0 < b1 && b0 < a1) {
    throw py::value_error("out overlaps the input partially; pass the input array itself for in-place "
                          "processing, or a separate array");
  }
}
/// For blocks whose input and output must not overlap at all.
template <class A, class B>
void require_disjoint(std::span<A> in, std::span<B> out) {
  const auto* a0 = reinterpret_cast<const char*>(in.data());
  const auto* a1 = a0 + in.size_bytes();
  const auto* b0 = reinterpret_cast<const char*>(out.data());
  const auto* b1 = b0 + out.size_bytes();
  if (in.size() && out.size() && a0 < b1 && b0 < a1) {
    throw py::value_error("out overlaps the input; this block cannot work in place, pass a separate array");
  }
}

/// A read-only NumPy view of memory owned by `owner` (kept alive by the view), no copy.
template <class T>
py::array_t<T> readonly_view(std::span<const T> data, py::handle owner) {
  py::array_t<T> a({static_cast<py::ssize_t>(data.size())}, {static_cast<py::ssize_t>(sizeof(T))}, data.data(),
                   owner);
  // Clearing the flag directly (what ndarray.setflags(write=False) does for a fresh view) saves a
  // Python attribute call per view, which matters for the per-frame views of a user stage.
  py::detail::array_proxy(a.ptr())->flags &= ~py::detail::npy_api::NPY_ARRAY_WRITEABLE_;
  return a;
}

/// Hands a vector's buffer to NumPy without copying: the array owns the vector.
template <class T>
py::array_t<T> vector_to_array(std::vector<T>&& v) {
  auto holder = std::make_unique<std::vector<T>>(std::move(v));
  py::capsule owner(holder.get(), [](void* p) { delete static_cast<std::vector<T>*>(p); });
  std::vector<T>* vec = holder.release();
  return py::array_t<T>({static_cast<py::ssize_t>(vec->size())}, {static_cast<py::ssize_t>(sizeof(T))},
                        vec->data(), owner);
}

/// A count argument: a Python int, or a float with an integral value (1e6), from 0 up.
std::uint64_t to_count(const char* what, py::handle obj);
/// A size-or-out argument: an int gives a new 1-D array of that size; an array is `out`.
template <class T>
py::array_t<T> size_or_out(py::handle obj, const char* what) {
  if (py::isinstance<py::array>(obj)) {
    py::array a = py::reinterpret_borrow<py::array>(obj);
    return output_array<T>(py::reinterpret_borrow<py::object>(obj), shape_of(a), what);
  }
  const std::uint64_t n = to_count(what, obj);
  return py::array_t<T>(static_cast<py::ssize_t>(n));
}

}  // namespace qamsight::python
