// init_fec: convolutional code with Viterbi decoding, LDPC codes, the code factory.
#include "bindings.hpp"
#include "qamsight/fec.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

template <class T>
py::array_t<T> copy_of(std::span<const T> s) {
  return vector_to_array(std::vector<T>(s.begin(), s.end()));
}

// Decoders with the sizes of their code, so decode() can allocate its output. The library's
// decoders do not refer back to their code, and neither do these.
struct PyDecoder {
  std::unique_ptr<Decoder> impl;
  std::size_t info_bits = 0, coded_bits = 0;
  Decoder& impl_ref() { return *impl; }
};
struct PyViterbiDecoder {
  ViterbiDecoder impl;
  std::size_t info_bits = 0, coded_bits = 0;
  ViterbiDecoder& impl_ref() { return impl; }
};
struct PyLdpcDecoder {
  LdpcDecoder impl;
  std::size_t info_bits = 0, coded_bits = 0;
  LdpcDecoder& impl_ref() { return impl; }
};

template <class D>
py::tuple decode_with(D& self, py::handle llr, const py::object& out) {
  auto in = input_vector<float>(llr, "llr");
  if (static_cast<std::size_t>(in.size()) != self.coded_bits) {
    throw py::value_error("llr: expected " + std::to_string(self.coded_bits) + " values (coded_bits), got " +
                          std::to_string(in.size()));
  }
  auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(self.info_bits)}, "out");
  auto si = const_span(in);
  auto so = mutable_span(o);
  DecodeReport rep;
  {
    py::gil_scoped_release nogil;
    rep = self.impl_ref().decode(si, so);
  }
  return py::make_tuple(o, rep);
}

template <class D, class... Extra>
void def_decoder_common(py::class_<D, Extra...>& cls) {
  cls.def_readonly("info_bits", &D::info_bits)
      .def_readonly("coded_bits", &D::coded_bits)
      .def(
          "decode", [](D& self, py::handle llr, py::object out) { return decode_with(self, llr, out); }, "llr"_a,
          "out"_a = py::none(),
          "Decodes one codeword of coded_bits float32 LLRs (positive favours 0); returns\n"
          "(info bits as uint8, DecodeReport). One decoder per thread.");
}

}  // namespace

void init_fec(py::module_& m) {
  py::class_<DecodeReport>(m, "DecodeReport", "What a decoder says about one codeword.")
      .def_readonly("iterations", &DecodeReport::iterations)
      .def_readonly("codeword_valid", &DecodeReport::codeword_valid)
      .def("__repr__", [](const DecodeReport& r) {
        return "DecodeReport(iterations=" + std::to_string(r.iterations) +
               ", codeword_valid=" + (r.codeword_valid ? "True" : "False") + ")";
      });

  py::class_<PyDecoder> decoder(m, "Decoder", "Decoding workspace of one code, from Code.make_decoder().");
  def_decoder_common(decoder);

  py::class_<Code, std::shared_ptr<Code>>(m, "Code", "A block code: k information bits in, n coded bits out.")
      .def_property_readonly("name", &Code::name)
      .def("description", &Code::description)
      .def_property_readonly("info_bits", &Code::info_bits)
      .def_property_readonly("coded_bits", &Code::coded_bits)
      .def("rate", &Code::rate, "k / n.")
      .def(
          "encode",
          [](const Code& self, py::handle info, py::object out) {
            auto in = input_vector<std::uint8_t>(info, "info");
            auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(self.coded_bits())}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.encode(si, so);
            return o;
          },
          "info"_a, "out"_a = py::none(), "info (info_bits uint8 bits) -> coded_bits uint8 bits.")
      .def(
          "make_decoder",
          [](const Code& c) { return PyDecoder{c.make_decoder(), c.info_bits(), c.coded_bits()}; },
          "A new decoding workspace (allocates; one per thread).");

  // Convolutional code.
  py::enum_<ConvRate>(m, "ConvRate", "Rates of the punctured K = 7 convolutional code.")
      .value("r1_2", ConvRate::r1_2)
      .value("r2_3", ConvRate::r2_3)
      .value("r3_4", ConvRate::r3_4)
      .value("r5_6", ConvRate::r5_6);
  py::class_<ConvolutionalCodeConfig>(m, "ConvolutionalCodeConfig", "info_bits 1..1e6 per frame, and the rate.")
      .def(py::init([](std::size_t info_bits, ConvRate rate) { return ConvolutionalCodeConfig{info_bits, rate}; }),
           "info_bits"_a = 1024, "rate"_a = ConvRate::r1_2)
      .def_readwrite("info_bits", &ConvolutionalCodeConfig::info_bits)
      .def_readwrite("rate", &ConvolutionalCodeConfig::rate);
  py::class_<ConvolutionalCode, Code, std::shared_ptr<ConvolutionalCode>>(
      m, "ConvolutionalCode", "K = 7 code, generators 171/133 (octal), zero-tail frames, puncturing.")
      .def(py::init<ConvolutionalCodeConfig>(), "config"_a = ConvolutionalCodeConfig{})
      .def_property_readonly_static("CONSTRAINT_LENGTH",
                                    [](py::object) { return ConvolutionalCode::kConstraintLength; })
      .def_property_readonly_static("TAIL_BITS", [](py::object) { return ConvolutionalCode::kTailBits; })
      .def_property_readonly_static("STATES", [](py::object) { return ConvolutionalCode::kStates; })
      .def_property_readonly_static("GENERATOR_A", [](py::object) { return ConvolutionalCode::kGeneratorA; })
      .def_property_readonly_static("GENERATOR_B", [](py::object) { return ConvolutionalCode::kGeneratorB; })
      .def_property_readonly("puncture_rate", &ConvolutionalCode::puncture_rate)
      .def_property_readonly("steps", &ConvolutionalCode::steps, "Trellis steps per frame: k + 6.")
      .def_property_readonly("keep_a", [](const ConvolutionalCode& c) { return copy_of(c.keep_a()); })
      .def_property_readonly("keep_b", [](const ConvolutionalCode& c) { return copy_of(c.keep_b()); })
      .def(
          "encode_mother",
          [](const ConvolutionalCode& self, py::handle info, py::object out) {
            auto in = input_vector<std::uint8_t>(info, "info");
            auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(2 * self.steps())}, "out");
            self.encode_mother(const_span(in), mutable_span(o));
            return o;
          },
          "info"_a, "out"_a = py::none(), "Unpunctured encoding: 2 (k + 6) mother-code bits A0 B0 A1 B1 ...")
      .def(
          "depuncture",
          [](const ConvolutionalCode& self, py::handle llr, py::object out) {
            auto in = input_vector<float>(llr, "llr");
            auto o = output_array<float>(out, {static_cast<py::ssize_t>(2 * self.steps())}, "out");
            self.depuncture(const_span(in), mutable_span(o));
            return o;
          },
          "llr"_a, "out"_a = py::none(), "Coded LLRs (n) -> mother LLRs (2 (k + 6)), 0 where punctured.");
  py::class_<PyViterbiDecoder> viterbi(m, "ViterbiDecoder",
                                       "Soft-decision Viterbi decoder of a ConvolutionalCode (64 states, full\n"
                                       "traceback from state 0).");
  viterbi.def(py::init([](const ConvolutionalCode& code) {
                return std::unique_ptr<PyViterbiDecoder>(
                    new PyViterbiDecoder{ViterbiDecoder(code), code.info_bits(), code.coded_bits()});
              }),
              "code"_a)
      .def(
          "decode_mother",
          [](PyViterbiDecoder& self, py::handle llr, py::object out) {
            auto in = input_vector<float>(llr, "mother_llr");
            if (static_cast<std::size_t>(in.size()) != 2 * (self.info_bits + ConvolutionalCode::kTailBits)) {
              throw py::value_error("mother_llr: expected " +
                                    std::to_string(2 * (self.info_bits + ConvolutionalCode::kTailBits)) +
                                    " values (2 (k + 6)), got " + std::to_string(in.size()));
            }
            auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(self.info_bits)}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            py::gil_scoped_release nogil;
            self.impl.decode_mother(si, so);
            return o;
          },
          "mother_llr"_a, "out"_a = py::none(), "Decodes unpunctured mother-code LLRs (2 (k + 6) values).");
  def_decoder_common(viterbi);

  // LDPC.
  py::class_<ParityCheckMatrix>(m, "ParityCheckMatrix", "A sparse binary parity-check matrix (rows = checks).")
      .def(py::init<std::size_t, std::size_t, std::vector<std::vector<std::uint32_t>>>(), "rows"_a, "cols"_a,
           "row_columns"_a)
      .def_static("parse_alist", &ParityCheckMatrix::parse_alist, "text"_a, "source"_a = "<string>",
                  "Reads MacKay's alist format; InputError \"alist '<source>' line <L>: <problem>\".")
      .def_static("read_alist", &ParityCheckMatrix::read_alist, "path"_a)
      .def("to_alist", &ParityCheckMatrix::to_alist)
      .def("write_alist", &ParityCheckMatrix::write_alist, "path"_a)
      .def_property_readonly("rows", &ParityCheckMatrix::rows)
      .def_property_readonly("cols", &ParityCheckMatrix::cols)
      .def_property_readonly("edges", &ParityCheckMatrix::edges)
      .def(
          "row",
          [](const ParityCheckMatrix& h, std::size_t r) {
            if (r >= h.rows()) throw py::index_error("row " + std::to_string(r) + " of " + std::to_string(h.rows()));
            return copy_of(h.row(r));
          },
          "r"_a, "Column indices of row r, ascending (uint32).")
      .def(
          "column",
          [](const ParityCheckMatrix& h, std::size_t c) {
            if (c >= h.cols()) throw py::index_error("column " + std::to_string(c) + " of " + std::to_string(h.cols()));
            return copy_of(h.column(c));
          },
          "c"_a, "Row indices of column c, ascending (uint32).")
      .def("max_row_weight", &ParityCheckMatrix::max_row_weight)
      .def("max_column_weight", &ParityCheckMatrix::max_column_weight)
      .def(
          "syndrome_weight",
          [](const ParityCheckMatrix& h, py::handle word) {
            auto w = input_vector<std::uint8_t>(word, "word");
            if (static_cast<std::size_t>(w.size()) != h.cols()) {
              throw py::value_error("word: expected " + std::to_string(h.cols()) + " bits, got " +
                                    std::to_string(w.size()));
            }
            return h.syndrome_weight(const_span(w));
          },
          "word"_a, "Number of unsatisfied checks of a word of cols bits.")
      .def("rank", &ParityCheckMatrix::rank, "Rank over GF(2).")
      .def("__eq__", [](const ParityCheckMatrix& a, const ParityCheckMatrix& b) { return a == b; });

  py::class_<LdpcPrototype>(m, "LdpcPrototype", "A quasi-cyclic base matrix: shifts, -1 for a zero block.")
      .def(py::init<>())
      .def_readwrite("codeword_bits", &LdpcPrototype::codeword_bits)
      .def_readwrite("lifting", &LdpcPrototype::lifting)
      .def_readwrite("block_rows", &LdpcPrototype::block_rows)
      .def_readwrite("block_cols", &LdpcPrototype::block_cols)
      .def_readwrite("rate_text", &LdpcPrototype::rate_text)
      .def_readwrite("shifts", &LdpcPrototype::shifts, "Row-major block_rows * block_cols (a copy; assign a list).")
      .def(
          "shift",
          [](const LdpcPrototype& p, unsigned r, unsigned c) {
            if (r >= p.block_rows || c >= p.block_cols || p.shifts.size() != std::size_t{p.block_rows} * p.block_cols) {
              throw py::index_error("block (" + std::to_string(r) + ", " + std::to_string(c) + ") outside the prototype");
            }
            return p.shift(r, c);
          },
          "block_row"_a, "block_col"_a)
      .def("expand", &LdpcPrototype::expand, "The expanded parity-check matrix.");
  m.def("ieee80211_ldpc_prototype", &ieee80211_ldpc_prototype, "codeword_bits"_a, "rate_num"_a, "rate_den"_a,
        "IEEE 802.11n/ac LDPC prototype (n = 648, 1296, 1944; rates 1/2, 2/3, 3/4, 5/6).");

  py::enum_<MinSumRule>(m, "MinSumRule", "Check-node rule of the min-sum decoder.")
      .value("normalised", MinSumRule::normalised)
      .value("offset", MinSumRule::offset);
  py::class_<LdpcDecoderConfig>(m, "LdpcDecoderConfig", "Layered min-sum settings.")
      .def(py::init([](int max_iterations, MinSumRule rule, float normalisation, float offset) {
             return LdpcDecoderConfig{max_iterations, rule, normalisation, offset};
           }),
           "max_iterations"_a = 50, "rule"_a = MinSumRule::normalised, "normalisation"_a = 0.75f, "offset"_a = 0.5f)
      .def_readwrite("max_iterations", &LdpcDecoderConfig::max_iterations)
      .def_readwrite("rule", &LdpcDecoderConfig::rule)
      .def_readwrite("normalisation", &LdpcDecoderConfig::normalisation)
      .def_readwrite("offset", &LdpcDecoderConfig::offset);
  py::enum_<LdpcEncoderKind>(m, "LdpcEncoderKind", "How an LdpcCode computes its parity bits.")
      .value("dual_diagonal", LdpcEncoderKind::dual_diagonal)
      .value("dense", LdpcEncoderKind::dense);
  py::class_<LdpcCode, Code, std::shared_ptr<LdpcCode>>(m, "LdpcCode", "An LDPC code: matrix, encoder, decoder settings.")
      .def(py::init<std::string, ParityCheckMatrix, LdpcDecoderConfig>(), "name"_a, "h"_a,
           "decoder"_a = LdpcDecoderConfig{})
      .def(py::init<std::string, const LdpcPrototype&, LdpcDecoderConfig>(), "name"_a, "prototype"_a,
           "decoder"_a = LdpcDecoderConfig{})
      .def_property_readonly("parity_check", &LdpcCode::parity_check)
      .def_property_readonly("info_positions", [](const LdpcCode& c) { return copy_of(c.info_positions()); })
      .def_property_readonly("encoder_kind", &LdpcCode::encoder_kind)
      .def_property_readonly("decoder_config", &LdpcCode::decoder_config)
      .def(
          "make_ldpc_decoder",
          [](const LdpcCode& c) {
            return std::unique_ptr<PyLdpcDecoder>(new PyLdpcDecoder{LdpcDecoder(c), c.info_bits(), c.coded_bits()});
          },
          "An LdpcDecoder for this code.");
  m.attr("LDPC_MAX_DENSE_CODEWORD_BITS") = LdpcCode::kMaxDenseCodewordBits;
  m.attr("LDPC_MAX_LIFTING") = LdpcCode::kMaxLifting;
  py::class_<PyLdpcDecoder> ldpc_dec(m, "LdpcDecoder", "Layered min-sum decoder with early stop (deterministic).");
  ldpc_dec
      .def(py::init([](const LdpcCode& code) {
             return std::unique_ptr<PyLdpcDecoder>(
                 new PyLdpcDecoder{LdpcDecoder(code), code.info_bits(), code.coded_bits()});
           }),
           "code"_a)
      .def(
          "decode_codeword",
          [](PyLdpcDecoder& self, py::handle llr, py::object out) {
            auto in = input_vector<float>(llr, "llr");
            if (static_cast<std::size_t>(in.size()) != self.coded_bits) {
              throw py::value_error("llr: expected " + std::to_string(self.coded_bits) + " values (coded_bits), got " +
                                    std::to_string(in.size()));
            }
            auto o = output_array<std::uint8_t>(out, {static_cast<py::ssize_t>(self.coded_bits)}, "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            DecodeReport rep;
            {
              py::gil_scoped_release nogil;
              rep = self.impl.decode_codeword(si, so);
            }
            return py::make_tuple(o, rep);
          },
          "llr"_a, "out"_a = py::none(), "Decodes; returns (hard decisions of the whole codeword, DecodeReport).")
      .def_property_readonly(
          "posterior",
          [](py::object self) { return readonly_view<float>(self.cast<PyLdpcDecoder&>().impl.posterior(), self); },
          "Posterior LLRs of the last decode (read-only float32 view, overwritten by the next decode).");
  def_decoder_common(ldpc_dec);

  // Factory.
  py::class_<CodeOptions>(m, "CodeOptions", "Settings the code names leave open.")
      .def(py::init([](std::size_t conv_info_bits, const LdpcDecoderConfig& ldpc) {
             return CodeOptions{conv_info_bits, ldpc};
           }),
           "conv_info_bits"_a = 1024, "ldpc"_a = LdpcDecoderConfig{})
      .def_readwrite("conv_info_bits", &CodeOptions::conv_info_bits)
      .def_readwrite("ldpc", &CodeOptions::ldpc);
  py::class_<CodeNameInfo>(m, "CodeNameInfo", "A built-in code name and its description.")
      .def_readonly("name", &CodeNameInfo::name)
      .def_readonly("description", &CodeNameInfo::description);
  m.def("code_names", &code_names, "The built-in code names, in listing order.");
  m.def(
      "make_code",
      [](const std::string& name, const CodeOptions& options) {
        return std::const_pointer_cast<Code>(make_code(name, options));
      },
      "name"_a, "options"_a = CodeOptions{},
      "A code by name (code_names(); 'ldpc-alist:PATH' reads a matrix). ConfigError / InputError.");
}

}  // namespace qamsight::python
