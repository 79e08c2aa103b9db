// init_theory: closed-form error rates and capacities, vectorised over NumPy arrays (submodule).
#include <string>

#include "bindings.hpp"
#include "qamsight/theory.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_theory(py::module_& m) {
  namespace th = qamsight::theory;
  py::module_ t = m.def_submodule(
      "theory",
      "Closed-form and numerically integrated AWGN references (pure functions in double).\n\n"
      "Every numeric argument may be a scalar or an array (NumPy broadcasting); scalars give a\n"
      "float, arrays an array of float64.");
  t.def("q_function", py::vectorize([](double x) { return th::q_function(x); }), "x"_a,
        "Gaussian tail Q(x) = erfc(x / sqrt 2) / 2, accurate far into the tail.");
  t.def("q_inverse", py::vectorize([](double p) { return th::q_inverse(p); }), "p"_a, "Inverse of Q, 0 < p < 1.");
  t.def("es_n0_db_from_eb_n0_db",
        py::vectorize([](double eb, double bps, double rate) { return th::es_n0_db_from_eb_n0_db(eb, bps, rate); }),
        "eb_n0_db"_a, "bits_per_symbol"_a, "code_rate"_a = 1.0,
        "es_n0_db = eb_n0_db + 10 log10(bits_per_symbol * code_rate) (Eb counts information bits).");
  t.def("eb_n0_db_from_es_n0_db",
        py::vectorize([](double es, double bps, double rate) { return th::eb_n0_db_from_es_n0_db(es, bps, rate); }),
        "es_n0_db"_a, "bits_per_symbol"_a, "code_rate"_a = 1.0, "Inverse of es_n0_db_from_eb_n0_db.");
  t.def("ber_bpsk", py::vectorize([](double eb) { return th::ber_bpsk(eb); }), "eb_n0_db"_a,
        "BPSK (and Gray QPSK per bit) BER = Q(sqrt(2 Eb/N0)).");
  t.def("ber_square_qam", py::vectorize([](unsigned order, double eb) { return th::ber_square_qam(order, eb); }),
        "order"_a, "eb_n0_db"_a, "Exact BER of Gray square M-QAM in AWGN (Cho and Yoon 2002).");
  t.def("ser_square_qam", py::vectorize([](unsigned order, double es) { return th::ser_square_qam(order, es); }),
        "order"_a, "es_n0_db"_a, "Exact SER of square M-QAM in AWGN; argument Es/N0 in dB.");
  t.def("ser_psk", py::vectorize([](unsigned order, double es) { return th::ser_psk(order, es); }), "order"_a,
        "es_n0_db"_a, "Exact SER of M-PSK in AWGN (Craig integral); argument Es/N0 in dB.");
  t.def("ber_psk_gray", py::vectorize([](unsigned order, double es) { return th::ber_psk_gray(order, es); }),
        "order"_a, "es_n0_db"_a, "Exact BER of Gray-labelled M-PSK; argument Es/N0 in dB.");
  t.def(
      "ber_for",
      [](const std::string& modulation, py::object eb_n0_db) {
        return py::vectorize([&modulation](double eb) { return th::ber_for(modulation, eb); })(eb_n0_db);
      },
      "modulation"_a, "eb_n0_db"_a, "Reference BER of a built-in modulation by name at Eb/N0 (dB).");
  t.def(
      "ser_for",
      [](const std::string& modulation, py::object eb_n0_db) {
        return py::vectorize([&modulation](double eb) { return th::ser_for(modulation, eb); })(eb_n0_db);
      },
      "modulation"_a, "eb_n0_db"_a, "Reference SER of a built-in modulation by name at Eb/N0 (dB).");
  t.def("has_reference", [](const std::string& modulation) { return th::has_reference(modulation); },
        "modulation"_a, "True if ber_for / ser_for know the modulation.");
  t.def("shannon_capacity", py::vectorize([](double snr) { return th::shannon_capacity(snr); }), "snr_db"_a,
        "Capacity of the complex AWGN channel, log2(1 + SNR) bit per complex dimension.");
  t.def("shannon_min_eb_n0_db", py::vectorize([](double eta) { return th::shannon_min_eb_n0_db(eta); }),
        "spectral_efficiency"_a, "Minimum Eb/N0 (dB) at spectral efficiency eta: 10 log10((2^eta - 1) / eta).");
  t.def(
      "required_eb_n0_db",
      [](const std::string& modulation, py::object target_ber) {
        return py::vectorize([&modulation](double p) { return th::required_eb_n0_db(modulation, p); })(target_ber);
      },
      "modulation"_a, "target_ber"_a, "Eb/N0 (dB) at which ber_for(modulation, .) equals target_ber.");
  t.def(
      "required_eb_n0_db_for_ser",
      [](const std::string& modulation, py::object target_ser) {
        return py::vectorize([&modulation](double p) { return th::required_eb_n0_db_for_ser(modulation, p); })(
            target_ser);
      },
      "modulation"_a, "target_ser"_a, "Eb/N0 (dB) at which ser_for(modulation, .) equals target_ser.");
}

}  // namespace qamsight::python
