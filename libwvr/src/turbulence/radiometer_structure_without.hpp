#pragma once
// The radiometer structure function of one night with spans of samples left out, for the slab
// thickness' jackknife: every refit leaves out one contiguous time group. Blanking a group and
// recomputing would pass over every antenna pair's samples once per refit (64 antennas x 8 h:
// 2,016 pairs x 28,800 samples, 13 times); here each pair's samples are summed once into cells
// (the windows cut also at every group's ends) and each refit adds up the cells it keeps.

#include <cstddef>
#include <span>
#include <vector>

#include "wvr/spatial_structure.hpp"

namespace wvr::detail {

// Sample indices [first, last) of a night's paths; first == last leaves nothing out.
struct SampleSpan {
  std::size_t first = 0, last = 0;
};

// radiometer_structure_function(night, paths, options) once per entry of `left_out`, each as
// if that entry's samples were NaN (they count as skipped). Entry 0 of an empty span gives
// exactly radiometer_structure_function's result; with a span, a window cut by it is summed
// from its parts (Chan, Golub and LeVeque 1979, pairwise update of the mean and the sum of
// squared deviations), equal to the direct sum within rounding. Throws as
// radiometer_structure_function does, and InvalidInput for a span outside the samples.
std::vector<SpatialStructureResult> radiometer_structure_without(
    const Night& night,
    const AntennaPaths& paths,
    const SpatialStructureOptions& options,
    std::span<const SampleSpan> left_out);

}  // namespace wvr::detail
