// init_sigmf: SigMF recordings and raw IQ files in and out (cf32 samples as NumPy complex64).
#include "bindings.hpp"
#include "qamsight/sigmf.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_sigmf(py::module_& m) {
  py::enum_<IqNumber>(m, "IqNumber", "Number format of an IQ component.")
      .value("floating", IqNumber::floating)
      .value("signed_integer", IqNumber::signed_integer)
      .value("unsigned_integer", IqNumber::unsigned_integer);
  py::class_<IqDatatype>(m, "IqDatatype", "A complex sample format (SigMF datatype).")
      .def(py::init([](IqNumber number, unsigned bits, bool big_endian) { return IqDatatype{number, bits, big_endian}; }),
           "number"_a = IqNumber::floating, "bits"_a = 32, "big_endian"_a = false)
      .def_readwrite("number", &IqDatatype::number)
      .def_readwrite("bits", &IqDatatype::bits)
      .def_readwrite("big_endian", &IqDatatype::big_endian)
      .def("sample_bytes", &IqDatatype::sample_bytes)
      .def("name", &IqDatatype::name, "SigMF name: 'cf32_le', 'ci16_le', 'ci8', 'cu8', ...")
      .def("__eq__", [](const IqDatatype& a, const IqDatatype& b) { return a == b; });
  m.def("parse_iq_datatype", &parse_iq_datatype, "name"_a, "A complex SigMF datatype, or None.");
  m.def("iq_datatype_names", &iq_datatype_names, "The accepted datatype names, comma separated.");

  py::class_<SigmfCapture>(m, "SigmfCapture", "One entry of the captures array.")
      .def(py::init<>())
      .def_readwrite("sample_start", &SigmfCapture::sample_start)
      .def_readwrite("frequency_hz", &SigmfCapture::frequency_hz)
      .def_readwrite("datetime", &SigmfCapture::datetime)
      .def_readwrite("header_bytes", &SigmfCapture::header_bytes);
  py::class_<SigmfAnnotation>(m, "SigmfAnnotation", "One entry of the annotations array.")
      .def(py::init([](std::uint64_t sample_start, std::uint64_t sample_count, std::string label,
                       std::string comment) {
             return SigmfAnnotation{sample_start, sample_count, std::move(label), std::move(comment)};
           }),
           "sample_start"_a = 0, "sample_count"_a = 0, "label"_a = "", "comment"_a = "")
      .def_readwrite("sample_start", &SigmfAnnotation::sample_start)
      .def_readwrite("sample_count", &SigmfAnnotation::sample_count)
      .def_readwrite("label", &SigmfAnnotation::label)
      .def_readwrite("comment", &SigmfAnnotation::comment);
  py::class_<Recording>(m, "Recording",
                        "A recording in memory; samples is a read-only complex64 view of its buffer (copy\n"
                        "with numpy.array to modify).")
      .def_readonly("source", &Recording::source)
      .def_readonly("data_path", &Recording::data_path)
      .def_readonly("datatype", &Recording::datatype)
      .def_readonly("sample_rate_hz", &Recording::sample_rate_hz)
      .def_readonly("center_frequency_hz", &Recording::center_frequency_hz)
      .def_readonly("full_scale", &Recording::full_scale)
      .def_readonly("version", &Recording::version)
      .def_readonly("description", &Recording::description)
      .def_readonly("author", &Recording::author)
      .def_readonly("captures", &Recording::captures)
      .def_readonly("annotations", &Recording::annotations)
      .def_readonly("global_json", &Recording::global_json)
      .def_property_readonly(
          "samples", [](py::object self) { return readonly_view<cf32>(self.cast<const Recording&>().samples, self); });
  py::class_<RecordingReadOptions>(m, "RecordingReadOptions", "Limits of the readers.")
      .def(py::init([](std::uint64_t max_samples) { return RecordingReadOptions{max_samples}; }),
           "max_samples"_a = RecordingReadOptions{}.max_samples)
      .def_readwrite("max_samples", &RecordingReadOptions::max_samples);
  m.def("sigmf_meta_path", &sigmf_meta_path, "name"_a);
  m.def("sigmf_data_path", &sigmf_data_path, "name"_a);
  m.def(
      "read_sigmf",
      [](const std::string& name, const RecordingReadOptions& options) {
        py::gil_scoped_release nogil;
        return read_sigmf(name, options);
      },
      "name"_a, "options"_a = RecordingReadOptions{}, "Reads a SigMF recording; InputError names file and key.");
  py::class_<RawIqSpec>(m, "RawIqSpec", "What a raw IQ file is: datatype, rate, centre, full scale, header.")
      .def(py::init([](std::string datatype, double sample_rate_hz, double center_frequency_hz, double full_scale,
                       std::uint64_t header_bytes) {
             return RawIqSpec{std::move(datatype), sample_rate_hz, center_frequency_hz, full_scale, header_bytes};
           }),
           "datatype"_a = "ci16_le", "sample_rate_hz"_a = 0.0, "center_frequency_hz"_a = RawIqSpec{}.center_frequency_hz,
           "full_scale"_a = 1.0, "header_bytes"_a = 0)
      .def_readwrite("datatype", &RawIqSpec::datatype)
      .def_readwrite("sample_rate_hz", &RawIqSpec::sample_rate_hz)
      .def_readwrite("center_frequency_hz", &RawIqSpec::center_frequency_hz)
      .def_readwrite("full_scale", &RawIqSpec::full_scale)
      .def_readwrite("header_bytes", &RawIqSpec::header_bytes);
  m.def(
      "read_raw_iq",
      [](const std::string& path, const RawIqSpec& spec, const RecordingReadOptions& options) {
        py::gil_scoped_release nogil;
        return read_raw_iq(path, spec, options);
      },
      "path"_a, "spec"_a, "options"_a = RecordingReadOptions{}, "Reads a raw interleaved IQ file.");
  m.def(
      "decode_iq",
      [](py::handle bytes, const IqDatatype& datatype, double full_scale, py::object out) {
        auto b = input_vector<std::uint8_t>(bytes, "bytes");
        const std::size_t per = datatype.sample_bytes();
        if (per == 0 || static_cast<std::size_t>(b.size()) % per != 0) {
          throw py::value_error("bytes: " + std::to_string(b.size()) + " bytes are not a whole number of " +
                                datatype.name() + " samples");
        }
        auto o = output_array<cf32>(out, {static_cast<py::ssize_t>(b.size() / per)}, "out");
        auto sb = const_span(b);
        auto so = mutable_span(o);
        py::gil_scoped_release nogil;
        decode_iq(sb, datatype, full_scale, so);
        return o;
      },
      "bytes"_a, "datatype"_a, "full_scale"_a = 1.0, "out"_a = py::none(),
      "Interleaved bytes (uint8 array or bytes-like via numpy.frombuffer) -> complex64 samples.");
  m.def(
      "encode_iq",
      [](py::handle samples, const IqDatatype& datatype, double full_scale) {
        auto s = input_vector<cf32>(samples, "samples");
        py::array_t<std::uint8_t> out(static_cast<py::ssize_t>(s.size() * datatype.sample_bytes()));
        auto ss = const_span(s);
        auto so = mutable_span(out);
        std::uint64_t clipped = 0;
        {
          py::gil_scoped_release nogil;
          clipped = encode_iq(ss, datatype, full_scale, so);
        }
        return py::make_tuple(out, clipped);
      },
      "samples"_a, "datatype"_a, "full_scale"_a = 1.0,
      "complex64 samples -> (uint8 bytes, number of clipped components).");

  py::class_<SigmfWriteSpec>(m, "SigmfWriteSpec", "What a SigmfWriter writes besides the samples.")
      .def(py::init<>())
      .def_readwrite("datatype", &SigmfWriteSpec::datatype)
      .def_readwrite("sample_rate_hz", &SigmfWriteSpec::sample_rate_hz)
      .def_readwrite("center_frequency_hz", &SigmfWriteSpec::center_frequency_hz)
      .def_readwrite("full_scale", &SigmfWriteSpec::full_scale)
      .def_readwrite("description", &SigmfWriteSpec::description)
      .def_readwrite("author", &SigmfWriteSpec::author)
      .def_readwrite("datetime", &SigmfWriteSpec::datetime)
      .def_readwrite("annotations", &SigmfWriteSpec::annotations);
  py::class_<SigmfWriter>(m, "SigmfWriter",
                          "Streaming SigMF writer: append(), then finish(); without finish() nothing is left.")
      .def(py::init<const std::string&, const SigmfWriteSpec&>(), "name"_a, "spec"_a)
      .def(
          "append",
          [](SigmfWriter& self, py::handle samples) {
            auto s = input_vector<cf32>(samples, "samples");
            auto ss = const_span(s);
            py::gil_scoped_release nogil;
            self.append(ss);
          },
          "samples"_a)
      .def_property_readonly("samples_written", &SigmfWriter::samples_written)
      .def_property_readonly("clipped_components", &SigmfWriter::clipped_components)
      .def("finish", &SigmfWriter::finish, "global_extension_json"_a = "")
      .def_property_readonly("meta_path", &SigmfWriter::meta_path)
      .def_property_readonly("data_path", &SigmfWriter::data_path);
  m.def(
      "write_sigmf",
      [](const std::string& name, py::handle samples, const SigmfWriteSpec& spec, const std::string& ext) {
        auto s = input_vector<cf32>(samples, "samples");
        auto ss = const_span(s);
        py::gil_scoped_release nogil;
        write_sigmf(name, ss, spec, ext);
      },
      "name"_a, "samples"_a, "spec"_a, "global_extension_json"_a = "", "Writes a whole recording at once.");
}

}  // namespace qamsight::python
