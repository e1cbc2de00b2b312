// Throughput of the channel models: the fast model (what retrieval and real-time correction
// call per sample) and the exact line-by-line model it is tested against.
//
//   build/tools/sky_model_bench --benchmark_counters_tabular=true
#include <benchmark/benchmark.h>

#include <filesystem>
#include <vector>

#include "wvr/wvr.hpp"

namespace {

const std::filesystem::path kTestdata = WVR_TESTDATA_DIR;

wvr::AtmosphereProfile demo_profile(int layers) {
  wvr::LayerGrid grid;
  grid.layer_count = layers;
  return wvr::make_parametric_profile(
      wvr::load_site_config(kTestdata / "sites/demo-site.toml").parameters, grid);
}

wvr::RadiometerConfig demo_radiometer() {
  return wvr::load_radiometer_config(kTestdata / "radiometers/demo-183-dsb.toml");
}

// All four channels' brightness + dTb/dPWV + dTb/dT, PWV and elevation varying per call.
void BM_FastChannelsWithJacobians(benchmark::State& state) {
  const wvr::AtmosphereProfile profile = demo_profile(static_cast<int>(state.range(0)));
  const wvr::FastSkyModel fast(profile, demo_radiometer());
  auto ws = fast.make_workspace();
  std::vector<double> tb(fast.channel_count()), dp(tb.size()), dt(tb.size());
  double pwv = 0.5, el = 30.0;
  for (auto _ : state) {
    fast.evaluate(pwv, el, ws, tb, dp, dt);
    benchmark::DoNotOptimize(tb.data());
    pwv = pwv < 8.0 ? pwv + 0.013 : 0.5;
    el = el < 85.0 ? el + 0.7 : 30.0;
  }
  state.counters["layers"] = static_cast<double>(fast.layer_count());
  state.counters["frequencies"] = static_cast<double>(fast.frequency_count());
  state.counters["evals_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_FastChannelsWithJacobians)->Arg(48)->Arg(96);

void BM_FastChannelsBrightnessOnly(benchmark::State& state) {
  const wvr::FastSkyModel fast(demo_profile(48), demo_radiometer());
  auto ws = fast.make_workspace();
  std::vector<double> tb(fast.channel_count());
  double pwv = 0.5;
  for (auto _ : state) {
    fast.evaluate(pwv, 45.0, ws, tb);
    benchmark::DoNotOptimize(tb.data());
    pwv = pwv < 8.0 ? pwv + 0.013 : 0.5;
  }
  state.counters["evals_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_FastChannelsBrightnessOnly);

void BM_ExactChannelsWithJacobians(benchmark::State& state) {
  const wvr::AtmosphereProfile profile = demo_profile(48);
  const wvr::RadiometerConfig radiometer = demo_radiometer();
  const wvr::SkyModel sky;
  for (auto _ : state) {
    auto c = sky.channels(profile, radiometer, 45.0);
    benchmark::DoNotOptimize(c.brightness_k.data());
  }
  state.counters["evals_per_s"] =
      benchmark::Counter(static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_ExactChannelsWithJacobians)->Unit(benchmark::kMillisecond);

void BM_FastModelBuild(benchmark::State& state) {
  const wvr::AtmosphereProfile profile = demo_profile(48);
  const wvr::RadiometerConfig radiometer = demo_radiometer();
  for (auto _ : state) {
    wvr::FastSkyModel fast(profile, radiometer);
    benchmark::DoNotOptimize(&fast);
  }
}
BENCHMARK(BM_FastModelBuild)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
