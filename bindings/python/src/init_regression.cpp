// init_regression: the statistical gate of a sweep against theory or a baseline run.

#include "bindings.hpp"
#include "qamsight/regression.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

GateConfig gate(double confidence, bool holm, double target_ber) { return GateConfig{confidence, holm, target_ber}; }

}  // namespace

void init_regression(py::module_& m) {
  py::class_<GateConfig>(m, "GateConfig", "Settings of the gate: family-wise confidence, Holm, target BER.")
      .def(py::init(&gate), "confidence"_a = 0.99, "holm"_a = true, "target_ber"_a = 1e-4)
      .def_readwrite("confidence", &GateConfig::confidence, "The false-alarm rate is 1 - confidence.")
      .def_readwrite("holm", &GateConfig::holm, "Holm step-down correction across points (else per point).")
      .def_readwrite("target_ber", &GateConfig::target_ber, "Where implementation loss is reported.");

  py::class_<GateRow>(m, "GateRow", "One point's verdict.")
      .def_readonly("point", &GateRow::point)
      .def_readonly("tested", &GateRow::tested, "False if there is no reference for the point.")
      .def_readonly("reference_ber", &GateRow::reference_ber, "Theory, or the baseline's measured BER.")
      .def_readonly("p_value", &GateRow::p_value)
      .def_readonly("alpha", &GateRow::alpha, "The (Holm-adjusted) level the point was tested at.")
      .def_readonly("interval_low", &GateRow::interval_low)
      .def_readonly("interval_high", &GateRow::interval_high)
      .def_readonly("failed", &GateRow::failed)
      .def_readonly("note", &GateRow::note)
      .def("__repr__", [](const GateRow& r) {
        return "GateRow(" + r.point.spec.modulation + ", eb_n0_db=" + format_number(r.point.spec.eb_n0_db) +
               ", " + (!r.tested ? "skipped" : r.failed ? "FAIL" : "pass") + ")";
      });

  py::class_<ImplementationLoss>(m, "ImplementationLoss", "Eb/N0 at the target BER, measured and reference.")
      .def_readonly("modulation", &ImplementationLoss::modulation)
      .def_readonly("target_ber", &ImplementationLoss::target_ber)
      .def_readonly("available", &ImplementationLoss::available)
      .def_readonly("measured_eb_n0_db", &ImplementationLoss::measured_eb_n0_db)
      .def_readonly("reference_eb_n0_db", &ImplementationLoss::reference_eb_n0_db)
      .def_readonly("loss_db", &ImplementationLoss::loss_db, "measured - reference (positive = worse), dB.")
      .def_readonly("note", &ImplementationLoss::note);

  py::class_<GateReport>(m, "GateReport",
                         "The gate's report: kind ('theory' or 'baseline'), rows, losses and the verdict\n"
                         "as pass_ / passed (`pass` is a Python keyword).")
      .def_readonly("kind", &GateReport::kind)
      .def_readonly("config", &GateReport::config)
      .def_readonly("rows", &GateReport::rows)
      .def_readonly("losses", &GateReport::losses)
      .def_readonly("pass_", &GateReport::pass)
      .def_property_readonly("passed", [](const GateReport& r) { return r.pass; })
      .def("__bool__", [](const GateReport& r) { return r.pass; })
      .def("junit_xml", &gate_junit_xml, "JUnit XML of the report, one test case per point.")
      .def("__repr__", [](const GateReport& r) {
        return "GateReport(" + r.kind + ", " + std::to_string(r.rows.size()) + " rows, " +
               (r.pass ? "pass" : "FAIL") + ")";
      });

  m.def(
      "check_against_theory",
      [](const SweepResult& result, double confidence, bool holm, double target_ber) {
        return check_against_theory(result, gate(confidence, holm, target_ber));
      },
      "result"_a, py::kw_only(), "confidence"_a = 0.99, "holm"_a = true, "target_ber"_a = 1e-4,
      "Every point's exact interval at the Holm-adjusted level must contain the AWGN theory BER\n"
      "(`qamsight check RESULT`).");
  m.def(
      "check_against_baseline",
      [](const SweepResult& result, const SweepResult& baseline, double confidence, bool holm, double target_ber) {
        return check_against_baseline(result, baseline, gate(confidence, holm, target_ber));
      },
      "result"_a, "baseline"_a, py::kw_only(), "confidence"_a = 0.99, "holm"_a = true, "target_ber"_a = 1e-4,
      "Flags points whose BER is significantly above the baseline's at the same modulation and SNR\n"
      "(`qamsight check RESULT --baseline BASE`).");
  m.def("eb_n0_at_ber", &eb_n0_at_ber, "curve"_a, "target_ber"_a,
        "Eb/N0 where a measured curve (list of PointResult) crosses target_ber; NaN if not bracketed.");
  m.def("holm_reject", &holm_reject, "p_values"_a, "alpha"_a,
        "Holm's step-down procedure (Holm 1979): which hypotheses are rejected at level alpha.");
  m.def("gate_junit_xml", &gate_junit_xml, "report"_a, "JUnit XML of a report.");
}

}  // namespace qamsight::python
