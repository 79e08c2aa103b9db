// bench_chain: end-to-end sweep throughput (symbols/s) as JSON, the qamsight side of compare_numpy.py.
//
// Runs one sweep point through the real sweep engine (run_sweep: frames, thread pool, batch
// schedule, stopping rule) until a fixed number of symbols, and prints one JSON object:
//   qamsight_bench_chain [--chain symbol|rrc] [--mod 64qam] [--esn0 DB] [--symbols N]
//                        [--frame-symbols N] [--threads N] [--sps 4] [--roll-off 0.25]
//                        [--span 12] [--seed N]
// "symbols_per_second" counts transmitted (information-carrying) symbols per wall second;
// "max_rss_kb" is the process's peak resident set (getrusage), for the memory-flatness check.
// This program has its own main(), so the benchmark_main library linked by bench/CMakeLists.txt
// is not used for it.
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>

#include "qamsight/detail/kernels.hpp"
#include "qamsight/sim.hpp"

namespace {

[[noreturn]] void usage(const char* msg) {
  std::fprintf(stderr, "qamsight_bench_chain: %s\n", msg);
  std::exit(2);
}

}  // namespace

int main(int argc, char** argv) {
  std::string chain = "symbol", mod = "64qam";
  double esn0 = 16.0, roll_off = 0.25, symbols = 2e7;
  long frame_symbols = 4096, threads = 1, sps = 4, span = 12, seed = 1;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (i + 1 >= argc) usage(("missing value after " + a).c_str());
    const char* v = argv[++i];
    if (a == "--chain") chain = v;
    else if (a == "--mod") mod = v;
    else if (a == "--esn0") esn0 = std::atof(v);
    else if (a == "--symbols") symbols = std::atof(v);
    else if (a == "--frame-symbols") frame_symbols = std::atol(v);
    else if (a == "--threads") threads = std::atol(v);
    else if (a == "--sps") sps = std::atol(v);
    else if (a == "--roll-off") roll_off = std::atof(v);
    else if (a == "--span") span = std::atol(v);
    else if (a == "--seed") seed = std::atol(v);
    else usage(("unknown option " + a).c_str());
  }
  if (chain != "symbol" && chain != "rrc") usage("--chain must be symbol or rrc");

  qamsight::SweepConfig c;
  c.modulations = {mod};
  c.snr_db = {esn0};
  c.snr_kind = qamsight::SnrKind::es_n0;
  c.seed = static_cast<std::uint64_t>(seed);
  c.threads = static_cast<unsigned>(threads);
  c.link.frame_symbols = static_cast<std::size_t>(frame_symbols);
  if (chain == "rrc") {
    c.link.pulse.samples_per_symbol = static_cast<int>(sps);
    c.link.pulse.roll_off = roll_off;
    c.link.pulse.span_symbols = static_cast<int>(span);
  }
  const unsigned bps = qamsight::Constellation::from_name(mod).bits_per_symbol();
  c.stop.min_bit_errors = std::uint64_t{1} << 62;  // run to the bit budget
  c.stop.max_bits = static_cast<std::uint64_t>(symbols) * bps;

  const auto t0 = std::chrono::steady_clock::now();
  const qamsight::SweepResult r = qamsight::run_sweep(c);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  const auto& counts = r.points.at(0).counts;
  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  std::printf(
      "{\"chain\": \"%s\", \"modulation\": \"%s\", \"es_n0_db\": %g, \"threads\": %ld, \"frame_symbols\": %ld, "
      "\"samples_per_symbol\": %ld, \"kernels\": \"%s\", \"symbols\": %llu, \"bit_errors\": %llu, "
      "\"seconds\": %.6f, \"symbols_per_second\": %.6g, \"max_rss_kb\": %ld}\n",
      chain.c_str(), mod.c_str(), esn0, threads, frame_symbols, chain == "rrc" ? sps : 1L,
      qamsight::detail::kernels().name, static_cast<unsigned long long>(counts.symbols),
      static_cast<unsigned long long>(counts.bit_errors), seconds, static_cast<double>(counts.symbols) / seconds,
      ru.ru_maxrss);
  return 0;
}
