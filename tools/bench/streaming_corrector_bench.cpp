// Real-time corrector latency: one process() call corrects one integration of the whole array.
//
//   build/tools/streaming_corrector_bench --benchmark_counters_tabular=true
//
// BM_Process gives the mean time per call (use --benchmark_repetitions for its spread).
// BM_ProcessLatency times 100,000 calls one by one and reports their distribution (mean, p50,
// p99, max in microseconds; each includes one steady_clock reading, clock_ns), optionally
// while another thread publishes new coefficients every 100 us.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdint>
#include <random>
#include <thread>
#include <vector>

#include "wvr/streaming_corrector.hpp"

namespace {

// Invented demo coefficients for a fictional array.
struct Setup {
  wvr::CorrectorConfig config;
  wvr::CorrectorCoefficients a, b;
  std::vector<std::vector<double>> inputs;
  std::vector<std::uint8_t> valid;
  std::vector<double> path_mm, phase_correction_rad;
  std::vector<std::uint8_t> flags;

  Setup(std::size_t antennas, std::size_t channels)
      : valid(antennas, 1), path_mm(antennas), phase_correction_rad(antennas), flags(antennas) {
    config.antennas = antennas;
    config.channels = channels;
    config.obs_freq_ghz = 230.0;
    config.phase_per_path = 1.02;
    std::mt19937_64 rng(42);
    a = random_set(rng);
    b = random_set(rng);
    std::uniform_real_distribution<double> delta(-10.0, 10.0);
    for (int i = 0; i < 16; ++i) {
      std::vector<double> t;
      for (const double ref : a.reference_brightness_k) t.push_back(ref + delta(rng));
      inputs.push_back(t);
    }
  }

  wvr::CorrectorCoefficients random_set(std::mt19937_64& rng) const {
    std::uniform_real_distribution<double> weight(0.5, 2.0), tref(40.0, 260.0), path(500.0, 3000.0),
        scale(0.9, 1.1);
    wvr::CorrectorCoefficients k;
    for (std::size_t i = 0; i < config.antennas * config.channels; ++i) {
      k.weight_mm_per_k.push_back(weight(rng));
      k.reference_brightness_k.push_back(tref(rng));
    }
    for (std::size_t i = 0; i < config.antennas; ++i) {
      k.reference_path_mm.push_back(path(rng));
      k.scale.push_back(scale(rng));
      k.usable.push_back(1);
    }
    return k;
  }

  wvr::CorrectorStatus process(const wvr::StreamingCorrector& c, std::size_t i) {
    return c.process(inputs[i % inputs.size()], valid, path_mm, phase_correction_rad, flags);
  }
};

void BM_Process(benchmark::State& state) {
  Setup s(static_cast<std::size_t>(state.range(0)), static_cast<std::size_t>(state.range(1)));
  const wvr::StreamingCorrector corrector(s.config, s.a);
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(s.process(corrector, i++));
    benchmark::ClobberMemory();
  }
  state.counters["antennas_per_s"] = benchmark::Counter(
      static_cast<double>(state.iterations() * s.config.antennas), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_Process)
    ->ArgNames({"antennas", "channels"})
    ->Args({64, 4})
    ->Args({64, 8})
    ->Args({256, 4})
    ->Unit(benchmark::kMicrosecond);

void BM_ProcessLatency(benchmark::State& state) {
  using Clock = std::chrono::steady_clock;
  constexpr std::size_t kCalls = 100000;
  Setup s(64, 4);
  wvr::StreamingCorrector corrector(s.config, s.a);
  const bool updating = state.range(0) != 0;
  std::atomic<bool> stop{false};
  std::atomic<std::size_t> updates{0};
  std::thread writer;
  if (updating) {
    writer = std::thread([&] {
      bool use_b = true;
      while (!stop.load()) {
        corrector.update_coefficients(use_b ? s.b : s.a);
        use_b = !use_b;
        updates.fetch_add(1);
        std::this_thread::sleep_for(std::chrono::microseconds(100));
      }
    });
  }
  std::vector<double> ns(kCalls);
  for (auto _ : state) {
    for (std::size_t i = 0; i < kCalls; ++i) {
      const auto start = Clock::now();
      benchmark::DoNotOptimize(s.process(corrector, i));
      benchmark::ClobberMemory();
      ns[i] = std::chrono::duration<double, std::nano>(Clock::now() - start).count();
    }
  }
  stop.store(true);
  if (writer.joinable()) writer.join();

  // Cost of the clock reading itself, included in every sample above.
  std::vector<double> empty(10000);
  for (double& e : empty) {
    const auto start = Clock::now();
    e = std::chrono::duration<double, std::nano>(Clock::now() - start).count();
  }
  std::sort(empty.begin(), empty.end());

  double sum = 0.0;
  for (const double x : ns) sum += x;
  std::sort(ns.begin(), ns.end());
  auto quantile = [&](double q) {
    return ns[std::min(ns.size() - 1,
                       static_cast<std::size_t>(q * static_cast<double>(ns.size())))];
  };
  state.counters["mean_us"] = sum / static_cast<double>(ns.size()) * 1e-3;
  state.counters["p50_us"] = quantile(0.50) * 1e-3;
  state.counters["p99_us"] = quantile(0.99) * 1e-3;
  state.counters["p999_us"] = quantile(0.999) * 1e-3;
  state.counters["max_us"] = ns.back() * 1e-3;
  state.counters["clock_ns"] = empty[empty.size() / 2];
  state.counters["updates"] = static_cast<double>(updates.load());
}
BENCHMARK(BM_ProcessLatency)
    ->ArgName("updating")
    ->Arg(0)
    ->Arg(1)
    ->Iterations(1)
    ->Unit(benchmark::kMillisecond)
    ->UseRealTime();

}  // namespace

BENCHMARK_MAIN();
