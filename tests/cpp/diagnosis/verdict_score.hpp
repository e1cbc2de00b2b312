#pragma once
// Scores a night's diagnosis against the simulator's truth episodes: precision and recall of
// the array verdict per class (corrected, cloud, dry turbulence) over the windows that lie
// wholly inside or outside every episode, and of antenna flags ("radiometer fault") over the
// (antenna, window) pairs that lie wholly inside or outside that antenna's fault episodes.

#include <map>
#include <ostream>
#include <string>
#include <vector>

#include "wvr/diagnosis.hpp"
#include "wvr/night.hpp"

namespace wvr::test {

struct ClassScore {
  int actual = 0, predicted = 0, hits = 0;
  double precision() const { return predicted ? static_cast<double>(hits) / predicted : 1.0; }
  double recall() const { return actual ? static_cast<double>(hits) / actual : 1.0; }
};

using VerdictScores = std::map<std::string, ClassScore>;

// `misses`, when given, receives one line per misjudged window or antenna.
VerdictScores score_verdicts(const Night& night,
                             const NightDiagnosis& diagnosis,
                             std::vector<std::string>* misses = nullptr);

void print_scores(std::ostream& out, const std::string& title, const VerdictScores& scores);

}  // namespace wvr::test
