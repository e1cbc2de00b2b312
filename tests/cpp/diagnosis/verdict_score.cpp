// Verdict precision and recall against the truth episodes (verdict_score.hpp).
#include "verdict_score.hpp"

namespace wvr::test {
namespace {

bool overlaps(const WindowDiagnosis& w, const TruthEpisode& e) {
  return w.start_s < e.stop_s && w.stop_s > e.start_s;
}
bool inside(const WindowDiagnosis& w, const TruthEpisode& e) {
  return w.start_s >= e.start_s && w.stop_s <= e.stop_s;
}
bool is_fault(const TruthEpisode& e) { return e.label.rfind("radiometer fault", 0) == 0; }

// The sky's truth label of a window, or "" when it straddles a sky episode's edge.
std::string sky_label(const Night& night, const WindowDiagnosis& w) {
  std::string label = "corrected";
  for (const TruthEpisode& e : night.truth->episodes) {
    if (is_fault(e) || !overlaps(w, e)) continue;
    if (!inside(w, e)) return "";
    if (e.label == "cloud") return "cloud";
    if (e.label == "dry turbulence") label = "dry turbulence";
  }
  return label;
}

}  // namespace

VerdictScores score_verdicts(const Night& night,
                             const NightDiagnosis& diagnosis,
                             std::vector<std::string>* misses) {
  auto miss = [&](const WindowDiagnosis& w, const std::string& what) {
    if (misses != nullptr)
      misses->push_back(std::to_string(static_cast<long>(w.start_s)) + " s: " + what + " (" +
                        w.reason + ")");
  };
  VerdictScores scores;
  for (const char* label : {"corrected", "cloud", "dry turbulence", "radiometer fault"})
    scores[label];
  for (const WindowDiagnosis& w : diagnosis.windows) {
    const std::string truth = sky_label(night, w);
    if (!truth.empty()) {
      const std::string verdict = to_string(w.verdict);
      ++scores[truth].actual;
      ++scores[verdict].predicted;
      scores[truth].hits += truth == verdict;
      if (truth != verdict) miss(w, "truth " + truth + ", verdict " + verdict);
    }
    for (std::size_t a = 0; a < night.antenna_count(); ++a) {
      bool faulty = false, edge = false;
      for (const TruthEpisode& e : night.truth->episodes) {
        if (!is_fault(e) || e.antenna != static_cast<int>(a) || !overlaps(w, e)) continue;
        (inside(w, e) ? faulty : edge) = true;
      }
      if (edge && !faulty) continue;
      const bool flagged = w.antenna_faults[a] != 0;
      ClassScore& s = scores["radiometer fault"];
      s.actual += faulty;
      s.predicted += flagged;
      s.hits += faulty && flagged;
      if (faulty != flagged)
        miss(w, "antenna " + std::to_string(a) + (faulty ? " faulty, not flagged" : " flagged"));
    }
  }
  return scores;
}

void print_scores(std::ostream& out, const std::string& title, const VerdictScores& scores) {
  for (const auto& [label, s] : scores) {
    out << title << ": " << label << ": truth " << s.actual << ", predicted " << s.predicted
        << ", precision " << s.precision() << ", recall " << s.recall() << "\n";
  }
}

}  // namespace wvr::test
