// Retrieval throughput: the full Ceres fit per sample, with and without a starting PWV.
//
//   build/tools/retrieval_bench --benchmark_counters_tabular=true
#include <benchmark/benchmark.h>

#include <filesystem>
#include <random>
#include <vector>

#include "wvr/wvr.hpp"

namespace {

const std::filesystem::path kTestdata = WVR_TESTDATA_DIR;

struct Demo {
  wvr::RadiometerConfig radiometer =
      wvr::load_radiometer_config(kTestdata / "radiometers/demo-183-dsb.toml");
  wvr::AtmosphereProfile profile = wvr::make_parametric_profile(
      wvr::load_site_config(kTestdata / "sites/demo-site.toml").parameters);
  wvr::FastSkyModel fast{profile, radiometer};
  std::vector<std::vector<double>> samples;
  std::vector<double> pwv, elevation, noise;
  Demo() {
    auto ws = fast.make_workspace();
    std::mt19937_64 rng(1);
    std::uniform_real_distribution<double> p(0.2, 4.0), e(20.0, 85.0);
    std::normal_distribution<double> n;
    for (const auto& c : radiometer.channels) noise.push_back(c.noise_k);
    for (int i = 0; i < 1000; ++i) {
      std::vector<double> tb(4);
      pwv.push_back(p(rng));
      elevation.push_back(e(rng));
      fast.evaluate(pwv.back(), elevation.back(), ws, tb);
      for (std::size_t c = 0; c < 4; ++c) tb[c] += noise[c] * n(rng);
      samples.push_back(tb);
    }
  }
};

const Demo& demo() {
  static const Demo d;
  return d;
}

void BM_FullFit(benchmark::State& state) {
  const Demo& d = demo();
  wvr::RetrievalOptions options;
  options.fit_liquid = state.range(0) != 0;
  wvr::Retriever retriever(d.fast, options);
  const bool warm_start = state.range(1) != 0;
  std::size_t i = 0;
  for (auto _ : state) {
    const double start = warm_start ? d.pwv[i] * 1.02 : -1.0;
    auto r = retriever.fit({d.samples[i], d.noise, d.elevation[i], start});
    benchmark::DoNotOptimize(r.pwv_mm);
    i = (i + 1) % d.samples.size();
  }
  state.counters["fits_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_FullFit)->ArgNames({"liquid", "warm_start"})->Args({0, 0})->Args({0, 1})->Args({1, 1});

// The real-time path: table inversion per sample (PWV, sigma, chi-square, channel slopes).
void BM_TableInversion(benchmark::State& state) {
  const Demo& d = demo();
  wvr::PwvTableOptions options;
  options.min_surface_temperature_k = 265.0;
  options.max_surface_temperature_k = 275.0;
  const wvr::PwvTable table(wvr::load_site_config(kTestdata / "sites/demo-site.toml").parameters,
                            d.radiometer, options);
  std::vector<double> slopes(4);
  std::size_t i = 0;
  for (auto _ : state) {
    auto r = table.invert(d.samples[i], d.noise, d.elevation[i], 270.3, slopes);
    benchmark::DoNotOptimize(r.pwv_mm);
    i = (i + 1) % d.samples.size();
  }
  state.counters["samples_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_TableInversion);

}  // namespace

BENCHMARK_MAIN();
