// The real-time phase corrector: numbers, flags, size checks, validation, allocation-free
// processing and tear-free coefficient updates.
#include "wvr/streaming_corrector.hpp"

#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <functional>
#include <limits>
#include <new>
#include <numbers>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "correction/streaming_corrector_kernel.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"

// ---------------------------------------------------------------------------------------------
// Heap counting. Replacing the global allocation functions affects the whole test binary, so
// they behave exactly like the defaults (malloc/free) and only count on threads that switched
// counting on. A per-thread switch keeps thread start-up and exit bookkeeping (which runs
// outside the code under test) out of the count.

namespace {

thread_local bool t_count_heap = false;
std::atomic<std::size_t> g_heap_calls{0};

void note_heap_call() {
  if (t_count_heap) g_heap_calls.fetch_add(1, std::memory_order_relaxed);
}

void* counted_malloc(std::size_t size) {
  note_heap_call();
  return std::malloc(size == 0 ? 1 : size);
}

void* counted_aligned_alloc(std::size_t size, std::align_val_t alignment) {
  note_heap_call();
  const auto align = static_cast<std::size_t>(alignment);
  // aligned_alloc wants a size that is a multiple of the alignment.
  const std::size_t rounded = (size == 0 ? align : (size + align - 1) / align * align);
  return std::aligned_alloc(align, rounded);
}

void counted_free(void* p) noexcept {
  if (p == nullptr) return;
  note_heap_call();
  std::free(p);
}

}  // namespace

void* operator new(std::size_t size) {
  if (void* p = counted_malloc(size)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t size) {
  if (void* p = counted_malloc(size)) return p;
  throw std::bad_alloc();
}
void* operator new(std::size_t size, const std::nothrow_t&) noexcept {
  return counted_malloc(size);
}
void* operator new[](std::size_t size, const std::nothrow_t&) noexcept {
  return counted_malloc(size);
}
void* operator new(std::size_t size, std::align_val_t alignment) {
  if (void* p = counted_aligned_alloc(size, alignment)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t size, std::align_val_t alignment) {
  if (void* p = counted_aligned_alloc(size, alignment)) return p;
  throw std::bad_alloc();
}
void* operator new(std::size_t size, std::align_val_t alignment, const std::nothrow_t&) noexcept {
  return counted_aligned_alloc(size, alignment);
}
void* operator new[](std::size_t size, std::align_val_t alignment, const std::nothrow_t&) noexcept {
  return counted_aligned_alloc(size, alignment);
}
void operator delete(void* p) noexcept { counted_free(p); }
void operator delete[](void* p) noexcept { counted_free(p); }
void operator delete(void* p, std::size_t) noexcept { counted_free(p); }
void operator delete[](void* p, std::size_t) noexcept { counted_free(p); }
void operator delete(void* p, const std::nothrow_t&) noexcept { counted_free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { counted_free(p); }
void operator delete(void* p, std::align_val_t) noexcept { counted_free(p); }
void operator delete[](void* p, std::align_val_t) noexcept { counted_free(p); }
void operator delete(void* p, std::size_t, std::align_val_t) noexcept { counted_free(p); }
void operator delete[](void* p, std::size_t, std::align_val_t) noexcept { counted_free(p); }
void operator delete(void* p, std::align_val_t, const std::nothrow_t&) noexcept { counted_free(p); }
void operator delete[](void* p, std::align_val_t, const std::nothrow_t&) noexcept {
  counted_free(p);
}

namespace wvr {
namespace {

// Counts this thread's heap calls (allocations and frees) into g_heap_calls while alive.
class CountHeapOnThisThread {
 public:
  CountHeapOnThisThread() { t_count_heap = true; }
  ~CountHeapOnThisThread() { t_count_heap = false; }
  CountHeapOnThisThread(const CountHeapOnThisThread&) = delete;
  CountHeapOnThisThread& operator=(const CountHeapOnThisThread&) = delete;
};

// ---------------------------------------------------------------------------------------------
// Demo inputs (invented numbers for a fictional array).

CorrectorConfig make_config(std::size_t antennas, std::size_t channels) {
  CorrectorConfig config;
  config.antennas = antennas;
  config.channels = channels;
  config.obs_freq_ghz = 345.0;
  config.phase_per_path = 1.02;
  config.max_brightness_k = 320.0;
  return config;
}

// Weights shrink with the channel count so the path stays far from 0 (keeps the relative
// comparison meaningful).
CorrectorCoefficients random_coefficients(const CorrectorConfig& config, std::mt19937_64& rng) {
  const std::size_t n = config.antennas * config.channels;
  std::uniform_real_distribution<double> weight(0.5, 8.0), tref(20.0, 280.0), path(1000.0, 3000.0),
      scale(0.8, 1.2);
  CorrectorCoefficients k;
  for (std::size_t i = 0; i < n; ++i) {
    k.weight_mm_per_k.push_back(weight(rng) / static_cast<double>(config.channels));
    k.reference_brightness_k.push_back(tref(rng));
  }
  for (std::size_t a = 0; a < config.antennas; ++a) {
    k.reference_path_mm.push_back(path(rng));
    k.scale.push_back(scale(rng));
    k.usable.push_back(1);
  }
  return k;
}

// Brightness within +-10 K of the reference point of `k`.
std::vector<double> random_brightness(const CorrectorCoefficients& k, std::mt19937_64& rng) {
  std::uniform_real_distribution<double> delta(-10.0, 10.0);
  std::vector<double> t;
  for (const double ref : k.reference_brightness_k) t.push_back(ref + delta(rng));
  return t;
}

struct Outputs {
  std::vector<double> path_mm;
  std::vector<double> phase_correction_rad;
  std::vector<std::uint8_t> flags;
  explicit Outputs(std::size_t antennas)
      : path_mm(antennas), phase_correction_rad(antennas), flags(antennas) {}
  bool bitwise_equal(const Outputs& o) const {
    return path_mm.size() == o.path_mm.size() &&
           std::memcmp(path_mm.data(), o.path_mm.data(), path_mm.size() * sizeof(double)) == 0 &&
           std::memcmp(phase_correction_rad.data(), o.phase_correction_rad.data(),
                       phase_correction_rad.size() * sizeof(double)) == 0 &&
           flags == o.flags;
  }
};

CorrectorStatus run(const StreamingCorrector& corrector,
                    const std::vector<double>& brightness_k,
                    const std::vector<std::uint8_t>& valid,
                    Outputs& out) {
  return corrector.process(brightness_k, valid, out.path_mm, out.phase_correction_rad, out.flags);
}

void expect_invalid(const std::function<void()>& f, const std::string& needle) {
  try {
    f();
    ADD_FAILURE() << "no InvalidInput; expected a message naming \"" << needle << "\"";
  } catch (const InvalidInput& e) {
    EXPECT_NE(std::string(e.what()).find(needle), std::string::npos)
        << "message \"" << e.what() << "\" does not contain \"" << needle << "\"";
  }
}

// ---------------------------------------------------------------------------------------------
// Numbers

TEST(StreamingCorrector, MatchesPlainFormulaForRandomInputs) {
  std::mt19937_64 rng(20240611);
  const std::size_t shapes[][2] = {{64, 4}, {7, 1}, {5, 8}};
  for (const auto& shape : shapes) {
    const CorrectorConfig config = make_config(shape[0], shape[1]);
    const CorrectorCoefficients k = random_coefficients(config, rng);
    const StreamingCorrector corrector(config, k);
    const std::vector<std::uint8_t> valid(config.antennas, 1);
    Outputs out(config.antennas);
    for (int trial = 0; trial < 20; ++trial) {
      const std::vector<double> t = random_brightness(k, rng);
      ASSERT_EQ(run(corrector, t, valid, out), CorrectorStatus::kOk);
      for (std::size_t a = 0; a < config.antennas; ++a) {
        // Plain reimplementation, accumulating in a different order on purpose.
        double path_mm = k.reference_path_mm[a];
        for (std::size_t c = 0; c < config.channels; ++c) {
          const std::size_t i = a * config.channels + c;
          path_mm += k.weight_mm_per_k[i] * (t[i] - k.reference_brightness_k[i]);
        }
        const double freq_hz = config.obs_freq_ghz * 1e9;
        const double phase_rad =
            -(2.0 * std::numbers::pi * freq_hz / constants::speed_of_light_m_per_s) *
            config.phase_per_path * k.scale[a] * (path_mm / 1000.0);
        EXPECT_EQ(out.flags[a], 0);
        EXPECT_NEAR(out.path_mm[a], path_mm, 1e-12 * std::abs(path_mm)) << "antenna " << a;
        EXPECT_NEAR(out.phase_correction_rad[a], phase_rad, 1e-12 * std::abs(phase_rad))
            << "antenna " << a;
      }
    }
  }
}

// A path of N wavelengths is a phase of -2 pi N whatever the scale and dispersion factors,
// as long as their product is 1. At 299.792458 GHz the wavelength is 1 mm (c exact, SI 2019).
TEST(StreamingCorrector, WholeWavelengthsGiveMultiplesOfTwoPi) {
  CorrectorConfig config = make_config(2, 1);
  config.obs_freq_ghz = constants::speed_of_light_m_per_s * 1e-6;  // lambda = 1 mm
  config.phase_per_path = 1.25;
  CorrectorCoefficients k;
  k.weight_mm_per_k = {0.5, 2.0};
  k.reference_brightness_k = {100.0, 50.0};
  k.reference_path_mm = {3.0, -1.0};
  k.scale = {0.8, 0.8};  // 0.8 * 1.25 = 1
  k.usable = {1, 1};
  const StreamingCorrector corrector(config, k);
  Outputs out(2);
  ASSERT_EQ(run(corrector, {102.0, 51.0}, {1, 1}, out), CorrectorStatus::kOk);
  // Antenna 0: 3 + 0.5 * 2 = 4 mm; antenna 1: -1 + 2 * 1 = 1 mm.
  EXPECT_NEAR(out.path_mm[0], 4.0, 1e-12);
  EXPECT_NEAR(out.path_mm[1], 1.0, 1e-12);
  EXPECT_NEAR(out.phase_correction_rad[0], -8.0 * std::numbers::pi, 1e-12);
  EXPECT_NEAR(out.phase_correction_rad[1], -2.0 * std::numbers::pi, 1e-12);
}

// Offline reprocessing calls detail::correct_antenna per antenna; process() must give the
// very same bits.
TEST(StreamingCorrector, BitIdenticalToPerAntennaKernel) {
  std::mt19937_64 rng(7);
  const CorrectorConfig config = make_config(64, 4);
  const CorrectorCoefficients k = random_coefficients(config, rng);
  const StreamingCorrector corrector(config, k);
  std::vector<std::uint8_t> valid(config.antennas, 1);
  valid[3] = 0;
  std::vector<double> t = random_brightness(k, rng);
  t[4 * config.channels + 2] = std::numeric_limits<double>::quiet_NaN();
  Outputs out(config.antennas);
  ASSERT_EQ(run(corrector, t, valid, out), CorrectorStatus::kOk);
  const double rad_per_mm =
      detail::corrector_phase_rad_per_mm(config.obs_freq_ghz, config.phase_per_path);
  const std::span<const double> all_t(t);
  for (std::size_t a = 0; a < config.antennas; ++a) {
    const std::size_t row = a * config.channels;
    const detail::AntennaPathModel model{
        std::span<const double>(k.weight_mm_per_k).subspan(row, config.channels),
        std::span<const double>(k.reference_brightness_k).subspan(row, config.channels),
        k.reference_path_mm[a], k.scale[a], k.usable[a] != 0};
    const detail::AntennaCorrection r =
        detail::correct_antenna(all_t.subspan(row, config.channels), valid[a] != 0, model,
                                config.max_brightness_k, rad_per_mm);
    EXPECT_EQ(std::memcmp(&r.path_mm, &out.path_mm[a], sizeof(double)), 0) << "antenna " << a;
    EXPECT_EQ(std::memcmp(&r.phase_correction_rad, &out.phase_correction_rad[a], sizeof(double)), 0)
        << "antenna " << a;
    EXPECT_EQ(r.flags, out.flags[a]) << "antenna " << a;
  }
  EXPECT_EQ(out.flags[3], kCorrectorNoData);
  EXPECT_EQ(out.flags[4], kCorrectorBadBrightness);
}

// ---------------------------------------------------------------------------------------------
// Flags

TEST(StreamingCorrector, SickRadiometerFlagsOnlyItsAntenna) {
  std::mt19937_64 rng(11);
  const CorrectorConfig config = make_config(10, 4);
  const std::size_t channels = config.channels;
  const CorrectorCoefficients clean = random_coefficients(config, rng);
  const std::vector<double> clean_t = random_brightness(clean, rng);
  const std::vector<std::uint8_t> all_valid(config.antennas, 1);
  Outputs expected(config.antennas);
  ASSERT_EQ(run(StreamingCorrector(config, clean), clean_t, all_valid, expected),
            CorrectorStatus::kOk);

  CorrectorCoefficients k = clean;
  std::vector<double> t = clean_t;
  std::vector<std::uint8_t> valid = all_valid;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  t[1 * channels + 2] = nan;                  // 1: dead channel
  valid[2] = 0;                               // 2: sample marked invalid
  k.usable[3] = 0;                            // 3: no model in this window
  k.weight_mm_per_k[3 * channels + 1] = nan;  //    (its values may be junk)
  k.reference_path_mm[3] = nan;
  t[4 * channels + 0] = -1.0;                                     // 4: negative brightness
  t[5 * channels + 3] = config.max_brightness_k + 1e-9;           // 5: implausibly hot
  t[6 * channels + 1] = std::numeric_limits<double>::infinity();  // 6
  valid[7] = 0;                                                   // 7: invalid and no model
  k.usable[7] = 0;
  valid[8] = 0;  // 8: invalid, junk brightness
  t[8 * channels + 0] = nan;
  t[9 * channels + 3] = config.max_brightness_k;  // 9: at the limit is still fine
  Outputs out(config.antennas);
  ASSERT_EQ(run(StreamingCorrector(config, k), t, valid, out), CorrectorStatus::kOk);

  const std::uint8_t want[] = {0,
                               kCorrectorBadBrightness,
                               kCorrectorNoData,
                               kCorrectorNoCoefficients,
                               kCorrectorBadBrightness,
                               kCorrectorBadBrightness,
                               kCorrectorBadBrightness,
                               kCorrectorNoData | kCorrectorNoCoefficients,
                               kCorrectorNoData,
                               0};
  for (std::size_t a = 0; a < config.antennas; ++a) {
    EXPECT_EQ(out.flags[a], want[a]) << "antenna " << a;
    if (want[a] != 0) {
      EXPECT_TRUE(std::isnan(out.path_mm[a])) << "antenna " << a;
      EXPECT_EQ(out.phase_correction_rad[a], 0.0) << "antenna " << a;
    } else if (a == 0) {  // untouched antenna: the same bits as with a clean array
      EXPECT_EQ(std::memcmp(&out.path_mm[a], &expected.path_mm[a], sizeof(double)), 0);
      EXPECT_EQ(std::memcmp(&out.phase_correction_rad[a], &expected.phase_correction_rad[a],
                            sizeof(double)),
                0);
    } else {
      EXPECT_TRUE(std::isfinite(out.path_mm[a]));
      EXPECT_NE(out.phase_correction_rad[a], 0.0);
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Sizes and validation

TEST(StreamingCorrector, WrongSpanSizesLeaveOutputsUntouched) {
  std::mt19937_64 rng(3);
  const CorrectorConfig config = make_config(6, 4);
  const CorrectorCoefficients k = random_coefficients(config, rng);
  const StreamingCorrector corrector(config, k);
  const std::size_t n = config.antennas;
  const std::vector<double> t = random_brightness(k, rng);
  const std::vector<std::uint8_t> valid(n, 1);

  for (int which = 0; which < 5; ++which) {
    for (const std::ptrdiff_t delta : {-1, 1}) {
      auto sized = [&](int field, std::size_t base) {
        return field == which ? static_cast<std::size_t>(static_cast<std::ptrdiff_t>(base) + delta)
                              : base;
      };
      std::vector<double> t_in(sized(0, t.size()), 150.0);
      std::vector<std::uint8_t> valid_in(sized(1, n), 1);
      std::vector<double> path(sized(2, n), -7.5);
      std::vector<double> phase(sized(3, n), -8.5);
      std::vector<std::uint8_t> flags(sized(4, n), 0xAB);
      const auto path_before = path;
      const auto phase_before = phase;
      const auto flags_before = flags;
      EXPECT_EQ(corrector.process(t_in, valid_in, path, phase, flags),
                CorrectorStatus::kBufferSizeMismatch)
          << "span " << which << " off by " << delta;
      EXPECT_EQ(path, path_before);
      EXPECT_EQ(phase, phase_before);
      EXPECT_EQ(flags, flags_before);
    }
  }
  // Control: the same buffers at the right sizes are processed.
  Outputs out(n);
  EXPECT_EQ(run(corrector, t, valid, out), CorrectorStatus::kOk);
}

TEST(StreamingCorrector, BadConfigNamesTheField) {
  std::mt19937_64 rng(5);
  const CorrectorConfig good = make_config(3, 2);
  const CorrectorCoefficients k = random_coefficients(good, rng);
  EXPECT_NO_THROW(StreamingCorrector(good, k));
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  auto expect_bad = [&](const std::function<void(CorrectorConfig&)>& mutate,
                        const std::string& needle) {
    CorrectorConfig c = good;
    mutate(c);
    expect_invalid([&] { c.validate(); }, needle);
    expect_invalid([&] { StreamingCorrector corrector(c, k); }, needle);
  };
  expect_bad([](CorrectorConfig& c) { c.antennas = 0; }, "antennas = 0");
  expect_bad([](CorrectorConfig& c) { c.channels = 0; }, "channels = 0");
  expect_bad([](CorrectorConfig& c) { c.obs_freq_ghz = 0.0; }, "obs_freq_ghz = 0");
  expect_bad([](CorrectorConfig& c) { c.obs_freq_ghz = -90.0; }, "obs_freq_ghz = -90");
  expect_bad([](CorrectorConfig& c) { c.obs_freq_ghz = 2000.5; }, "obs_freq_ghz = 2000.5");
  expect_bad([&](CorrectorConfig& c) { c.obs_freq_ghz = nan; }, "obs_freq_ghz = nan");
  expect_bad([](CorrectorConfig& c) { c.phase_per_path = 0.0; }, "phase_per_path = 0");
  expect_bad([&](CorrectorConfig& c) { c.phase_per_path = inf; }, "phase_per_path = inf");
  expect_bad([&](CorrectorConfig& c) { c.phase_per_path = nan; }, "phase_per_path = nan");
  expect_bad([](CorrectorConfig& c) { c.max_brightness_k = -3.0; }, "max_brightness_k = -3");
  expect_bad([&](CorrectorConfig& c) { c.max_brightness_k = nan; }, "max_brightness_k = nan");
  // The top of the frequency range is allowed.
  CorrectorConfig top = good;
  top.obs_freq_ghz = 2000.0;
  EXPECT_NO_THROW(top.validate());
}

TEST(StreamingCorrector, BadCoefficientsNameTheFieldAndPublishNothing) {
  std::mt19937_64 rng(13);
  const CorrectorConfig config = make_config(16, 4);
  const CorrectorCoefficients good = random_coefficients(config, rng);
  StreamingCorrector corrector(config, good);
  const std::vector<double> t = random_brightness(good, rng);
  const std::vector<std::uint8_t> valid(config.antennas, 1);
  Outputs before(config.antennas);
  ASSERT_EQ(run(corrector, t, valid, before), CorrectorStatus::kOk);

  const double nan = std::numeric_limits<double>::quiet_NaN();
  auto expect_bad = [&](const std::function<void(CorrectorCoefficients&)>& mutate,
                        const std::string& needle) {
    CorrectorCoefficients k = good;
    // Start from a different, valid set so that a partial publication would show.
    for (double& p : k.reference_path_mm) p += 100.0;
    mutate(k);
    expect_invalid([&] { corrector.update_coefficients(k); }, needle);
    expect_invalid([&] { StreamingCorrector fresh(config, k); }, needle);
    Outputs after(config.antennas);
    ASSERT_EQ(run(corrector, t, valid, after), CorrectorStatus::kOk);
    EXPECT_TRUE(after.bitwise_equal(before)) << "a rejected set changed the output: " << needle;
  };
  expect_bad([](CorrectorCoefficients& k) { k.weight_mm_per_k.pop_back(); },
             "weight_mm_per_k has 63 values, expected 64");
  expect_bad([](CorrectorCoefficients& k) { k.reference_brightness_k.push_back(1.0); },
             "reference_brightness_k has 65 values");
  expect_bad([](CorrectorCoefficients& k) { k.reference_path_mm.pop_back(); },
             "reference_path_mm has 15 values, expected 16");
  expect_bad([](CorrectorCoefficients& k) { k.scale.clear(); }, "scale has 0 values");
  expect_bad([](CorrectorCoefficients& k) { k.usable.push_back(1); }, "usable has 17 values");
  expect_bad([&](CorrectorCoefficients& k) { k.reference_brightness_k[37] = nan; },
             "reference_brightness_k[37] = nan");
  expect_bad([&](CorrectorCoefficients& k) { k.weight_mm_per_k[63] = -nan; },
             "weight_mm_per_k[63] = ");
  expect_bad(
      [](CorrectorCoefficients& k) {
        k.weight_mm_per_k[5] = std::numeric_limits<double>::infinity();
      },
      "weight_mm_per_k[5] = inf");
  expect_bad([&](CorrectorCoefficients& k) { k.reference_path_mm[2] = nan; },
             "reference_path_mm[2] = nan");
  expect_bad([](CorrectorCoefficients& k) { k.scale[4] = 0.0; }, "scale[4] = 0");
  expect_bad([](CorrectorCoefficients& k) { k.scale[4] = -1.1; }, "scale[4] = -1.1");
  expect_bad([](CorrectorCoefficients& k) { k.usable[9] = 2; }, "usable[9] = 2");

  // Junk in an antenna without a model is accepted, and the update takes effect.
  CorrectorCoefficients k = good;
  k.usable[6] = 0;
  k.weight_mm_per_k[6 * config.channels] = nan;
  k.reference_brightness_k[6 * config.channels + 3] = nan;
  k.reference_path_mm[6] = nan;
  k.scale[6] = -1.0;
  ASSERT_NO_THROW(corrector.update_coefficients(k));
  Outputs after(config.antennas);
  ASSERT_EQ(run(corrector, t, valid, after), CorrectorStatus::kOk);
  EXPECT_EQ(after.flags[6], kCorrectorNoCoefficients);
  EXPECT_EQ(after.flags[5], 0);
}

TEST(StreamingCorrector, UpdatedCoefficientsTakeEffect) {
  std::mt19937_64 rng(17);
  const CorrectorConfig config = make_config(12, 4);
  const CorrectorCoefficients a = random_coefficients(config, rng);
  const CorrectorCoefficients b = random_coefficients(config, rng);
  const std::vector<double> t = random_brightness(a, rng);
  const std::vector<std::uint8_t> valid(config.antennas, 1);
  Outputs want_a(config.antennas), want_b(config.antennas), got(config.antennas);
  ASSERT_EQ(run(StreamingCorrector(config, a), t, valid, want_a), CorrectorStatus::kOk);
  ASSERT_EQ(run(StreamingCorrector(config, b), t, valid, want_b), CorrectorStatus::kOk);
  ASSERT_FALSE(want_a.bitwise_equal(want_b));

  StreamingCorrector corrector(config, a);
  EXPECT_EQ(corrector.config().antennas, config.antennas);
  EXPECT_EQ(corrector.config().obs_freq_ghz, config.obs_freq_ghz);
  // Several rounds so that both buffers are written and published more than once.
  for (int round = 0; round < 5; ++round) {
    corrector.update_coefficients(b);
    ASSERT_EQ(run(corrector, t, valid, got), CorrectorStatus::kOk);
    EXPECT_TRUE(got.bitwise_equal(want_b)) << "round " << round;
    corrector.update_coefficients(a);
    ASSERT_EQ(run(corrector, t, valid, got), CorrectorStatus::kOk);
    EXPECT_TRUE(got.bitwise_equal(want_a)) << "round " << round;
  }
}

// ---------------------------------------------------------------------------------------------
// Real-time behaviour

// Two coefficient sets whose outputs differ for every antenna: every reference path and
// weight differs, and antenna 10 has a model only in A.
struct TwoSets {
  CorrectorConfig config = make_config(64, 4);
  CorrectorCoefficients a, b;
  std::vector<std::vector<double>> inputs;
  std::vector<std::uint8_t> valid;
  std::vector<Outputs> want_a, want_b;  // per input

  TwoSets() : valid(config.antennas, 1) {
    std::mt19937_64 rng(29);
    a = random_coefficients(config, rng);
    b = random_coefficients(config, rng);
    for (std::size_t i = 0; i < b.reference_path_mm.size(); ++i) b.reference_path_mm[i] += 250.0;
    b.usable[10] = 0;
    for (int i = 0; i < 4; ++i) inputs.push_back(random_brightness(a, rng));
    const StreamingCorrector ca(config, a), cb(config, b);
    for (const auto& t : inputs) {
      want_a.emplace_back(config.antennas);
      want_b.emplace_back(config.antennas);
      run(ca, t, valid, want_a.back());
      run(cb, t, valid, want_b.back());
    }
  }
};

TEST(StreamingCorrector, HeapCounterSeesAllocations) {
  // Guards the tests below: the replacement functions are really in use.
  g_heap_calls.store(0);
  {
    CountHeapOnThisThread count;
    ::operator delete(::operator new(32));
  }
  ::operator delete(::operator new(32));  // not counted: switched off again
  EXPECT_EQ(g_heap_calls.load(), 2u);
}

TEST(StreamingCorrector, ProcessAllocatesNothing) {
  std::mt19937_64 rng(19);
  const CorrectorConfig config = make_config(64, 4);
  const CorrectorCoefficients k = random_coefficients(config, rng);
  const StreamingCorrector corrector(config, k);
  std::vector<double> t = random_brightness(k, rng);
  t[5] = std::numeric_limits<double>::quiet_NaN();  // exercise the flagging path too
  std::vector<std::uint8_t> valid(config.antennas, 1);
  valid[9] = 0;
  Outputs out(config.antennas);
  std::vector<double> short_t(3);
  std::size_t ok = 0, mismatched = 0;
  g_heap_calls.store(0);
  {
    CountHeapOnThisThread count;
    for (int i = 0; i < 10000; ++i) {
      t[0] = 100.0 + 0.001 * i;
      ok += run(corrector, t, valid, out) == CorrectorStatus::kOk;
      mismatched += run(corrector, short_t, valid, out) == CorrectorStatus::kBufferSizeMismatch;
    }
  }
  EXPECT_EQ(g_heap_calls.load(), 0u);
  EXPECT_EQ(ok, 10000u);
  EXPECT_EQ(mismatched, 10000u);
}

// Fixed work, no clock, for the thread tests: the writer makes exactly `updates` coefficient
// updates and each reader exactly `updates * kCallsPerUpdate` calls, in blocks k = 0, 1, ...
// A reader starting block k waits until the writer has made k updates; the writer makes update
// k + 1 only once every reader is half-way through block k. So the first half of block k
// always runs on the coefficients of update k (block 0 on the initial ones; the sets alternate
// from block to block, so every reader sees both), and update k + 1 lands among the
// second-half calls, concurrently with them. The amount
// of work is fixed however the threads are scheduled (under load, sanitizers or a debugger).
constexpr std::size_t kCallsPerUpdate = 50;

class Lockstep {
 public:
  Lockstep(std::size_t updates, int readers) : updates_(updates), reader_calls_(readers) {
    for (auto& c : reader_calls_) c.store(0);
  }
  std::size_t calls_per_reader() const { return updates_ * kCallsPerUpdate; }
  std::size_t updates_made() const { return made_.load(); }
  // Writer: before update j (1-based), wait until every reader is half-way through block j - 1.
  void before_update(std::size_t j) const {
    const std::size_t need = (j - 1) * kCallsPerUpdate + kCallsPerUpdate / 2;
    for (const auto& c : reader_calls_)
      while (c.load() < need) std::this_thread::yield();
  }
  void after_update() { made_.fetch_add(1); }
  // Reader r before its call number `call`.
  void before_call(int r, std::size_t call) {
    reader_calls_[static_cast<std::size_t>(r)].store(call);
    if (call % kCallsPerUpdate == 0)
      while (made_.load() < call / kCallsPerUpdate) std::this_thread::yield();
  }
  void reader_done(int r) {
    reader_calls_[static_cast<std::size_t>(r)].store(std::numeric_limits<std::size_t>::max());
  }

 private:
  std::size_t updates_;
  std::vector<std::atomic<std::size_t>> reader_calls_;
  std::atomic<std::size_t> made_{0};
};

TEST(StreamingCorrector, NothingAllocatesWhileUpdating) {
  const TwoSets sets;
  StreamingCorrector corrector(sets.config, sets.a);
  Outputs out(sets.config.antennas);
  Lockstep lockstep(200, 1);
  std::atomic<bool> writer_done{false};
  g_heap_calls.store(0);
  std::thread writer([&] {
    {
      CountHeapOnThisThread count;
      for (std::size_t j = 1; j <= 200; ++j) {
        lockstep.before_update(j);
        corrector.update_coefficients(j % 2 == 1 ? sets.b : sets.a);
        lockstep.after_update();
      }
    }
    writer_done.store(true);
  });

  std::size_t ok = 0;
  {
    CountHeapOnThisThread count;
    for (std::size_t call = 0; call < lockstep.calls_per_reader(); ++call) {
      lockstep.before_call(0, call);
      ok += run(corrector, sets.inputs[call % 4], sets.valid, out) == CorrectorStatus::kOk;
    }
    lockstep.reader_done(0);
  }
  while (!writer_done.load()) std::this_thread::yield();  // its counts are in now
  const std::size_t heap_calls = g_heap_calls.load();
  writer.join();
  EXPECT_EQ(heap_calls, 0u) << "over " << lockstep.calls_per_reader() << " process() and "
                            << lockstep.updates_made() << " update_coefficients() calls";
  EXPECT_EQ(lockstep.updates_made(), 200u);
  EXPECT_EQ(ok, lockstep.calls_per_reader());
}

TEST(StreamingCorrector, ConcurrentUpdatesNeverTear) {
  const TwoSets sets;
  for (std::size_t i = 0; i < sets.inputs.size(); ++i) {
    for (std::size_t a = 0; a < sets.config.antennas; ++a) {
      ASSERT_NE(sets.want_a[i].path_mm[a], sets.want_b[i].path_mm[a]) << "antenna " << a;
    }
  }
  StreamingCorrector corrector(sets.config, sets.a);

  constexpr int kReaders = 2;
  constexpr std::size_t kUpdates = 1000;  // 50000 calls per reader
  struct ReaderResult {
    std::size_t calls = 0, saw_a = 0, saw_b = 0, torn = 0, bad_status = 0;
  };
  std::vector<ReaderResult> results(kReaders);
  Lockstep lockstep(kUpdates, kReaders);

  std::thread writer([&] {
    for (std::size_t j = 1; j <= kUpdates; ++j) {
      lockstep.before_update(j);
      corrector.update_coefficients(j % 2 == 1 ? sets.b : sets.a);
      lockstep.after_update();
    }
  });
  std::vector<std::thread> readers;
  for (int r = 0; r < kReaders; ++r) {
    readers.emplace_back([&, r] {
      ReaderResult& res = results[static_cast<std::size_t>(r)];
      Outputs out(sets.config.antennas);
      for (std::size_t call = 0; call < lockstep.calls_per_reader(); ++call) {
        lockstep.before_call(r, call);
        const std::size_t input = (call + static_cast<std::size_t>(r)) % sets.inputs.size();
        if (run(corrector, sets.inputs[input], sets.valid, out) != CorrectorStatus::kOk) {
          ++res.bad_status;
        } else if (out.bitwise_equal(sets.want_a[input])) {
          ++res.saw_a;
        } else if (out.bitwise_equal(sets.want_b[input])) {
          ++res.saw_b;
        } else {
          ++res.torn;
        }
        ++res.calls;
      }
      lockstep.reader_done(r);
    });
  }
  for (auto& t : readers) t.join();
  writer.join();

  EXPECT_EQ(lockstep.updates_made(), kUpdates);
  for (int r = 0; r < kReaders; ++r) {
    const ReaderResult& res = results[static_cast<std::size_t>(r)];
    EXPECT_EQ(res.torn, 0u) << "reader " << r << " saw " << res.torn << " mixed outputs in "
                            << res.calls << " calls";
    EXPECT_EQ(res.bad_status, 0u) << "reader " << r;
    EXPECT_EQ(res.calls, lockstep.calls_per_reader()) << "reader " << r;
    // Updates alternate the sets between blocks of calls: both are seen.
    EXPECT_GT(res.saw_a, 0u) << "reader " << r;
    EXPECT_GT(res.saw_b, 0u) << "reader " << r;
  }
}

}  // namespace
}  // namespace wvr
