// init_io: sweep results as JSON/CSV (the CLI's formats), baselines, atomic text files.
#include "bindings.hpp"
#include "qamsight/io.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

// The one source of truth for a result's dictionary form is the library's JSON writer.
py::object to_dict(const SweepResult& r) {
  return py::module_::import("json").attr("loads")(sweep_to_json(r));
}

SweepResult load_sweep_json(const std::string& path) {
  return sweep_from_json(read_text_file(path, "sweep JSON"), path);
}

}  // namespace

void init_io(py::module_& m) {
  m.def("write_text_file_atomic", &write_text_file_atomic, "path"_a, "content"_a,
        "Writes text through a temporary file in the same directory, synced and renamed (InputError).");
  m.def("read_text_file", &read_text_file, "path"_a, "what"_a = "file",
        "Reads a whole file; InputError(\"<what> '<path>': <reason>\").");
  m.def("sweep_to_json", &sweep_to_json, "result"_a, "Sweep results as the CLI's JSON text.");
  m.def("sweep_to_csv", &sweep_to_csv, "result"_a, "One CSV row per point, the JSON points' field names.");
  m.def("sweep_from_json", &sweep_from_json, "text"_a, "source"_a = "<string>",
        "Reads a sweep JSON (a baseline); rates are recomputed from the counts. InputError names\n"
        "`source` and the offending key.");
  m.def("load_sweep_json", &load_sweep_json, "path"_a,
        "Reads a sweep JSON file written by `qamsight sweep --json` or SweepResult.to_json().");

  auto cls = py::reinterpret_borrow<py::class_<SweepResult>>(m.attr("SweepResult"));
  cls.def("to_json", &sweep_to_json, "The CLI's JSON text (sweep --json).")
      .def("to_csv", &sweep_to_csv, "The CLI's CSV text (sweep --csv).")
      .def("to_dict", &to_dict,
           "The JSON document as Python objects (json.loads of to_json(); non-finite numbers are None).")
      .def(
          "to_dataframe",
          [](const SweepResult& r) {
            py::module_ pandas;
            try {
              pandas = py::module_::import("pandas");
            } catch (py::error_already_set& e) {
              if (!e.matches(PyExc_ImportError)) throw;
              throw py::import_error(
                  "SweepResult.to_dataframe() needs pandas, which is not installed (qamsight does not depend "
                  "on it); use to_dict()['points'] or to_csv() instead, or install pandas");
            }
            return pandas.attr("DataFrame")(to_dict(r)["points"]);
          },
          "The points as a pandas DataFrame, one row per point (ImportError if pandas is missing).");
}

}  // namespace qamsight::python
