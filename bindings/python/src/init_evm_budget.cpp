// init_evm_budget: EVM limits of open standards, line-up budgets, simulation and allowance search.
#include "bindings.hpp"
#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

// Keyword construction of a plain settings struct: start from the C++ defaults and assign each
// keyword through the bound attribute (so unknown names raise AttributeError and every value
// goes through the attribute's own conversion).
template <class T>
T from_keywords(const py::kwargs& kw) {
  py::object self = py::cast(T{});
  for (auto item : kw) self.attr(item.first) = item.second;
  return self.cast<T>();
}

}  // namespace

void init_evm_budget(py::module_& m) {
  // ---- limits -------------------------------------------------------------------------------
  py::enum_<LimitProvenance>(m, "LimitProvenance",
                             "How sure a built-in limit is: confirmed, partial or from_memory.")
      .value("confirmed", LimitProvenance::confirmed)
      .value("partial", LimitProvenance::partial)
      .value("from_memory", LimitProvenance::from_memory);
  m.def("provenance_name", [](LimitProvenance p) { return std::string(provenance_name(p)); }, "provenance"_a,
        "'confirmed', 'partial', 'from memory'.");
  py::class_<EvmLimitRow>(m, "EvmLimitRow", "One limit of a standard's table, with its source.")
      .def_readonly("modulation", &EvmLimitRow::modulation)
      .def_readonly("code_rate", &EvmLimitRow::code_rate)
      .def_readonly("limit_pct", &EvmLimitRow::limit_pct)
      .def_readonly("limit_db", &EvmLimitRow::limit_db)
      .def_readonly("stated_in_db", &EvmLimitRow::stated_in_db)
      .def_readonly("document", &EvmLimitRow::document)
      .def_readonly("table", &EvmLimitRow::table)
      .def_readonly("edition", &EvmLimitRow::edition)
      .def_readonly("provenance", &EvmLimitRow::provenance)
      .def_readonly("note", &EvmLimitRow::note);
  py::class_<EvmLimitTable>(m, "EvmLimitTable", "A named set of limit rows (one standard or PHY).")
      .def_readonly("name", &EvmLimitTable::name)
      .def_readonly("title", &EvmLimitTable::title)
      .def_readonly("has_rates", &EvmLimitTable::has_rates)
      .def_readonly("measurement", &EvmLimitTable::measurement)
      .def_readonly("rows", &EvmLimitTable::rows)
      .def("row", &EvmLimitTable::row, "modulation"_a, "rate"_a = "", py::return_value_policy::copy,
           "The row of a modulation (and rate); ConfigError naming 'modulation' or 'rate'.");
  m.def("evm_limit_tables", &evm_limit_tables, py::return_value_policy::copy,
        "The built-in tables (3gpp-nr-bs, 3gpp-lte-bs, ieee-802.11-*).");
  m.def("evm_limit_table", &evm_limit_table, "name"_a, py::return_value_policy::copy,
        "A built-in table by name; ConfigError ('limit table') otherwise.");
  py::class_<EvmLimit>(m, "EvmLimit", "A limit to check against (user-given or from a table).")
      .def_readonly("pct", &EvmLimit::pct)
      .def_readonly("db", &EvmLimit::db)
      .def_readonly("source", &EvmLimit::source)
      .def_readonly("row", &EvmLimit::row)
      .def("__repr__", [](const EvmLimit& l) { return "EvmLimit(" + format_number(l.pct) + "%, " + l.source + ")"; });
  m.def("parse_evm_limit", &parse_evm_limit, "text"_a,
        "'8%', '8 %', '-22dB', '-22 dB' -> EvmLimit; ConfigError ('limit') otherwise.");
  m.def("evm_limit_from_table", &evm_limit_from_table, "table"_a, "modulation"_a, "rate"_a = "",
        "The limit of a table row (the CLI's --limit-table / --rate).");
  py::class_<EvmVerdict>(m, "EvmVerdict", "RMS EVM against a limit: margin_db = limit_db - measured_db.")
      .def_readonly("measured_pct", &EvmVerdict::measured_pct)
      .def_readonly("measured_db", &EvmVerdict::measured_db)
      .def_readonly("limit_pct", &EvmVerdict::limit_pct)
      .def_readonly("limit_db", &EvmVerdict::limit_db)
      .def_readonly("margin_db", &EvmVerdict::margin_db)
      .def_readonly("required_margin_db", &EvmVerdict::required_margin_db)
      .def_readonly("pass_", &EvmVerdict::pass)
      .def_property_readonly("passed", [](const EvmVerdict& v) { return v.pass; })
      .def("__bool__", [](const EvmVerdict& v) { return v.pass; })
      .def("__repr__", [](const EvmVerdict& v) {
        return "EvmVerdict(" + format_number(v.measured_pct) + "% against " + format_number(v.limit_pct) +
               "%, margin " + format_number(v.margin_db) + " dB, " + (v.pass ? "pass" : "FAIL") + ")";
      });
  m.def("evm_verdict", &evm_verdict, "measured_pct"_a, "limit"_a, "required_margin_db"_a = 0.0,
        "Measured (or predicted) RMS EVM in % against a limit.");
  m.def("evm_limit_tables_markdown", &evm_limit_tables_markdown, "The tables as Markdown (docs/evm-limits.md).");

  // ---- line-up ------------------------------------------------------------------------------
  py::class_<ReceiverNoiseSpec>(m, "ReceiverNoiseSpec", "SNR from a noise figure and the signal level.")
      .def(py::init([](double signal_dbm, double noise_figure_db, double noise_bandwidth_hz) {
             return ReceiverNoiseSpec{signal_dbm, noise_figure_db, noise_bandwidth_hz};
           }),
           "signal_dbm"_a = -60.0, "noise_figure_db"_a = 3.0, "noise_bandwidth_hz"_a = 0.0)
      .def_readwrite("signal_dbm", &ReceiverNoiseSpec::signal_dbm)
      .def_readwrite("noise_figure_db", &ReceiverNoiseSpec::noise_figure_db)
      .def_readwrite("noise_bandwidth_hz", &ReceiverNoiseSpec::noise_bandwidth_hz, "0 = the symbol rate.");

  py::class_<EvmLineup>(m, "EvmLineup",
                        "A transmitter/receiver line-up, component by component (evm_budget.hpp); construct\n"
                        "with keywords, e.g. EvmLineup(modulation='64qam', snr_db=30.0, iq_gain_db=0.2).")
      .def(py::init(&from_keywords<EvmLineup>))
      .def("__copy__", [](const EvmLineup& l) { return l; })
      .def("__deepcopy__", [](const EvmLineup& l, py::dict) { return l; }, "memo"_a)
      .def_readwrite("name", &EvmLineup::name)
      .def_readwrite("modulation", &EvmLineup::modulation)
      .def_readwrite("symbol_rate_hz", &EvmLineup::symbol_rate_hz)
      .def_readwrite("pulse", &EvmLineup::pulse)
      .def_readwrite("carrier_frequency_hz", &EvmLineup::carrier_frequency_hz)
      .def_readwrite("snr_db", &EvmLineup::snr_db, "Es/N0 of the received signal, dB, or None.")
      .def_readwrite("noise", &EvmLineup::noise, "A ReceiverNoiseSpec or None.")
      .def_readwrite("phase_noise_linewidth_hz", &EvmLineup::phase_noise_linewidth_hz)
      .def_property(
          "phase_noise_mask",
          [](const EvmLineup& l) { return std::const_pointer_cast<PhaseNoiseMask>(l.phase_noise_mask); },
          [](EvmLineup& l, std::shared_ptr<PhaseNoiseMask> mask) { l.phase_noise_mask = std::move(mask); },
          "A PhaseNoiseMask or None.")
      .def_readwrite("phase_noise_mask_offset_db", &EvmLineup::phase_noise_mask_offset_db)
      .def_readwrite("tracker", &EvmLineup::tracker)
      .def_readwrite("tracker_bandwidth", &EvmLineup::tracker_bandwidth)
      .def_readwrite("pilot_period", &EvmLineup::pilot_period)
      .def_readwrite("iq_gain_db", &EvmLineup::iq_gain_db)
      .def_readwrite("iq_phase_deg", &EvmLineup::iq_phase_deg)
      .def_readwrite("dc_offset", &EvmLineup::dc_offset)
      .def_readwrite("amplifier", &EvmLineup::amplifier)
      .def_readwrite("input_backoff_db", &EvmLineup::input_backoff_db)
      .def_readwrite("rapp_smoothness", &EvmLineup::rapp_smoothness)
      .def_readwrite("adc_bits", &EvmLineup::adc_bits)
      .def_readwrite("adc_loading_db", &EvmLineup::adc_loading_db)
      .def_readwrite("adc_gaussian_input", &EvmLineup::adc_gaussian_input)
      .def_readwrite("cfo_hz", &EvmLineup::cfo_hz)
      .def_readwrite("phase_deg", &EvmLineup::phase_deg)
      .def_readwrite("measurement_removes_frequency", &EvmLineup::measurement_removes_frequency)
      .def_readwrite("measurement_symbols", &EvmLineup::measurement_symbols)
      .def_readwrite("parts", &EvmLineup::parts, "Part names by contribution key (a copy: assign a new dict).");
  m.def("validate", [](const EvmLineup& l) { qamsight::validate(l); }, "lineup"_a,
        "Raises ConfigError naming the field for an invalid line-up.");
  m.def("lineup_es_n0_db", &lineup_es_n0_db, "lineup"_a, "Es/N0 used for the line-up (dB; inf without noise).");
  m.def("lineup_from_link", &lineup_from_link, "link"_a, "modulation"_a, "es_n0_db"_a,
        "The line-up of a waveform link's settings at an SNR (ConfigError for multipath).");

  py::class_<EvmContribution>(m, "EvmContribution", "One impairment's predicted share of the composite EVM.")
      .def_readonly("key", &EvmContribution::key)
      .def_readonly("name", &EvmContribution::name)
      .def_readonly("part", &EvmContribution::part)
      .def_readonly("evm_pct", &EvmContribution::evm_pct)
      .def_readonly("evm_db", &EvmContribution::evm_db)
      .def_readonly("share", &EvmContribution::share, "Fraction of the composite EVM^2.")
      .def_readonly("note", &EvmContribution::note)
      .def("__repr__", [](const EvmContribution& c) {
        return "EvmContribution(" + c.key + ", " + format_number(c.evm_pct) + "%, share " + format_number(c.share) + ")";
      });
  py::class_<EvmPrediction>(m, "EvmPrediction", "Every contribution, the root-sum-square composite, the dominant one.")
      .def_readonly("contributions", &EvmPrediction::contributions)
      .def_readonly("total_pct", &EvmPrediction::total_pct)
      .def_readonly("total_db", &EvmPrediction::total_db)
      .def_readonly("dominant", &EvmPrediction::dominant, "Index into contributions.")
      .def_property_readonly("dominant_contribution",
                             [](const EvmPrediction& p) {
                               return p.contributions.empty() ? py::object(py::none())
                                                              : py::cast(p.contributions.at(p.dominant));
                             })
      .def_readonly("es_n0_db", &EvmPrediction::es_n0_db)
      .def_readonly("linear_gain", &EvmPrediction::linear_gain)
      .def_readonly("received_power", &EvmPrediction::received_power)
      .def_readonly("sample_power", &EvmPrediction::sample_power)
      .def_readonly("noise_variance", &EvmPrediction::noise_variance)
      .def_readonly("tracking", &EvmPrediction::tracking)
      .def_readonly("rms_phase_deg", &EvmPrediction::rms_phase_deg)
      .def_readonly("rms_jitter_s", &EvmPrediction::rms_jitter_s)
      .def_readonly("notes", &EvmPrediction::notes);
  m.def("predict_evm", &predict_evm, "lineup"_a, "Predicts every contribution and the composite.");

  py::class_<EvmSimulationSetup>(m, "EvmSimulationSetup", "The waveform-link settings that simulate a line-up.")
      .def_readonly("link", &EvmSimulationSetup::link)
      .def_readonly("point", &EvmSimulationSetup::point);
  m.def("evm_simulation_setup", &evm_simulation_setup, "lineup"_a, "prediction"_a);
  py::class_<EvmSimulation>(m, "EvmSimulation", "Data-aided EVM of the simulated line-up, pooled over blocks.")
      .def_readonly("rms_pct", &EvmSimulation::rms_pct)
      .def_readonly("rms_db", &EvmSimulation::rms_db)
      .def_readonly("frames", &EvmSimulation::frames)
      .def_readonly("symbols", &EvmSimulation::symbols)
      .def_property_readonly("frame_rms_pct",
                             [](py::object self) {
                               return readonly_view<double>(self.cast<const EvmSimulation&>().frame_rms_pct, self);
                             })
      .def_readonly("setup", &EvmSimulation::setup);
  m.def(
      "simulate_evm",
      [](const EvmLineup& lineup, std::uint64_t seed, std::uint64_t frames) {
        py::gil_scoped_release nogil;
        return simulate_evm(lineup, seed, frames);
      },
      "lineup"_a, "seed"_a = 1, "frames"_a = 8,
      "Runs the waveform link of the line-up and measures its data-aided EVM (GIL released).");

  py::enum_<EvmAllowanceKind>(m, "EvmAllowanceKind", "What solve_evm_allowance searches for.")
      .value("phase_noise", EvmAllowanceKind::phase_noise)
      .value("iq_imbalance", EvmAllowanceKind::iq_imbalance)
      .value("backoff", EvmAllowanceKind::backoff);
  py::class_<EvmAllowance>(m, "EvmAllowance", "The allowance that just meets the limit with the margin.")
      .def_readonly("kind", &EvmAllowance::kind)
      .def_readonly("found", &EvmAllowance::found)
      .def_readonly("value", &EvmAllowance::value)
      .def_readonly("quantity", &EvmAllowance::quantity)
      .def_readonly("unit", &EvmAllowance::unit)
      .def_readonly("detail", &EvmAllowance::detail)
      .def_readonly("target_pct", &EvmAllowance::target_pct)
      .def_readonly("lineup", &EvmAllowance::lineup)
      .def_readonly("prediction", &EvmAllowance::prediction)
      .def_readonly("reason", &EvmAllowance::reason);
  m.def(
      "solve_evm_allowance",
      [](const EvmLineup& lineup, EvmAllowanceKind kind, double limit_pct, double margin_db) {
        py::gil_scoped_release nogil;
        return solve_evm_allowance(lineup, kind, limit_pct, margin_db);
      },
      "lineup"_a, "kind"_a, "limit_pct"_a, "margin_db"_a = 0.0,
      "Bisection on the predicted composite EVM for the allowance meeting limit_pct with margin_db.");

  py::class_<EvmRequirement>(m, "EvmRequirement", "The [requirement] table of a line-up file.")
      .def_readonly("limit", &EvmRequirement::limit)
      .def_readonly("table", &EvmRequirement::table)
      .def_readonly("rate", &EvmRequirement::rate)
      .def_readonly("margin_db", &EvmRequirement::margin_db)
      .def("given", &EvmRequirement::given);
  py::class_<EvmLineupFile>(m, "EvmLineupFile", "A line-up file: the line-up, its requirement, its name.")
      .def_readonly("lineup", &EvmLineupFile::lineup)
      .def_readonly("requirement", &EvmLineupFile::requirement)
      .def_readonly("source", &EvmLineupFile::source)
      .def("limit",
           [](const EvmLineupFile& f) -> std::optional<EvmLimit> {
             const EvmRequirement& r = f.requirement;
             if (!r.limit.empty()) return parse_evm_limit(r.limit);
             if (!r.table.empty()) return evm_limit_from_table(r.table, f.lineup.modulation, r.rate);
             return std::nullopt;
           },
           "The requirement's EvmLimit (a user limit or the table row of the line-up's modulation), or None.");
  m.def("load_evm_lineup", &load_evm_lineup, "path"_a,
        "Reads a line-up TOML file (InputError naming file, line and key).");
  m.def("parse_evm_lineup", &parse_evm_lineup, "toml_text"_a, "source"_a = "<string>", "base_dir"_a = ".",
        "The same from text.");

  py::class_<EvmBudgetReport>(m, "EvmBudgetReport", "Everything one budget run produced (for JSON and SVG).")
      .def(py::init(&from_keywords<EvmBudgetReport>))
      .def_readwrite("lineup", &EvmBudgetReport::lineup)
      .def_readwrite("prediction", &EvmBudgetReport::prediction)
      .def_readwrite("limit", &EvmBudgetReport::limit)
      .def_readwrite("verdict", &EvmBudgetReport::verdict)
      .def_readwrite("simulation", &EvmBudgetReport::simulation)
      .def_readwrite("simulated_verdict", &EvmBudgetReport::simulated_verdict)
      .def_readwrite("allowance", &EvmBudgetReport::allowance)
      .def("to_json", &evm_budget_json, "The CLI's budget JSON.")
      .def("to_svg", &evm_budget_svg, "The CLI's budget bar chart (SVG text).");
  m.def("evm_budget_json", &evm_budget_json, "report"_a);
  m.def("evm_budget_svg", &evm_budget_svg, "report"_a);
}

}  // namespace qamsight::python
