// init_waveform: test recordings (framed, shaped, impaired waveforms) and the capture receiver.
#include <algorithm>

#include "bindings.hpp"
#include "qamsight/capture_rx.hpp"
#include "qamsight/waveform.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

template <class T>
T from_keywords(const py::kwargs& kw) {
  py::object self = py::cast(T{});
  for (auto item : kw) self.attr(item.first) = item.second;
  return self.cast<T>();
}

template <class T, class M>
py::array_t<T> member_view(py::object self, const std::vector<T> M::*member) {
  return readonly_view<T>(self.cast<const M&>().*member, self);
}

}  // namespace

void init_waveform(py::module_& m) {
  py::class_<FrameFormat>(m, "FrameFormat",
                          "Frame format of a test recording: a 256-symbol QPSK preamble, then\n"
                          "payload_symbols PRBS symbols.")
      .def(py::init([](std::size_t payload_symbols, PrbsPolynomial payload_prbs, PrbsPolarity payload_polarity) {
             return FrameFormat{payload_symbols, payload_prbs, payload_polarity};
           }),
           "payload_symbols"_a = 3840, "payload_prbs"_a = PrbsPolynomial::prbs15,
           "payload_polarity"_a = PrbsPolarity::o150)
      .def_readwrite("payload_symbols", &FrameFormat::payload_symbols)
      .def_readwrite("payload_prbs", &FrameFormat::payload_prbs)
      .def_readwrite("payload_polarity", &FrameFormat::payload_polarity)
      .def("frame_symbols", &FrameFormat::frame_symbols);
  m.attr("PREAMBLE_SYMBOLS") = kPreambleSymbols;
  m.def(
      "preamble_symbols",
      [] {
        auto p = preamble_symbols();
        return readonly_view<cf32>(p, py::none());
      },
      "The 256 preamble symbols (read-only complex64 view of the library's table).");

  py::class_<ImpairmentChain>(
      m, "ImpairmentChain",
      "The transmitter and propagation impairments of an ImpairmentConfig as one streaming block, in\n"
      "the sweep's order: IQ imbalance, DC offset, amplifier, multipath, frequency offset, rotation,\n"
      "Wiener phase noise, mask phase noise. State (phase walks, delay lines) carries across calls;\n"
      "receiver settings (tracker, pilots) are not part of it.")
      .def(py::init<const ImpairmentConfig&, double, double>(), "impairments"_a, "sample_rate_hz"_a,
           "mean_power"_a = 1.0,
           "mean_power: mean |x|^2 per input sample (1 / samples_per_symbol for a unit-energy shaped\n"
           "signal). ValueError names a bad setting.")
      .def(
          "process",
          [](ImpairmentChain& self, RandomStream& rng, py::handle samples, py::object out) {
            auto in = input_array<cf32>(samples, "samples");
            auto o = output_array<cf32>(out, shape_of(in), "out");
            auto si = const_span(in);
            auto so = mutable_span(o);
            require_same_or_disjoint(si, so);
            py::gil_scoped_release nogil;
            if (so.data() != si.data()) std::copy(si.begin(), si.end(), so.begin());
            self.process(rng, so);
            return o;
          },
          "rng"_a, "samples"_a, "out"_a = py::none(),
          "Applies the chain to complex64 samples, drawing phase noise from rng (Substream.phase_noise);\n"
          "out may be the input itself (in place, no copy).")
      .def("reset", &ImpairmentChain::reset, "Back to the state before the first sample.")
      .def_property_readonly("empty", &ImpairmentChain::empty, "True if no impairment is configured.");

  py::class_<WaveformSpec>(m, "WaveformSpec",
                           "A test recording's settings (waveform.hpp); construct with keywords, e.g.\n"
                           "WaveformSpec(modulation='16qam', es_n0_db=25.0, symbols=20000).")
      .def(py::init(&from_keywords<WaveformSpec>))
      .def_readwrite("modulation", &WaveformSpec::modulation)
      .def_readwrite("es_n0_db", &WaveformSpec::es_n0_db)
      .def_readwrite("symbols", &WaveformSpec::symbols)
      .def_readwrite("frame", &WaveformSpec::frame)
      .def_readwrite("pulse", &WaveformSpec::pulse)
      .def_readwrite("impairments", &WaveformSpec::impairments)
      .def_readwrite("lead_samples", &WaveformSpec::lead_samples)
      .def_readwrite("seed", &WaveformSpec::seed);
  m.def("validate", [](const WaveformSpec& s) { qamsight::validate(s); }, "spec"_a,
        "Raises ConfigError naming the field for an invalid recording spec.");

  py::class_<WaveformGenerator>(m, "WaveformGenerator",
                                "Produces a recording (deterministic for a spec and seed).")
      .def(py::init<const WaveformSpec&>(), "spec"_a)
      .def_property_readonly("spec", &WaveformGenerator::spec)
      .def_property_readonly("constellation", &WaveformGenerator::constellation)
      .def_property_readonly("sample_rate_hz", &WaveformGenerator::sample_rate_hz)
      .def_property_readonly("frames", &WaveformGenerator::frames)
      .def_property_readonly("total_samples", &WaveformGenerator::total_samples)
      .def("symbol_sample", &WaveformGenerator::symbol_sample, "symbol"_a)
      .def("predicted_power", &WaveformGenerator::predicted_power)
      .def(
          "samples",
          [](WaveformGenerator& self) {
            // Generated block by block straight into the result: one copy per block from the
            // generator's buffer, none afterwards.
            py::array_t<cf32> out(static_cast<py::ssize_t>(self.total_samples()));
            cf32* dst = out.mutable_data();
            std::size_t at = 0;
            const std::size_t n = static_cast<std::size_t>(out.size());
            {
              py::gil_scoped_release nogil;
              self.reset();
              for (auto block = self.next_block(); !block.empty(); block = self.next_block()) {
                const std::size_t k = std::min(block.size(), n - at);
                std::copy_n(block.data(), k, dst + at);
                at += k;
              }
            }
            if (at != n) throw std::runtime_error("waveform generator produced " + std::to_string(at) +
                                                  " samples, expected " + std::to_string(n));
            return out;
          },
          "The whole recording as one complex64 array (regenerated from the start; GIL released).")
      .def("transmitted_symbols", [](const WaveformGenerator& g) { return vector_to_array(g.transmitted_symbols()); })
      .def("metadata_json", &WaveformGenerator::metadata_json)
      .def("annotations", &WaveformGenerator::annotations)
      .def_property_readonly("adc_clipped_rails", &WaveformGenerator::adc_clipped_rails);

  py::class_<RecordingFileSpec>(m, "RecordingFileSpec", "How a recording is stored (datatype, headroom, text).")
      .def(py::init(&from_keywords<RecordingFileSpec>))
      .def_readwrite("datatype", &RecordingFileSpec::datatype)
      .def_readwrite("center_frequency_hz", &RecordingFileSpec::center_frequency_hz)
      .def_readwrite("integer_headroom_db", &RecordingFileSpec::integer_headroom_db)
      .def_readwrite("description", &RecordingFileSpec::description)
      .def_readwrite("author", &RecordingFileSpec::author);
  py::class_<RecordingWriteReport>(m, "RecordingWriteReport", "What write_waveform_recording wrote.")
      .def_readonly("meta_path", &RecordingWriteReport::meta_path)
      .def_readonly("data_path", &RecordingWriteReport::data_path)
      .def_readonly("samples", &RecordingWriteReport::samples)
      .def_readonly("clipped_components", &RecordingWriteReport::clipped_components)
      .def_readonly("full_scale", &RecordingWriteReport::full_scale);
  m.def(
      "write_waveform_recording",
      [](const WaveformSpec& spec, const std::string& name, const RecordingFileSpec& file) {
        py::gil_scoped_release nogil;
        return write_waveform_recording(spec, name, file);
      },
      "spec"_a, "name"_a, "file"_a = RecordingFileSpec{},
      "Generates the recording and writes NAME.sigmf-data + NAME.sigmf-meta (GIL released).");

  py::class_<WaveformDescription>(m, "WaveformDescription", "What a recording's qamsight:* metadata says.")
      .def_readonly("modulation", &WaveformDescription::modulation)
      .def_readonly("symbol_rate_hz", &WaveformDescription::symbol_rate_hz)
      .def_readonly("samples_per_symbol", &WaveformDescription::samples_per_symbol)
      .def_readonly("roll_off", &WaveformDescription::roll_off)
      .def_readonly("span_symbols", &WaveformDescription::span_symbols)
      .def_readonly("es_n0_db", &WaveformDescription::es_n0_db)
      .def_readonly("frame", &WaveformDescription::frame)
      .def_readonly("symbols", &WaveformDescription::symbols)
      .def_readonly("symbol0_sample", &WaveformDescription::symbol0_sample);
  m.def("waveform_description", &waveform_description, "recording"_a,
        "The description in a recording's metadata, or None without qamsight:modulation.");

  // ---- capture receiver ---------------------------------------------------------------------
  py::class_<CaptureRxConfig>(m, "CaptureRxConfig",
                              "What the receiver knows and its settings (capture_rx.hpp); keywords.")
      .def(py::init(&from_keywords<CaptureRxConfig>))
      .def_readwrite("modulation", &CaptureRxConfig::modulation)
      .def_readwrite("symbol_rate_hz", &CaptureRxConfig::symbol_rate_hz)
      .def_readwrite("roll_off", &CaptureRxConfig::roll_off)
      .def_readwrite("span_symbols", &CaptureRxConfig::span_symbols)
      .def_readwrite("frame", &CaptureRxConfig::frame)
      .def_readwrite("prbs_payload", &CaptureRxConfig::prbs_payload)
      .def_readwrite("false_alarm_probability", &CaptureRxConfig::false_alarm_probability)
      .def_readwrite("equaliser_taps", &CaptureRxConfig::equaliser_taps)
      .def_readwrite("equaliser_regularisation", &CaptureRxConfig::equaliser_regularisation)
      .def_readwrite("tracker_bandwidth", &CaptureRxConfig::tracker_bandwidth)
      .def_readwrite("timing_bandwidth", &CaptureRxConfig::timing_bandwidth)
      .def_readwrite("blind_settle_symbols", &CaptureRxConfig::blind_settle_symbols);
  m.def("validate", [](const CaptureRxConfig& c, double fs) { qamsight::validate(c, fs); }, "config"_a,
        "sample_rate_hz"_a, "Raises ConfigError naming the field.");

  py::enum_<CaptureStatus>(m, "CaptureStatus", "measured, no_preamble or too_short.")
      .value("measured", CaptureStatus::measured)
      .value("no_preamble", CaptureStatus::no_preamble)
      .value("too_short", CaptureStatus::too_short);
  m.def("capture_status_name", [](CaptureStatus s) { return std::string(capture_status_name(s)); }, "status"_a);
  py::class_<CaptureFrame>(m, "CaptureFrame", "One detected frame (data-aided mode).")
      .def_readonly("symbol0_sample", &CaptureFrame::symbol0_sample)
      .def_readonly("metric", &CaptureFrame::metric)
      .def_readonly("symbols", &CaptureFrame::symbols)
      .def_readonly("cfo_coarse_hz", &CaptureFrame::cfo_coarse_hz)
      .def_readonly("cfo_hz", &CaptureFrame::cfo_hz)
      .def_readonly("gain", &CaptureFrame::gain)
      .def_readonly("phase_rad", &CaptureFrame::phase_rad)
      .def_readonly("preamble_snr_db", &CaptureFrame::preamble_snr_db);
  py::class_<CaptureMeasurement>(m, "CaptureMeasurement",
                                 "What the receiver found; received/reference/reference_known/frame_index\n"
                                 "are read-only views of the measurement's buffers (no copies).")
      .def_readonly("status", &CaptureMeasurement::status)
      .def_readonly("blind", &CaptureMeasurement::blind)
      .def_readonly("message", &CaptureMeasurement::message)
      .def_readonly("sample_rate_hz", &CaptureMeasurement::sample_rate_hz)
      .def_readonly("symbol_rate_hz", &CaptureMeasurement::symbol_rate_hz)
      .def_readonly("samples_per_symbol", &CaptureMeasurement::samples_per_symbol)
      .def_readonly("detection_threshold", &CaptureMeasurement::detection_threshold)
      .def_readonly("best_metric", &CaptureMeasurement::best_metric)
      .def_readonly("frames", &CaptureMeasurement::frames)
      .def_readonly("cfo_hz", &CaptureMeasurement::cfo_hz)
      .def_readonly("cfo_coarse_hz", &CaptureMeasurement::cfo_coarse_hz)
      .def_readonly("timing_sample", &CaptureMeasurement::timing_sample)
      .def_readonly("symbol_clock_ppm", &CaptureMeasurement::symbol_clock_ppm)
      .def_readonly("snr_estimate_db", &CaptureMeasurement::snr_estimate_db)
      .def_property_readonly("received", [](py::object s) { return member_view(s, &CaptureMeasurement::received); })
      .def_property_readonly("reference", [](py::object s) { return member_view(s, &CaptureMeasurement::reference); })
      .def_property_readonly("reference_known",
                             [](py::object s) { return member_view(s, &CaptureMeasurement::reference_known); })
      .def_property_readonly("frame_index",
                             [](py::object s) { return member_view(s, &CaptureMeasurement::frame_index); })
      .def_readonly("prbs_checked", &CaptureMeasurement::prbs_checked)
      .def_readonly("prbs_locked", &CaptureMeasurement::prbs_locked)
      .def_readonly("prbs", &CaptureMeasurement::prbs)
      .def_readonly("notes", &CaptureMeasurement::notes)
      .def("__repr__", [](const CaptureMeasurement& c) {
        return "CaptureMeasurement(" + std::string(capture_status_name(c.status)) + ", " + c.message + ")";
      });

  py::class_<CaptureReceiver>(m, "CaptureReceiver",
                              "Receiver for recordings: preamble search, timing, carrier, equaliser, PRBS BER\n"
                              "(analyse), or blind timing and carrier recovery (analyse_blind).")
      .def(py::init<const CaptureRxConfig&, double>(), "config"_a, "sample_rate_hz"_a)
      .def_property_readonly("config", &CaptureReceiver::config)
      .def_property_readonly("constellation", &CaptureReceiver::constellation)
      .def_property_readonly("detection_threshold", &CaptureReceiver::detection_threshold)
      .def(
          "analyse",
          [](const CaptureReceiver& self, py::handle samples) {
            auto s = input_vector<cf32>(samples, "samples");
            auto ss = const_span(s);
            py::gil_scoped_release nogil;
            return self.analyse(ss);
          },
          "samples"_a, "Data-aided analysis of a recording in the library's frame format (GIL released).")
      .def(
          "analyse_blind",
          [](const CaptureReceiver& self, py::handle samples) {
            auto s = input_vector<cf32>(samples, "samples");
            auto ss = const_span(s);
            py::gil_scoped_release nogil;
            return self.analyse_blind(ss);
          },
          "samples"_a, "Blind analysis (modulation, symbol rate and roll-off known; GIL released).");
  m.def("preamble_detection_threshold", &preamble_detection_threshold, "false_alarm_probability"_a,
        "Threshold of the preamble metric (Beta(16, 240) upper quantile).");
}

}  // namespace qamsight::python
