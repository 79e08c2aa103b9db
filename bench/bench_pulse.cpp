// bench_pulse: throughput of the pulse filters, and the direct / overlap-save crossover.
//
// The FIR pair BM_FirDirect / BM_FirOverlapSave over the tap count is what sets
// kOverlapSaveMinTaps in pulse.hpp: run
//   qamsight_bench_pulse --benchmark_filter='Fir' --benchmark_repetitions=3
// and take the smallest tap count from which overlap-save's time per sample is below the
// direct form's. BM_FftBlock gives the FFT work constant of partial blocks (pulse_fft.cpp).
#include <benchmark/benchmark.h>

#include <cmath>
#include <vector>

#include "qamsight/fft.hpp"
#include "qamsight/pulse.hpp"

namespace {

using qamsight::cf32;
using qamsight::cf64;

constexpr std::size_t kBlock = 16384;

std::vector<cf32> signal(std::size_t n) {
  qamsight::RandomStream rs(1, 2, qamsight::Substream::user);
  std::vector<cf32> x(n);
  for (auto& v : x) v = cf32(float(rs.gaussian()), float(rs.gaussian()));
  return x;
}

std::vector<double> real_taps(std::size_t n) {
  qamsight::RandomStream rs(3, n, qamsight::Substream::user);
  std::vector<double> t(n);
  for (auto& v : t) v = rs.gaussian();
  return t;
}

std::vector<cf64> complex_taps(std::size_t n) {
  qamsight::RandomStream rs(4, n, qamsight::Substream::user);
  std::vector<cf64> t(n);
  for (auto& v : t) v = cf64(rs.gaussian(), rs.gaussian());
  return t;
}

void run_fir(benchmark::State& state, qamsight::FirFilter<cf32>& f) {
  const auto x = signal(kBlock);
  std::vector<cf32> y(kBlock);
  for (auto _ : state) {
    f.process(x, y);
    benchmark::DoNotOptimize(y.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kBlock));
}

void BM_FirDirect(benchmark::State& state) {
  qamsight::FirFilter<cf32> f(real_taps(std::size_t(state.range(0))), qamsight::FirMethod::direct);
  run_fir(state, f);
}

void BM_FirOverlapSave(benchmark::State& state) {
  qamsight::FirFilter<cf32> f(real_taps(std::size_t(state.range(0))), qamsight::FirMethod::overlap_save);
  state.counters["fft"] = double(f.fft_size());
  run_fir(state, f);
}

void BM_FirDirectComplexTaps(benchmark::State& state) {
  qamsight::FirFilter<cf32> f(complex_taps(std::size_t(state.range(0))), qamsight::FirMethod::direct);
  run_fir(state, f);
}

void BM_FirOverlapSaveComplexTaps(benchmark::State& state) {
  qamsight::FirFilter<cf32> f(complex_taps(std::size_t(state.range(0))), qamsight::FirMethod::overlap_save);
  run_fir(state, f);
}

void tap_counts(benchmark::internal::Benchmark* b) {
  for (int n : {4, 8, 16, 24, 32, 40, 48, 56, 64, 80, 96, 128, 192, 256, 512, 1024, 4096}) b->Arg(n);
}

BENCHMARK(BM_FirDirect)->Apply(tap_counts);
BENCHMARK(BM_FirOverlapSave)->Apply(tap_counts);
BENCHMARK(BM_FirDirectComplexTaps)->Apply(tap_counts);
BENCHMARK(BM_FirOverlapSaveComplexTaps)->Apply(tap_counts);

// One overlap-save block: forward FFT, spectrum product, inverse FFT (the cost of a partial
// block), for the FFT sizes the FIR filter picks.
void BM_FftBlock(benchmark::State& state) {
  const std::size_t n = std::size_t(state.range(0));
  const qamsight::FftPlanF fwd(n, qamsight::FftDirection::forward), inv(n, qamsight::FftDirection::inverse);
  const auto x = signal(n);
  const auto h = signal(n);
  std::vector<cf32> y(n);
  for (auto _ : state) {
    fwd.execute(x, y);
    for (std::size_t k = 0; k < n; ++k) y[k] *= h[k];
    inv.execute(y, y);
    benchmark::DoNotOptimize(y.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(n));
}
BENCHMARK(BM_FftBlock)->RangeMultiplier(2)->Range(64, 65536);

// Transmit shaping: symbols in, sps samples per symbol out (items = output samples).
void BM_Interpolator(benchmark::State& state) {
  const int sps = int(state.range(0)), span = int(state.range(1));
  qamsight::PolyphaseInterpolator<cf32> f(
      qamsight::PulseSpec{qamsight::PulseFamily::root_raised_cosine, 0.35, span, sps});
  const auto x = signal(kBlock / std::size_t(sps));
  std::vector<cf32> y(f.output_length(x.size()));
  for (auto _ : state) {
    f.process(x, y);
    benchmark::DoNotOptimize(y.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(y.size()));
}
BENCHMARK(BM_Interpolator)->Args({4, 10})->Args({8, 10})->Args({4, 32})->Args({16, 16});

// Receive matched filter and decimation (items = input samples).
void BM_Decimator(benchmark::State& state) {
  const int sps = int(state.range(0)), span = int(state.range(1)), per_symbol = int(state.range(2));
  qamsight::MatchedDecimator<cf32> f(
      qamsight::PulseSpec{qamsight::PulseFamily::root_raised_cosine, 0.35, span, sps}, per_symbol);
  const auto x = signal(kBlock);
  std::vector<cf32> y(f.output_length(x.size()));
  for (auto _ : state) {
    f.process(x, y);
    benchmark::DoNotOptimize(y.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kBlock));
}
BENCHMARK(BM_Decimator)
    ->Args({4, 10, 1})
    ->Args({4, 10, 2})
    ->Args({8, 10, 1})
    ->Args({4, 32, 1})
    ->Args({16, 16, 1});

}  // namespace
