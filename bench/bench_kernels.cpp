// bench_kernels: throughput of each dispatched kernel on every path this CPU runs, and of the chain.
//
// Benchmarks are registered per kernel path (portable, avx2), named BM_<kernel>/<path>, with
// items/s (samples, symbols or words) and bytes/s (bytes written). BM_SymbolRateFrame runs whole
// frames of the sweep's symbol-rate link (symbols/s) with the path the dispatcher chose.
//   qamsight_bench_kernels --benchmark_filter=Gaussian
#include <benchmark/benchmark.h>

#include <string>
#include <vector>

#include "qamsight/detail/kernels.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/sim.hpp"

namespace {

using qamsight::detail::KernelTable;
using qamsight::detail::PhiloxStart;

constexpr std::size_t kN = 4096;  // elements per call: a frame of the default size
const PhiloxStart kStart{{0, 2, 9, 5}, {7, 0}};

void words(benchmark::State& state, const KernelTable* k) {
  std::vector<std::uint32_t> out(4 * kN);
  for (auto _ : state) {
    k->philox_words(kStart, kN, 26, out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(4 * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(16 * kN));
}

void packed_labels(benchmark::State& state, const KernelTable* k) {
  std::vector<std::uint32_t> out(kN);
  for (auto _ : state) {
    k->philox_packed_labels(kStart, kN, 6, out.data());  // 64-QAM payload: five labels per word
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(4 * kN));
}

void uniform(benchmark::State& state, const KernelTable* k) {
  std::vector<float> out(4 * kN);
  for (auto _ : state) {
    k->philox_uniform_f32(kStart, kN, out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(4 * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(16 * kN));
}

void gaussian64(benchmark::State& state, const KernelTable* k) {
  std::vector<double> out(2 * kN);
  for (auto _ : state) {
    k->gaussian_f64(kStart, kN, out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(2 * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(16 * kN));
}

void gaussian32(benchmark::State& state, const KernelTable* k) {
  std::vector<float> out(2 * kN);
  for (auto _ : state) {
    k->gaussian_f32(kStart, kN, out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(2 * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * kN));
}

void noise(benchmark::State& state, const KernelTable* k) {
  std::vector<float> in(2 * kN, 0.5f), out(2 * kN);
  for (auto _ : state) {
    k->noise_cf32(kStart, kN, 0.1f, in.data(), out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kN));  // complex samples
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * kN));
}

void map(benchmark::State& state, const KernelTable* k) {
  const auto c = qamsight::Constellation::from_name("64qam");
  std::vector<std::uint32_t> labels(kN);
  k->philox_words(kStart, kN / 4, 26, labels.data());
  std::vector<float> out(2 * kN);
  for (auto _ : state) {
    k->map_labels(labels.data(), kN, 63, reinterpret_cast<const float*>(c.points_f().data()), out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * kN));
}

void slice(benchmark::State& state, const KernelTable* k) {
  const auto c = qamsight::Constellation::from_name("64qam");
  std::vector<float> x(2 * kN);
  k->gaussian_f32(kStart, kN, x.data());
  std::vector<std::uint32_t> labels(kN);
  const float inv = static_cast<float>(1.0 / c.qam_half_spacing());
  for (auto _ : state) {
    k->slice_square_qam(x.data(), kN, inv, 8, 3, labels.data());
    benchmark::DoNotOptimize(labels.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(4 * kN));
}

// RRC transmit shaping at 4 samples per symbol, span 12 (49 taps: 4 phases of 13), one frame of
// kN symbols (items = output samples).
void interpolate(benchmark::State& state, const KernelTable* k) {
  constexpr std::size_t L = 4, K = 13;
  std::vector<float> taps(L * K), line(2 * (K - 1 + kN + 16)), out(2 * L * kN);
  k->philox_uniform_f32(kStart, taps.size() / 4, taps.data());
  k->gaussian_f32(kStart, line.size() / 2, line.data());
  for (auto _ : state) {
    k->interpolate_f32(taps.data(), L, K, line.data(), kN, out.data());
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(L * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * L * kN));
}

// Matched filter and decimation by 4 over 4 kN samples (56 taps padded, items = input samples).
void decimate(benchmark::State& state, const KernelTable* k) {
  constexpr std::size_t n2 = 112, step = 4;
  std::vector<float> taps2(n2), line(2 * 4 * kN + n2), out(2 * kN);
  k->gaussian_f32(kStart, n2 / 2, taps2.data());
  for (std::size_t i = 0; i < n2; i += 2) taps2[i + 1] = taps2[i];
  k->gaussian_f32(kStart, line.size() / 2, line.data());
  for (auto _ : state) {
    benchmark::DoNotOptimize(k->decimate_f32(taps2.data(), n2, line.data(), 0, 4 * kN, step, out.data()));
    benchmark::DoNotOptimize(out.data());
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(4 * kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * kN));
}

void count(benchmark::State& state, const KernelTable* k) {
  std::vector<std::uint32_t> a(kN), b(kN);
  k->philox_words(kStart, kN / 4, 26, a.data());
  k->philox_words(PhiloxStart{{0, 3, 9, 5}, {7, 0}}, kN / 4, 26, b.data());
  for (auto _ : state) {
    std::uint64_t be, se;
    k->count_label_errors(a.data(), b.data(), kN, &be, &se);
    benchmark::DoNotOptimize(be);
    benchmark::DoNotOptimize(se);
  }
  state.SetItemsProcessed(state.iterations() * std::int64_t(kN));
  state.SetBytesProcessed(state.iterations() * std::int64_t(8 * kN));  // bytes read
}

// Whole frames of the sweep's symbol-rate link (labels, map, AWGN, slice, count, EVM).
void BM_SymbolRateFrame(benchmark::State& state) {
  qamsight::LinkConfig lc;
  lc.frame_symbols = static_cast<std::size_t>(state.range(0));
  qamsight::PointSpec p;
  p.modulation = "64qam";
  p.es_n0_db = 18.0;
  const auto link = qamsight::make_link(lc, p, 1);
  const auto runner = link->make_runner();
  qamsight::FrameResult r;
  std::uint64_t frame = 0;
  for (auto _ : state) {
    runner->run(frame++, r);
    benchmark::DoNotOptimize(r);
  }
  state.SetItemsProcessed(state.iterations() * state.range(0));
  state.SetLabel(qamsight::detail::kernels().name);
}
BENCHMARK(BM_SymbolRateFrame)->Arg(1024)->Arg(4096)->Arg(16384)->Arg(65536);

const int kRegistered = [] {
  using Fn = void (*)(benchmark::State&, const KernelTable*);
  const std::pair<const char*, Fn> kernels[] = {
      {"PhiloxWords", words}, {"PackedLabels64qam", packed_labels}, {"UniformF32", uniform}, {"GaussianF64", gaussian64}, {"GaussianF32", gaussian32},
      {"AwgnNoiseCf32", noise}, {"MapLabels64qam", map}, {"SliceSquareQam64", slice}, {"CountLabelErrors", count},
      {"InterpolateRrc4x13", interpolate}, {"DecimateRrc4", decimate},
  };
  for (const KernelTable* t : qamsight::detail::available_kernels()) {
    for (const auto& [name, fn] : kernels) {
      benchmark::RegisterBenchmark((std::string("BM_") + name + "/" + t->name).c_str(), fn, t);
    }
  }
  return 0;
}();

}  // namespace
