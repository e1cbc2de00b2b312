#include "wvr/streaming_corrector.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <memory>
#include <mutex>
#include <numbers>
#include <sstream>
#include <string>
#include <thread>

#include "correction/streaming_corrector_kernel.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {

// ---------------------------------------------------------------------------------------------
// Arithmetic (one compiled copy; see streaming_corrector_kernel.hpp)

namespace detail {

double corrector_phase_rad_per_mm(double obs_freq_ghz, double phase_per_path) noexcept {
  const double freq_hz = obs_freq_ghz * 1e9;
  const double rad_per_m = 2.0 * std::numbers::pi * freq_hz / constants::speed_of_light_m_per_s;
  return -rad_per_m * phase_per_path * 1e-3;
}

// noinline keeps a single copy of the arithmetic even when process() sits in the same
// translation unit, so offline callers and process() cannot end up with differently optimised
// (e.g. differently contracted) versions.
[[gnu::noinline]] AntennaCorrection correct_antenna(std::span<const double> brightness_k,
                                                    bool valid,
                                                    const AntennaPathModel& model,
                                                    double max_brightness_k,
                                                    double phase_rad_per_mm) noexcept {
  std::uint8_t flags = 0;
  if (!valid) {
    flags |= kCorrectorNoData;
  } else {
    for (const double t : brightness_k) {
      // Written as a positive range test so that NaN fails it as well.
      if (!(t >= 0.0 && t <= max_brightness_k)) {
        flags |= kCorrectorBadBrightness;
        break;
      }
    }
  }
  if (!model.usable) flags |= kCorrectorNoCoefficients;
  if (flags != 0) return {std::numeric_limits<double>::quiet_NaN(), 0.0, flags};

  double sum_mm = 0.0;
  for (std::size_t c = 0; c < brightness_k.size(); ++c) {
    sum_mm += model.weight_mm_per_k[c] * (brightness_k[c] - model.reference_brightness_k[c]);
  }
  const double path_mm = model.reference_path_mm + sum_mm;
  return {path_mm, (phase_rad_per_mm * model.scale) * path_mm, 0};
}

}  // namespace detail

// ---------------------------------------------------------------------------------------------
// Validation. Nothing here allocates unless it is about to throw, so a successful
// update_coefficients() allocates nothing.

namespace {

std::string element(const char* field, std::size_t index) {
  return std::string(field) + "[" + std::to_string(index) + "]";
}

void check_size(const char* field, std::size_t size, std::size_t expected, const char* shape) {
  if (size == expected) return;
  std::ostringstream out;
  out << field << " has " << size << " values, expected " << expected << " (" << shape << ")";
  throw InvalidInput(out.str());
}

void check_finite_row(const char* field,
                      const std::vector<double>& values,
                      std::size_t antenna,
                      std::size_t channels) {
  for (std::size_t c = 0; c < channels; ++c) {
    const std::size_t i = antenna * channels + c;
    if (std::isfinite(values[i])) continue;
    throw InvalidInput(describe_value(element(field, i), values[i]) + " is not finite (antenna " +
                       std::to_string(antenna) + ", channel " + std::to_string(c) + ")");
  }
}

void validate_coefficients(const CorrectorConfig& config, const CorrectorCoefficients& k) {
  const std::size_t antennas = config.antennas;
  const std::size_t channels = config.channels;
  check_size("weight_mm_per_k", k.weight_mm_per_k.size(), antennas * channels,
             "antennas x channels");
  check_size("reference_brightness_k", k.reference_brightness_k.size(), antennas * channels,
             "antennas x channels");
  check_size("reference_path_mm", k.reference_path_mm.size(), antennas, "antennas");
  check_size("scale", k.scale.size(), antennas, "antennas");
  check_size("usable", k.usable.size(), antennas, "antennas");
  for (std::size_t a = 0; a < antennas; ++a) {
    if (k.usable[a] > 1) {
      throw InvalidInput(element("usable", a) + " = " + std::to_string(k.usable[a]) +
                         " must be 0 or 1");
    }
    // An antenna without a model may carry anything (e.g. NaN from a failed window fit):
    // process() never reads its values.
    if (k.usable[a] == 0) continue;
    check_finite_row("weight_mm_per_k", k.weight_mm_per_k, a, channels);
    check_finite_row("reference_brightness_k", k.reference_brightness_k, a, channels);
    // Message strings only on failure: building them up front would allocate per antenna.
    if (!std::isfinite(k.reference_path_mm[a])) {
      require_finite(element("reference_path_mm", a), k.reference_path_mm[a]);
    }
    const double scale = k.scale[a];
    if (!std::isfinite(scale) || scale <= 0.0) {
      throw InvalidInput(describe_value(element("scale", a), scale) + " must be finite and > 0");
    }
  }
}

}  // namespace

void CorrectorConfig::validate() const {
  if (antennas < 1) throw InvalidInput("antennas = 0 must be at least 1");
  if (channels < 1) throw InvalidInput("channels = 0 must be at least 1");
  if (channels > std::numeric_limits<std::size_t>::max() / antennas) {
    throw InvalidInput("antennas = " + std::to_string(antennas) +
                       " x channels = " + std::to_string(channels) + " overflows the buffer size");
  }
  // The upper bound lies far above every band the library models; it catches a frequency
  // given in MHz or Hz instead of GHz.
  if (!(obs_freq_ghz > 0.0 && obs_freq_ghz <= 2000.0)) {
    throw InvalidInput(describe_value("obs_freq_ghz", obs_freq_ghz) + " is outside (0, 2000] GHz");
  }
  if (!std::isfinite(phase_per_path) || phase_per_path <= 0.0) {
    throw InvalidInput(describe_value("phase_per_path", phase_per_path) +
                       " must be finite and > 0");
  }
  if (!std::isfinite(max_brightness_k) || max_brightness_k <= 0.0) {
    throw InvalidInput(describe_value("max_brightness_k", max_brightness_k) +
                       " must be finite and > 0 K");
  }
}

// ---------------------------------------------------------------------------------------------
// Coefficient publication.
//
// Two preallocated coefficient slots; `published` names the one new process() calls use.
// Each slot counts the process() calls currently reading it. The writer fills the slot that
// is not published, after waiting until nobody reads it, then publishes it.
//
// Reader (process(), never blocks):
//   1. i = published                      (a guess)
//   2. ++readers[i]                        seq_cst
//   3. if published != i: --readers[i], retry from 1     (seq_cst load)
//   4. read slot i ... then --readers[i]   release
// Writer (update_coefficients(), serialised by a mutex):
//   a. t = the slot that is not published
//   b. wait until readers[t] == 0          seq_cst load
//   c. overwrite slot t
//   d. published = t                       seq_cst store
//
// Why it cannot tear: steps 2, 3, b and d are seq_cst, so they sit in one total order. If the
// writer's check (b) saw readers[t] == 0, a reader's increment (2) of t comes after (b) in that
// order, hence after the writer's previous publication, which moved `published` away from t.
// That reader's check (3) therefore sees either the other slot (and backs off without touching
// the data) or t from the writer's own store (d), which is a release that the acquiring load in
// (3) synchronises with, so the reader sees the complete new set. Conversely, a reader that
// passed (3) holds readers[t] > 0 until its release decrement (4); the writer's acquiring load
// in (b) that finally sees 0 synchronises with it, so the reader's last read of slot t happens
// before the writer's first write. With weaker orders on 2/3/b/d the increment and the check
// could be reordered (store-load), which is exactly the race the check exists to close.

struct StreamingCorrector::State {
  static constexpr std::size_t kSlots = 2;
  // Separate cache lines for counters that different threads hammer.
  static constexpr std::size_t kCacheLine = 64;

  struct Slot {
    alignas(kCacheLine) std::atomic<std::uint32_t> readers{0};
    std::vector<double> weight_mm_per_k;
    std::vector<double> reference_brightness_k;
    std::vector<double> reference_path_mm;
    std::vector<double> scale;
    std::vector<std::uint8_t> usable;

    void allocate(std::size_t antennas, std::size_t channels) {
      weight_mm_per_k.resize(antennas * channels);
      reference_brightness_k.resize(antennas * channels);
      reference_path_mm.resize(antennas);
      scale.resize(antennas);
      usable.resize(antennas);
    }
    // Sizes were validated; copying into the preallocated vectors allocates nothing.
    void assign(const CorrectorCoefficients& k) noexcept {
      std::copy(k.weight_mm_per_k.begin(), k.weight_mm_per_k.end(), weight_mm_per_k.begin());
      std::copy(k.reference_brightness_k.begin(), k.reference_brightness_k.end(),
                reference_brightness_k.begin());
      std::copy(k.reference_path_mm.begin(), k.reference_path_mm.end(), reference_path_mm.begin());
      std::copy(k.scale.begin(), k.scale.end(), scale.begin());
      std::copy(k.usable.begin(), k.usable.end(), usable.begin());
    }
  };

  CorrectorConfig config;
  double phase_rad_per_mm = 0.0;
  std::array<Slot, kSlots> slots;
  alignas(kCacheLine) std::atomic<std::uint32_t> published{0};
  std::mutex writer_mutex;  // only one update_coefficients() at a time

  static_assert(std::atomic<std::uint32_t>::is_always_lock_free,
                "process() must not fall back to a locking atomic");

  // Steps 1-3 above: the slot this reader may use until release_slot().
  std::uint32_t acquire_slot() noexcept {
    for (;;) {
      // Relaxed: only a guess; the seq_cst re-check below is what gives acquire semantics.
      const std::uint32_t i = published.load(std::memory_order_relaxed);
      slots[i].readers.fetch_add(1, std::memory_order_seq_cst);
      if (published.load(std::memory_order_seq_cst) == i) return i;
      // Lost a race with a publication; this call read nothing from slot i, so no ordering
      // is needed for the writer (and the decrement stays in the release sequence).
      slots[i].readers.fetch_sub(1, std::memory_order_relaxed);
    }
  }
  // Step 4: release so the reads of the slot happen before the writer overwrites it.
  void release_slot(std::uint32_t i) noexcept {
    slots[i].readers.fetch_sub(1, std::memory_order_release);
  }
};

StreamingCorrector::StreamingCorrector(const CorrectorConfig& config,
                                       const CorrectorCoefficients& initial) {
  config.validate();
  validate_coefficients(config, initial);
  auto state = std::make_unique<State>();
  state->config = config;
  state->phase_rad_per_mm =
      detail::corrector_phase_rad_per_mm(config.obs_freq_ghz, config.phase_per_path);
  for (State::Slot& slot : state->slots) slot.allocate(config.antennas, config.channels);
  state->slots[0].assign(initial);
  // Other threads can only reach the corrector after it has been handed to them, which
  // already orders these plain writes before their use.
  state->published.store(0, std::memory_order_relaxed);
  state_ = state.release();
}

StreamingCorrector::~StreamingCorrector() { delete state_; }

const CorrectorConfig& StreamingCorrector::config() const noexcept { return state_->config; }

void StreamingCorrector::update_coefficients(const CorrectorCoefficients& coefficients) {
  State& s = *state_;
  validate_coefficients(s.config, coefficients);
  const std::lock_guard<std::mutex> lock(s.writer_mutex);
  // Only writers store `published`, and they hold the mutex: relaxed reads our own last value.
  const std::uint32_t current = s.published.load(std::memory_order_relaxed);
  const std::uint32_t target = (current + 1) % State::kSlots;
  State::Slot& slot = s.slots[target];
  // Step b. Anyone still here picked the slot before the previous publication (or is backing
  // off after losing a race); each leaves within one process() call.
  while (slot.readers.load(std::memory_order_seq_cst) != 0) std::this_thread::yield();
  slot.assign(coefficients);
  s.published.store(target, std::memory_order_seq_cst);  // step d
}

CorrectorStatus StreamingCorrector::process(std::span<const double> brightness_k,
                                            std::span<const std::uint8_t> valid,
                                            std::span<double> path_mm,
                                            std::span<double> phase_correction_rad,
                                            std::span<std::uint8_t> flags) const noexcept {
  State& s = *state_;
  const std::size_t antennas = s.config.antennas;
  const std::size_t channels = s.config.channels;
  if (brightness_k.size() != antennas * channels || valid.size() != antennas ||
      path_mm.size() != antennas || phase_correction_rad.size() != antennas ||
      flags.size() != antennas) {
    return CorrectorStatus::kBufferSizeMismatch;
  }
  const std::uint32_t index = s.acquire_slot();
  const State::Slot& k = s.slots[index];
  for (std::size_t a = 0; a < antennas; ++a) {
    const std::size_t row = a * channels;
    const detail::AntennaPathModel model{
        std::span<const double>(k.weight_mm_per_k).subspan(row, channels),
        std::span<const double>(k.reference_brightness_k).subspan(row, channels),
        k.reference_path_mm[a], k.scale[a], k.usable[a] != 0};
    // valid[a] is read before flags[a] is written, so the two may share storage.
    const detail::AntennaCorrection r =
        detail::correct_antenna(brightness_k.subspan(row, channels), valid[a] != 0, model,
                                s.config.max_brightness_k, s.phase_rad_per_mm);
    path_mm[a] = r.path_mm;
    phase_correction_rad[a] = r.phase_correction_rad;
    flags[a] = r.flags;
  }
  s.release_slot(index);
  return CorrectorStatus::kOk;
}

}  // namespace wvr
