// init_sim: sweep configuration and results, the sweep call with the GIL released, Python stages.

#include <atomic>
#include <exception>
#include <limits>
#include <map>
#include <memory>
#include <mutex>

#include "bindings.hpp"
#include "qamsight/sim.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

// ---------------------------------------------------------------------------------------------
// Python receiver stages.
//
// Threads: the sweep runs with the GIL released on the caller's thread and the pool's workers.
// The C++ UserStage has serialise = true, so at most one frame is inside the stage at a time;
// that call takes the GIL (lock order: the link's stage lock, then the GIL; nothing takes them
// the other way round, and the caller's thread holds neither while it waits for a batch, so
// no deadlock is possible). The Python function sees a StageInput whose arrays are views of the
// engine's frame buffers (no copies), valid during the call only; after the call the bridge
// checks that nothing kept a reference to them and stops the sweep otherwise.
//
// Errors: nothing may leave the C++ callable (it runs on pool threads). An exception raised
// by the Python function, or by the check of its return value, is stored in the ErrorSlot
// (the failure of the lowest frame wins, so the error a sweep reports does not depend on how
// the threads ran), the sweep's cancel flag is set, and every later frame gets a harmless
// output without calling Python (frames below the failed one still run and may take over). run_sweep stops at the next batch boundary; the binding then
// rethrows the stored exception on the caller's thread with the GIL held, so Python sees the
// original exception object (type, message, traceback).
// ---------------------------------------------------------------------------------------------

struct ErrorSlot {
  std::atomic<bool> cancel{false};
  /// The lowest frame whose failure is stored; no failure: the maximum.
  std::atomic<std::uint64_t> failed_frame{std::numeric_limits<std::uint64_t>::max()};
  std::mutex mutex;
  std::exception_ptr error;

  /// Stores `e` if it comes from a lower frame than the stored failure. Interruptions that
  /// belong to no frame pass frame 0 and win. Called without the GIL.
  void fail(std::exception_ptr e, std::uint64_t frame) {
    std::exception_ptr dropped;  // destroyed after the lock is released
    {
      std::lock_guard lock(mutex);
      if (!error || frame < failed_frame.load()) {
        dropped = std::move(error);
        error = std::move(e);
        failed_frame.store(frame);
      } else {
        dropped = std::move(e);
      }
    }
    cancel.store(true);
  }
  /// Whether frame `frame` still has to call Python (no failure at or below it so far).
  bool runs(std::uint64_t frame) const { return frame < failed_frame.load(); }
  void rethrow_if_failed() {
    std::exception_ptr e;
    {
      std::lock_guard lock(mutex);
      e = std::move(error);
      error = nullptr;
    }
    if (e) std::rethrow_exception(e);
  }
};

/// What the Python stage function receives (Python name StageInput).
struct PyStageInput {
  std::uint64_t frame = 0;
  py::array samples, symbols, output;
  unsigned samples_per_symbol = 1;
  double noise_variance = 0.0;
  py::object constellation;
  StageOutputKind output_kind = StageOutputKind::symbols;
};

const char* kind_name(StageOutputKind k) {
  switch (k) {
    case StageOutputKind::symbols:
      return "symbols";
    case StageOutputKind::llrs:
      return "llrs";
    case StageOutputKind::bits:
      return "bits";
  }
  return "?";
}

StageOutputKind kind_from(py::handle obj) {
  if (py::isinstance<py::str>(obj)) {
    const auto s = obj.cast<std::string>();
    if (s == "symbols") return StageOutputKind::symbols;
    if (s == "llrs") return StageOutputKind::llrs;
    if (s == "bits") return StageOutputKind::bits;
    throw ConfigError("stage_output", "'" + s + "'", "'symbols', 'llrs' or 'bits'");
  }
  if (!py::isinstance<StageOutputKind>(obj)) {
    throw py::type_error("stage_output: expected 'symbols', 'llrs', 'bits' or a StageOutputKind, got " +
                         std::string(py::str(py::type::handle_of(obj).attr("__name__"))));
  }
  return obj.cast<StageOutputKind>();
}

class StageBridge {
 public:
  StageBridge(py::object fn, StageOutputKind kind, ErrorSlot& slot)
      : fn_(std::move(fn)), kind_(kind), slot_(slot), name_(name_of(fn_)) {}

  const std::string& name() const { return name_; }

  /// The C++ UserStage::process. Never throws.
  void call(const StageInput& in, StageOutput& out) noexcept {
    if (slot_.runs(in.frame)) {
      try {
        py::gil_scoped_acquire gil;
        if (slot_.runs(in.frame)) {
          run_python(in, out);
          return;
        }
      } catch (...) {
        slot_.fail(std::current_exception(), in.frame);
      }
    }
    harmless(in, out);
  }

 private:
  static std::string name_of(const py::object& fn) {
    if (py::hasattr(fn, "__qualname__")) return py::str(fn.attr("__qualname__"));
    return py::repr(fn);
  }

  // Output the engine can count after a failure (the sweep's result is discarded then).
  void harmless(const StageInput& in, StageOutput& out) const noexcept {
    switch (kind_) {
      case StageOutputKind::symbols:
        for (std::size_t i = 0; i < out.symbols.size(); ++i) out.symbols[i] = i < in.symbols.size() ? in.symbols[i] : cf32{};
        break;
      case StageOutputKind::llrs:
        std::fill(out.llrs.begin(), out.llrs.end(), 0.0f);
        break;
      case StageOutputKind::bits:
        std::fill(out.bits.begin(), out.bits.end(), std::uint8_t{0});
        break;
    }
  }

  py::object constellation_object(const Constellation* c) {
    if (!c) return py::none();
    auto it = constellations_.find(c->name());
    if (it == constellations_.end()) it = constellations_.emplace(c->name(), py::cast(*c)).first;
    return it->second;
  }

  template <class T>
  void copy_back(const py::object& ret, std::span<T> dst, std::uint64_t frame) {
    const auto fail = [&](const std::string& got) {
      throw py::value_error("stage " + name_ + ": output '" + kind_name(kind_) + "' of frame " +
                            std::to_string(frame) + " must be a one-dimensional " + DtypeInfo<T>::name +
                            " array of " + std::to_string(dst.size()) + " values; got " + got);
    };
    if (ret.is_none()) fail("None");
    py::array any = py::array::ensure(ret);
    if (!any) {
      PyErr_Clear();
      fail(std::string(py::str(py::type::handle_of(ret).attr("__name__"))));
    }
    if (!std::strchr(DtypeInfo<T>::kinds, any.dtype().kind()) || any.ndim() != 1 ||
        static_cast<std::size_t>(any.size()) != dst.size()) {
      fail(describe_array(any));
    }
    InArray<T> typed = InArray<T>::ensure(any);  // no copy when already the exact dtype
    if (!typed) throw py::error_already_set();
    if (typed.data() != dst.data()) std::memmove(dst.data(), typed.data(), dst.size() * sizeof(T));
  }

  void run_python(const StageInput& in, StageOutput& out) {
    // Any object serves as the views' base; a capsule cannot be made writeable through numpy.
    py::capsule owner(static_cast<const void*>(this), [](void*) {});
    PyStageInput si;
    si.frame = in.frame;
    si.samples = readonly_view(in.samples, owner);
    si.symbols = readonly_view(in.symbols, owner);
    switch (kind_) {
      case StageOutputKind::symbols:
        si.output = py::array_t<cf32>({static_cast<py::ssize_t>(out.symbols.size())}, {py::ssize_t{sizeof(cf32)}},
                                      out.symbols.data(), owner);
        break;
      case StageOutputKind::llrs:
        si.output = py::array_t<float>({static_cast<py::ssize_t>(out.llrs.size())}, {py::ssize_t{sizeof(float)}},
                                       out.llrs.data(), owner);
        break;
      case StageOutputKind::bits:
        si.output = py::array_t<std::uint8_t>({static_cast<py::ssize_t>(out.bits.size())},
                                              {py::ssize_t{sizeof(std::uint8_t)}}, out.bits.data(), owner);
        break;
    }
    si.samples_per_symbol = in.samples_per_symbol;
    si.noise_variance = in.noise_variance;
    si.constellation = constellation_object(in.constellation);
    si.output_kind = kind_;

    py::object arg = py::cast(std::move(si));
    py::object ret = fn_(arg);
    switch (kind_) {
      case StageOutputKind::symbols:
        copy_back(ret, out.symbols, in.frame);
        break;
      case StageOutputKind::llrs:
        copy_back(ret, out.llrs, in.frame);
        break;
      case StageOutputKind::bits:
        copy_back(ret, out.bits, in.frame);
        break;
    }
    ret = py::object();
    const auto& held = arg.cast<const PyStageInput&>();
    if (Py_REFCNT(arg.ptr()) != 1 || Py_REFCNT(held.samples.ptr()) != 1 || Py_REFCNT(held.symbols.ptr()) != 1 ||
        Py_REFCNT(held.output.ptr()) != 1) {
      throw std::runtime_error("stage " + name_ + " kept a reference to its StageInput or to one of its arrays "
                            "after returning (frame " + std::to_string(in.frame) + "); they are views of the "
                            "engine's frame buffers, valid during the call only: keep a copy instead, "
                            "e.g. numpy.array(inp.samples)");
    }
  }

  py::object fn_;
  StageOutputKind kind_;
  ErrorSlot& slot_;
  std::string name_;
  std::map<std::string, py::object> constellations_;
};

// ---------------------------------------------------------------------------------------------
// The sweep call.

std::vector<double> to_reals(py::handle obj, const char* what) {
  auto a = input_array<double>(obj, what);
  return std::vector<double>(a.data(), a.data() + a.size());
}

std::vector<std::string> to_names(py::handle obj) {
  if (py::isinstance<py::str>(obj)) return {obj.cast<std::string>()};
  try {
    return obj.cast<std::vector<std::string>>();
  } catch (const py::cast_error&) {
    throw py::type_error("modulations: expected a name or a sequence of names, got " +
                         std::string(py::str(py::type::handle_of(obj).attr("__name__"))));
  }
}

// A keyword that takes an object of one bound type (or None for the default).
template <class T>
T typed_keyword(py::handle obj, const char* what, const char* type_name) {
  try {
    return obj.cast<T>();
  } catch (const py::cast_error&) {
    throw py::type_error(std::string(what) + ": expected a " + type_name + " or None, got " +
                         std::string(py::str(py::type::handle_of(obj).attr("__name__"))));
  }
}

// The library names the relative width in full; the keyword is the CLI's short form.
[[noreturn]] void rethrow_with_keyword_names(const ConfigError& e) {
  if (e.parameter() == "max_relative_width") throw ConfigError("max_rel_width", e.value(), e.allowed());
  throw e;
}

SweepResult run_python_sweep(SweepConfig config, const py::object& stage, const py::object& stage_output) {
  ErrorSlot slot;
  std::unique_ptr<StageBridge> bridge;
  if (!stage.is_none()) {
    if (!PyCallable_Check(stage.ptr())) {
      throw py::type_error("stage: expected a callable taking a StageInput, got " +
                           std::string(py::str(py::type::handle_of(stage).attr("__name__"))));
    }
    const StageOutputKind kind = kind_from(stage_output);
    bridge = std::make_unique<StageBridge>(stage, kind, slot);
    auto user = std::make_shared<UserStage>();
    user->output = kind;
    user->serialise = true;
    user->name = bridge->name();
    user->process = [b = bridge.get()](const StageInput& in, StageOutput& out) { b->call(in, out); };
    config.link.stage = std::move(user);
  } else {
    (void)kind_from(stage_output);  // validated even without a stage
  }
  SweepHooks hooks;
  hooks.cancel = &slot.cancel;
  // Between batches: let Python handle signals (Ctrl-C raises KeyboardInterrupt from sweep()).
  hooks.progress = [&slot](const SweepProgress&) {
    try {
      py::gil_scoped_acquire gil;
      if (PyErr_CheckSignals() != 0) throw py::error_already_set();
    } catch (...) {
      slot.fail(std::current_exception(), 0);
    }
  };
  SweepResult result;
  try {
    py::gil_scoped_release nogil;
    result = run_sweep(config, hooks);
  } catch (const ConfigError& e) {
    rethrow_with_keyword_names(e);
  }
  result.config.link.stage.reset();  // the stage's closure refers to the bridge, which ends here
  slot.rethrow_if_failed();
  return result;
}

std::string point_repr(const PointResult& p) {
  return "PointResult(" + p.spec.modulation + ", eb_n0_db=" + format_number(p.spec.eb_n0_db) +
         ", bit_errors=" + std::to_string(p.counts.bit_errors) + ", bits=" + std::to_string(p.counts.bits) +
         ", ber=" + format_number(p.ber) + ")";
}

}  // namespace

void init_sim(py::module_& m) {
  py::enum_<SnrKind>(m, "SnrKind", "Which SNR a sweep's values are: eb_n0 or es_n0.")
      .value("eb_n0", SnrKind::eb_n0)
      .value("es_n0", SnrKind::es_n0);
  py::enum_<StageOutputKind>(m, "StageOutputKind",
                             "What a user stage returns: symbols (complex64, one per symbol), llrs\n"
                             "(float32 ln P(b=0)/P(b=1), one per bit) or bits (uint8 0/1, one per bit).")
      .value("symbols", StageOutputKind::symbols)
      .value("llrs", StageOutputKind::llrs)
      .value("bits", StageOutputKind::bits);

  py::class_<StopRule>(m, "StopRule", "When a point has seen enough (checked at batch boundaries only).")
      .def(py::init([](std::uint64_t min_bit_errors, std::uint64_t max_bits, double max_relative_width,
                       std::uint64_t min_frame_errors) {
             StopRule r;
             r.min_bit_errors = min_bit_errors;
             r.max_bits = max_bits;
             r.max_relative_width = max_relative_width;
             r.min_frame_errors = min_frame_errors;
             return r;
           }),
           "min_bit_errors"_a = 100, "max_bits"_a = 100'000'000, "max_relative_width"_a = 0.0,
           "min_frame_errors"_a = 0)
      .def_readwrite("min_frame_errors", &StopRule::min_frame_errors, "Also stop at this many frame errors; 0 = off.")
      .def_readwrite("min_bit_errors", &StopRule::min_bit_errors)
      .def_readwrite("max_bits", &StopRule::max_bits)
      .def_readwrite("max_relative_width", &StopRule::max_relative_width);

  py::class_<PulseShapingConfig>(m, "PulseShapingConfig",
                                 "RRC transmit filter and matched filter of the waveform link;\n"
                                 "samples_per_symbol = 1 (default) is the symbol-rate link.")
      .def(py::init([](int samples_per_symbol, double roll_off, int span_symbols) {
             return PulseShapingConfig{samples_per_symbol, roll_off, span_symbols};
           }),
           "samples_per_symbol"_a = 1, "roll_off"_a = 0.25, "span_symbols"_a = 12)
      .def_readwrite("samples_per_symbol", &PulseShapingConfig::samples_per_symbol, "1 to 64.")
      .def_readwrite("roll_off", &PulseShapingConfig::roll_off, "0 < beta <= 1.")
      .def_readwrite("span_symbols", &PulseShapingConfig::span_symbols, "Even, 4 to 256, span * roll-off >= 1.");

  py::enum_<AmplifierKind>(m, "AmplifierKind", "Amplifier model of the waveform link.")
      .value("none", AmplifierKind::none)
      .value("saleh", AmplifierKind::saleh)
      .value("rapp", AmplifierKind::rapp);
  py::enum_<TrackerMode>(m, "TrackerMode", "Phase tracker of the waveform receiver.")
      .value("automatic", TrackerMode::automatic)
      .value("off", TrackerMode::off)
      .value("on", TrackerMode::on);

  py::class_<ImpairmentConfig>(
      m, "ImpairmentConfig",
      "RF impairments of the waveform link, applied in the order: IQ imbalance and DC offset,\n"
      "amplifier, multipath, CFO and rotation, phase noise, AWGN, ADC, matched filter, AGC,\n"
      "phase tracker. Hz values refer to symbol_rate_hz. Construct with keywords.")
      .def(py::init([](py::kwargs kw) {
             ImpairmentConfig c;
             py::object self = py::cast(c);
             for (auto item : kw) self.attr(item.first) = item.second;
             return self.cast<ImpairmentConfig>();
           }))
      .def_readwrite("symbol_rate_hz", &ImpairmentConfig::symbol_rate_hz)
      .def_readwrite("iq_gain_db", &ImpairmentConfig::iq_gain_db)
      .def_readwrite("iq_phase_deg", &ImpairmentConfig::iq_phase_deg)
      .def_readwrite("dc_offset", &ImpairmentConfig::dc_offset)
      .def_readwrite("amplifier", &ImpairmentConfig::amplifier)
      .def_readwrite("input_backoff_db", &ImpairmentConfig::input_backoff_db)
      .def_readwrite("rapp_smoothness", &ImpairmentConfig::rapp_smoothness)
      .def_readwrite("multipath", &ImpairmentConfig::multipath, "List of MultipathTap (a copy; assign a new list).")
      .def_readwrite("cfo_hz", &ImpairmentConfig::cfo_hz)
      .def_readwrite("phase_deg", &ImpairmentConfig::phase_deg)
      .def_readwrite("phase_noise_linewidth_hz", &ImpairmentConfig::phase_noise_linewidth_hz)
      .def_property(
          "phase_noise_mask",
          [](const ImpairmentConfig& c) { return std::const_pointer_cast<PhaseNoiseMask>(c.phase_noise_mask); },
          [](ImpairmentConfig& c, std::shared_ptr<PhaseNoiseMask> mask) { c.phase_noise_mask = std::move(mask); },
          "A PhaseNoiseMask or None.")
      .def_readwrite("adc_bits", &ImpairmentConfig::adc_bits)
      .def_readwrite("adc_loading_db", &ImpairmentConfig::adc_loading_db)
      .def_readwrite("tracker", &ImpairmentConfig::tracker)
      .def_readwrite("tracker_bandwidth", &ImpairmentConfig::tracker_bandwidth)
      .def_readwrite("tracker_detector", &ImpairmentConfig::tracker_detector)
      .def_readwrite("pilot_period", &ImpairmentConfig::pilot_period)
      .def("any", &ImpairmentConfig::any, "True if any impairment is set (then the waveform link is used).")
      .def("tracking", &ImpairmentConfig::tracking, "True if the receiver runs its phase tracker.");

  py::class_<LinkConfig>(m, "LinkConfig", "The simulated chain's settings (a user stage is given to sweep()).")
      .def(py::init([](std::size_t frame_symbols, double impl_loss_db, const PulseShapingConfig& pulse,
                       const ImpairmentConfig& impairments) {
             LinkConfig c;
             c.frame_symbols = frame_symbols;
             c.impl_loss_db = impl_loss_db;
             c.pulse = pulse;
             c.impairments = impairments;
             return c;
           }),
           "frame_symbols"_a = 4096, "impl_loss_db"_a = 0.0, "pulse"_a = PulseShapingConfig{},
           "impairments"_a = ImpairmentConfig{})
      .def_readwrite("frame_symbols", &LinkConfig::frame_symbols, "Symbols per frame; 16 to 2^22.")
      .def_readwrite("impl_loss_db", &LinkConfig::impl_loss_db,
                     "Extra noise in dB on top of the configured Es/N0 (an implementation loss).")
      .def_readwrite("pulse", &LinkConfig::pulse)
      .def_readwrite("impairments", &LinkConfig::impairments)
      .def_readwrite("code", &LinkConfig::code, "FEC code name (code_names()); '' = uncoded.")
      .def_readwrite("llr", &LinkConfig::llr, "LlrMethod of the coded receiver, or None for the default.")
      .def("waveform", &LinkConfig::waveform, "True if the oversampled waveform link is used.");

  py::class_<PointSpec>(m, "PointSpec", "One operating point of a sweep.")
      .def(py::init([](std::string modulation, double eb_n0_db, double es_n0_db, std::uint32_t stream_key) {
             return PointSpec{std::move(modulation), eb_n0_db, es_n0_db, stream_key};
           }),
           "modulation"_a = "", "eb_n0_db"_a = 0.0, "es_n0_db"_a = 0.0, "stream_key"_a = 0)
      .def_readwrite("modulation", &PointSpec::modulation)
      .def_readwrite("eb_n0_db", &PointSpec::eb_n0_db)
      .def_readwrite("es_n0_db", &PointSpec::es_n0_db)
      .def_readwrite("stream_key", &PointSpec::stream_key)
      .def("__repr__", [](const PointSpec& p) {
        return "PointSpec('" + p.modulation + "', eb_n0_db=" + format_number(p.eb_n0_db) +
               ", es_n0_db=" + format_number(p.es_n0_db) + ")";
      });

  py::class_<SweepConfig>(m, "SweepConfig",
                          "A sweep: modulations x SNR values (the keywords of sweep() fill one). List\n"
                          "attributes are copies: assign a new list rather than appending.")
      .def(py::init<>())
      .def_readwrite("modulations", &SweepConfig::modulations)
      .def_readwrite("snr_db", &SweepConfig::snr_db)
      .def_readwrite("snr_kind", &SweepConfig::snr_kind)
      .def_readwrite("stop", &SweepConfig::stop)
      .def_readwrite("confidence", &SweepConfig::confidence)
      .def_readwrite("seed", &SweepConfig::seed)
      .def_readwrite("threads", &SweepConfig::threads)
      .def_readwrite("link", &SweepConfig::link);

  py::class_<PointResult>(m, "PointResult",
                          "One row of a sweep: counts, rates with exact intervals, theory, EVM. The\n"
                          "shortcuts (modulation, bits, evm_rms_pct, ...) have the JSON keys' names.")
      .def_readonly("spec", &PointResult::spec)
      .def_readonly("counts", &PointResult::counts)
      .def_readonly("evm", &PointResult::evm)
      .def_readonly("ber", &PointResult::ber)
      .def_readonly("ber_low", &PointResult::ber_low)
      .def_readonly("ber_high", &PointResult::ber_high)
      .def_readonly("ser", &PointResult::ser)
      .def_readonly("ser_low", &PointResult::ser_low)
      .def_readonly("ser_high", &PointResult::ser_high)
      .def_readonly("fer", &PointResult::fer)
      .def_readonly("fer_low", &PointResult::fer_low)
      .def_readonly("fer_high", &PointResult::fer_high)
      .def_readonly("ber_theory", &PointResult::ber_theory, "AWGN reference BER; NaN where none exists.")
      .def_readonly("ser_theory", &PointResult::ser_theory)
      .def_readonly("isi_loss_db", &PointResult::isi_loss_db, "SNR loss of the finite RRC span, dB.")
      .def_readonly("code", &PointResult::code, "Code of a coded sweep ('' = uncoded).")
      .def_readonly("code_rate", &PointResult::code_rate, "k / n of the code (1 uncoded).")
      .def_readonly("stop_reason", &PointResult::stop_reason,
                    "'min_errors', 'min_frame_errors', 'max_bits', 'relative_width' (or 'cancelled').")
      .def_readonly("seconds", &PointResult::seconds, "Wall time, for information only.")
      .def_property_readonly("modulation", [](const PointResult& p) { return p.spec.modulation; })
      .def_property_readonly("eb_n0_db", [](const PointResult& p) { return p.spec.eb_n0_db; })
      .def_property_readonly("es_n0_db", [](const PointResult& p) { return p.spec.es_n0_db; })
      .def_property_readonly("bits", [](const PointResult& p) { return p.counts.bits; })
      .def_property_readonly("bit_errors", [](const PointResult& p) { return p.counts.bit_errors; })
      .def_property_readonly("symbols", [](const PointResult& p) { return p.counts.symbols; })
      .def_property_readonly("symbol_errors", [](const PointResult& p) { return p.counts.symbol_errors; })
      .def_property_readonly("frames", [](const PointResult& p) { return p.counts.frames; })
      .def_property_readonly("frame_errors", [](const PointResult& p) { return p.counts.frame_errors; })
      .def_property_readonly("evm_rms_pct", [](const PointResult& p) { return p.evm.rms_percent(); })
      .def_property_readonly("mer_db", [](const PointResult& p) { return p.evm.mer_db(); })
      .def("__repr__", &point_repr);

  py::class_<SweepResult>(m, "SweepResult",
                          "Result of sweep(): config, points (list of PointResult in modulation-major\n"
                          "order) and complete. to_dict() / to_json() / to_csv() give the CLI's formats.")
      .def_readonly("config", &SweepResult::config)
      .def_readonly("points", &SweepResult::points)
      .def_readonly("complete", &SweepResult::complete)
      .def("__len__", [](const SweepResult& r) { return r.points.size(); })
      .def("__repr__", [](const SweepResult& r) {
        return "SweepResult(" + std::to_string(r.points.size()) + " points, complete=" +
               (r.complete ? "True" : "False") + ")";
      });

  py::class_<PyStageInput>(
      m, "StageInput",
      "What a user stage function receives for one frame.\n\n"
      "samples, symbols and output are NumPy views of the engine's own frame buffers (no copies) and\n"
      "are valid only during the call: keeping a reference to them (or to this object) after\n"
      "returning stops the sweep with an error; keep numpy.array(inp.samples) instead.\n"
      "samples and symbols are read-only complex64; output is the writeable buffer the engine reads\n"
      "after the call (complex64, float32 or uint8 after output_kind): returning it filled avoids\n"
      "the copy of a returned array.")
      .def_readonly("frame", &PyStageInput::frame, "Frame index (for frame-keyed randomness).")
      .def_readonly("samples", &PyStageInput::samples, "Channel output at the sample rate (read-only view).")
      .def_readonly("symbols", &PyStageInput::symbols,
                    "The built-in receiver's symbol-rate output (read-only view).")
      .def_readonly("output", &PyStageInput::output, "The engine's output buffer for this frame (writeable view).")
      .def_readonly("samples_per_symbol", &PyStageInput::samples_per_symbol)
      .def_readonly("noise_variance", &PyStageInput::noise_variance,
                    "N0 per symbol at the matched-filter output (total complex variance).")
      .def_readonly("constellation", &PyStageInput::constellation)
      // By value: a reference_internal result would keep the StageInput alive (and trip the check).
      .def_property_readonly("output_kind", [](const PyStageInput& s) { return s.output_kind; })
      .def("__repr__", [](const PyStageInput& s) {
        return "StageInput(frame=" + std::to_string(s.frame) + ", samples=" + std::to_string(s.samples.size()) +
               ", output_kind=" + kind_name(s.output_kind) + ")";
      });

  m.def(
      "sweep",
      [](py::object modulations, py::object eb_n0_db, py::object es_n0_db, py::object min_errors,
         py::object max_bits, double max_rel_width, double confidence, py::object seed, unsigned threads,
         py::object frame_symbols, double impl_loss_db, py::object pulse, py::object impairments,
         py::object stage, py::object stage_output, std::string code, py::object llr, py::object min_frame_errors) {
        SweepConfig c;
        c.modulations = to_names(modulations);
        if (eb_n0_db.is_none() == es_n0_db.is_none()) {
          throw py::value_error(eb_n0_db.is_none() ? "no SNR given: pass eb_n0_db or es_n0_db"
                                                   : "contradictory arguments: pass only one of eb_n0_db, es_n0_db");
        }
        if (!eb_n0_db.is_none()) {
          c.snr_db = to_reals(eb_n0_db, "eb_n0_db");
          c.snr_kind = SnrKind::eb_n0;
        } else {
          c.snr_db = to_reals(es_n0_db, "es_n0_db");
          c.snr_kind = SnrKind::es_n0;
        }
        c.stop.min_bit_errors = to_count("min_errors", min_errors);
        c.stop.max_bits = to_count("max_bits", max_bits);
        c.stop.max_relative_width = max_rel_width;
        c.confidence = confidence;
        c.seed = to_count("seed", seed);
        c.threads = threads;
        c.link.frame_symbols = to_count("frame_symbols", frame_symbols);
        c.link.impl_loss_db = impl_loss_db;
        c.link.code = std::move(code);
        if (!llr.is_none()) c.link.llr = typed_keyword<LlrMethod>(llr, "llr", "LlrMethod");
        c.stop.min_frame_errors = to_count("min_frame_errors", min_frame_errors);
        if (!pulse.is_none()) c.link.pulse = typed_keyword<PulseShapingConfig>(pulse, "pulse", "PulseShapingConfig");
        if (!impairments.is_none()) {
          c.link.impairments = typed_keyword<ImpairmentConfig>(impairments, "impairments", "ImpairmentConfig");
        }
        return run_python_sweep(std::move(c), stage, stage_output);
      },
      "modulations"_a = std::vector<std::string>{"qpsk"}, "eb_n0_db"_a = py::none(), "es_n0_db"_a = py::none(),
      py::kw_only(), "min_errors"_a = 100, "max_bits"_a = 100'000'000, "max_rel_width"_a = 0.0,
      "confidence"_a = 0.95, "seed"_a = 1, "threads"_a = 0, "frame_symbols"_a = 4096, "impl_loss_db"_a = 0.0,
      "pulse"_a = py::none(), "impairments"_a = py::none(), "stage"_a = py::none(), "stage_output"_a = "symbols",
      "code"_a = "", "llr"_a = py::none(), "min_frame_errors"_a = 0,
      "Monte-Carlo BER/SER/EVM sweep, the Python form of `qamsight sweep` (same defaults, same\n"
      "counts for the same seed on any thread count).\n\n"
      "modulations: a name or a list (bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam) [--mod]\n"
      "eb_n0_db / es_n0_db: one value or a sequence, exactly one of them [--ebn0 / --esn0]\n"
      "min_errors, max_bits, max_rel_width, confidence, seed, threads, frame_symbols, impl_loss_db:\n"
      "    as --min-errors ... --impl-loss-db (counts may be given as floats with whole values, 1e6)\n"
      "pulse, impairments: optional PulseShapingConfig / ImpairmentConfig of the waveform link\n"
      "    (LinkConfig.pulse / .impairments; the default is the symbol-rate AWGN link)\n"
      "stage: optional callable(StageInput) -> array replacing the built-in decisions, returning\n"
      "    stage_output = 'symbols' (complex64, frame_symbols values), 'llrs' (float32, one per bit,\n"
      "    ln P(b=0)/P(b=1)) or 'bits' (uint8 0/1, one per bit). Calls are serialised and hold the\n"
      "    GIL; an exception raised by the stage stops the sweep and is re-raised here.\n"
      "code, llr, min_frame_errors: forward error correction (LinkConfig.code, a code_names() entry),\n"
      "    the coded receiver's LlrMethod, and the frame-error stop rule (StopRule.min_frame_errors)\n"
      "The GIL is released while frames run; Ctrl-C raises KeyboardInterrupt at the next batch.\n"
      "Raises ConfigError (a ValueError) naming the keyword for values out of range.");

  m.def(
      "run_sweep",
      [](const SweepConfig& config, py::object stage, py::object stage_output) {
        return run_python_sweep(config, stage, stage_output);
      },
      "config"_a, py::kw_only(), "stage"_a = py::none(), "stage_output"_a = "symbols",
      "Runs a SweepConfig (as sweep() does with its keywords), with the GIL released.");
  m.def("sweep_points", &sweep_points, "config"_a,
        "The grid of points of a sweep in output order (modulation-major); validates the config.");
  m.def("validate", [](const SweepConfig& c) { qamsight::validate(c); }, "config"_a,
        "Raises ConfigError for an invalid sweep configuration.");
  m.def("validate", [](const LinkConfig& c) { qamsight::validate(c); }, "config"_a,
        "Raises ConfigError for an invalid link (each block's validation and their combination).");
  m.def("information_bits_per_symbol", &information_bits_per_symbol, "link"_a, "constellation"_a,
        "Information bits per symbol: bits per symbol times the code rate.");
  m.def("isi_loss_db", &isi_loss_db, "link"_a, "es_n0_db"_a,
        "SNR loss (dB) of the finite RRC span at es_n0_db: 10 log10(1 + P_isi Es/N0); 0 at symbol rate.");

  py::class_<SymbolCapture>(m, "SymbolCapture",
                            "Transmitted and decision-point symbols of some frames (read-only complex64\n"
                            "views of the capture's own buffers) and the nominal N0 there.")
      .def_property_readonly("transmitted",
                             [](py::object self) {
                               return readonly_view<cf32>(self.cast<const SymbolCapture&>().transmitted, self);
                             })
      .def_property_readonly("received",
                             [](py::object self) {
                               return readonly_view<cf32>(self.cast<const SymbolCapture&>().received, self);
                             })
      .def_readonly("noise_variance", &SymbolCapture::noise_variance);
  m.def(
      "capture_symbols",
      [](const LinkConfig& link, const PointSpec& point, std::uint64_t seed, std::uint64_t frames) {
        py::gil_scoped_release nogil;
        return capture_symbols(link, point, seed, frames);
      },
      "link"_a, "point"_a, "seed"_a, "frames"_a,
      "Runs frames 0 .. frames-1 of the link at `point` (one thread, GIL released) and keeps their\n"
      "symbols, for EVM analysis. Use sweep_points() for a PointSpec with its stream key.");
  m.def("batch_frames", &batch_frames, "batch_index"_a, "Frames in batch number b: 4, 8, 16, 32, 64, 128, 256, 256, ...");
  m.def("frame_stream", &frame_stream, "stream_key"_a, "frame"_a,
        "Random-stream number of a frame of the point with stream_key.");
  m.def("point_stream_key", &point_stream_key, "modulation"_a, "kind"_a, "snr_db"_a,
        "Stable 32-bit random-stream key of a point (FNV-1a of modulation and SNR).");
}

}  // namespace qamsight::python
