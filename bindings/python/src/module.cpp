// module: the entry of the compiled extension qamsight._core; one init call per library module.
#include "bindings.hpp"

PYBIND11_MODULE(_core, m) {
  using namespace qamsight::python;
  m.doc() = "qamsight._core: the compiled bindings of the qamsight C++ library (import qamsight instead).";
  init_core(m);
  init_modem(m);
  init_channel(m);
  // Before sim: the waveform link's ImpairmentConfig refers to these types.
#ifdef QAMSIGHT_PY_HAVE_IMPAIRMENTS
  init_impairments(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_PULSE
  init_pulse(m);
#endif
  init_theory(m);
  init_measure(m);
  init_sim(m);
  init_io(m);
  init_regression(m);
  init_figures(m);
#ifdef QAMSIGHT_PY_HAVE_SPECTRUM
  init_spectrum(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_VIEWS
  init_views(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_LLR
  init_llr(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_INFORMATION
  init_information(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_FEC
  init_fec(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_LINK
  init_link(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_EVM
  init_evm(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_PRBS
  init_prbs(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_SIGMF
  init_sigmf(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_EVM_BUDGET
  init_evm_budget(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_SYNC
  init_sync(m);
#endif
#ifdef QAMSIGHT_PY_HAVE_WAVEFORM
  init_waveform(m);  // after prbs and sigmf: its types refer to theirs
#endif
  // Which optional parts this build carries (the package exports only what is present).
  py::list parts;
  for (const char* name : {"core", "modem", "channel", "theory", "measure", "sim", "io", "regression", "figures"}) {
    parts.append(name);
  }
#ifdef QAMSIGHT_PY_HAVE_PULSE
  parts.append("pulse");
#endif
#ifdef QAMSIGHT_PY_HAVE_IMPAIRMENTS
  parts.append("impairments");
#endif
#ifdef QAMSIGHT_PY_HAVE_SPECTRUM
  parts.append("spectrum");
#endif
#ifdef QAMSIGHT_PY_HAVE_VIEWS
  parts.append("views");
#endif
#ifdef QAMSIGHT_PY_HAVE_LLR
  parts.append("llr");
#endif
#ifdef QAMSIGHT_PY_HAVE_INFORMATION
  parts.append("information");
#endif
#ifdef QAMSIGHT_PY_HAVE_FEC
  parts.append("fec");
#endif
#ifdef QAMSIGHT_PY_HAVE_LINK
  parts.append("link");
#endif
#ifdef QAMSIGHT_PY_HAVE_EVM
  parts.append("evm");
#endif
#ifdef QAMSIGHT_PY_HAVE_PRBS
  parts.append("prbs");
#endif
#ifdef QAMSIGHT_PY_HAVE_SIGMF
  parts.append("sigmf");
#endif
#ifdef QAMSIGHT_PY_HAVE_EVM_BUDGET
  parts.append("evm_budget");
#endif
#ifdef QAMSIGHT_PY_HAVE_SYNC
  parts.append("sync");
#endif
#ifdef QAMSIGHT_PY_HAVE_WAVEFORM
  parts.append("waveform");
#endif
  m.attr("_parts") = parts;
}
