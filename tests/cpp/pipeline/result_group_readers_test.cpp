// Every result group the pipeline writes reads back into its type.
#include "wvr/result_group_readers.hpp"

#include <gtest/gtest.h>

#include "pipeline/small_night.hpp"
#include "wvr/error.hpp"
#include "wvr/night_processing.hpp"

namespace wvr {
namespace {

TEST(ResultGroupReaders, TheGroupsOfAProcessedNightReadBack) {
  const Night& night = small_night();
  const NightProcessingResult r = process_night(night, {});
  ASSERT_TRUE(r.corrections && r.diagnosis && r.calibration);
  const ResultGroup* correction = nullptr;
  const ResultGroup* diagnosis = nullptr;
  const ResultGroup* calibration = nullptr;
  for (const ResultGroup& g : r.result_groups) {
    if (g.stage == "correction") correction = &g;
    if (g.stage == "diagnosis") diagnosis = &g;
    if (g.stage == "calibration") calibration = &g;
  }
  ASSERT_TRUE(correction && diagnosis && calibration);

  const StoredCorrection c = correction_from_result_group(*correction, "test");
  EXPECT_EQ(c.corrections.phase_correction_rad, r.corrections->phase_correction_rad);
  EXPECT_EQ(c.corrections.flags, r.corrections->flags);
  EXPECT_EQ(c.corrections.antenna_scale, r.corrections->antenna_scale);
  EXPECT_NEAR(c.corrections.obs_freq_ghz, 345.0, 1e-6);
  EXPECT_NEAR(c.corrections.phase_per_path, r.corrections->phase_per_path, 1e-6);
  EXPECT_EQ(c.metrics.corrected_phase_rad, r.metrics->corrected_phase_rad);
  ASSERT_EQ(c.metrics.baselines.size(), r.metrics->baselines.size());
  for (std::size_t b = 0; b < c.metrics.baselines.size(); ++b) {
    EXPECT_EQ(c.metrics.baselines[b].antenna_b, r.metrics->baselines[b].antenna_b);
    EXPECT_EQ(c.metrics.baselines[b].rms_after_deg, r.metrics->baselines[b].rms_after_deg);
  }

  const NightDiagnosis d =
      diagnosis_from_result_group(*diagnosis, night.array.antenna_names, "test");
  ASSERT_EQ(d.windows.size(), r.diagnosis->windows.size());
  for (std::size_t w = 0; w < d.windows.size(); ++w) {
    EXPECT_EQ(d.windows[w].verdict, r.diagnosis->windows[w].verdict);
    EXPECT_EQ(d.windows[w].antenna_faults, r.diagnosis->windows[w].antenna_faults);
    EXPECT_EQ(d.windows[w].inherited, r.diagnosis->windows[w].inherited);
  }

  const CalibrationResult cal =
      calibration_from_result_group(*calibration, night.antenna_count(), "test");
  EXPECT_EQ(cal.scale, r.calibration->scale);
  EXPECT_EQ(cal.status, r.calibration->status);
  EXPECT_EQ(cal.antenna_scale, r.calibration->antenna_scale);
  EXPECT_EQ(cal.per_antenna_scale, r.calibration->per_antenna_scale);
  EXPECT_EQ(cal.antenna_scale_statistic, r.calibration->antenna_scale_statistic);
  EXPECT_EQ(cal.antenna_scale_threshold, r.calibration->antenna_scale_threshold);
  // A group written before the scaling was chosen per night: per-antenna when the antenna
  // scales differ.
  ResultGroup earlier = *calibration;
  std::erase_if(earlier.datasets, [](const ResultDataset& dataset) {
    return dataset.name == "per_antenna_scale" || dataset.name == "antenna_scale_statistic" ||
           dataset.name == "antenna_scale_threshold";
  });
  const CalibrationResult earlier_cal =
      calibration_from_result_group(earlier, night.antenna_count(), "test");
  EXPECT_TRUE(std::isnan(earlier_cal.antenna_scale_statistic));
  EXPECT_EQ(earlier_cal.per_antenna_scale,
            std::any_of(cal.antenna_scale.begin(), cal.antenna_scale.end(),
                        [&](double s) { return s != cal.scale; }));

  ResultGroup broken = *diagnosis;
  std::erase_if(broken.datasets,
                [](const ResultDataset& dataset) { return dataset.name == "antenna_faults"; });
  try {
    diagnosis_from_result_group(broken, night.array.antenna_names, "night.h5");
    ADD_FAILURE() << "a group without antenna_faults was read";
  } catch (const InvalidInput& e) {
    EXPECT_NE(std::string(e.what()).find("night.h5: /results/diagnosis/antenna_faults"),
              std::string::npos)
        << e.what();
  }
}

}  // namespace
}  // namespace wvr
