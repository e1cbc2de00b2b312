#include "archive/night_correction_plan.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>

#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/night_site.hpp"

namespace wvr::archive {
namespace {

// MJD seconds of "YYYY-MM-DDThh:mm:ssZ".
double mjd_seconds_of_iso(const std::string& iso) {
  int y = 0, mo = 0, d = 0, h = 0, mi = 0, s = 0;
  if (std::sscanf(iso.c_str(), "%d-%d-%dT%d:%d:%dZ", &y, &mo, &d, &h, &mi, &s) != 6)
    throw InvalidInput("time_epoch_utc = '" + iso + "' is not YYYY-MM-DDThh:mm:ssZ");
  using namespace std::chrono;
  const sys_days date{year{y} / month{static_cast<unsigned>(mo)} / static_cast<unsigned>(d)};
  const long long mjd = (date - sys_days{year{1858} / November / 17}).count();
  return static_cast<double>(mjd) * 86400.0 + h * 3600.0 + mi * 60.0 + s;
}

const ResultDataset& dataset(const ResultGroup& g, const std::string& name, std::size_t size) {
  const ResultDataset* d = g.find(name);
  if (d == nullptr || d->element_count() != size)
    throw InvalidInput("night: /results/correction/" + name + " is missing or has the wrong shape");
  return *d;
}

template <class T>
std::vector<double> as_doubles(const ResultDataset& d) {
  const auto& v = std::get<std::vector<T>>(d.values);
  return {v.begin(), v.end()};
}

std::vector<double> doubles_of(const ResultDataset& d) {
  if (std::holds_alternative<std::vector<double>>(d.values)) return as_doubles<double>(d);
  if (std::holds_alternative<std::vector<float>>(d.values)) return as_doubles<float>(d);
  if (std::holds_alternative<std::vector<std::uint8_t>>(d.values))
    return as_doubles<std::uint8_t>(d);
  if (std::holds_alternative<std::vector<std::int32_t>>(d.values))
    return as_doubles<std::int32_t>(d);
  return as_doubles<std::int64_t>(d);
}

}  // namespace

CorrectionPlan correction_plan_of(const Night& night, const std::optional<SiteConfig>& site) {
  const ResultGroup* correction = night.find_result("correction");
  if (correction == nullptr)
    throw InvalidInput("night has no /results/correction: run the correction before exporting");
  const std::size_t na = night.antenna_count();
  const ResultDataset* time_dataset = correction->find("time_s");
  if (time_dataset == nullptr) throw InvalidInput("night: /results/correction/time_s is missing");
  const std::vector<double> time_s = doubles_of(*time_dataset);
  const std::size_t nt = time_s.size();
  const std::vector<double> phase =
      doubles_of(dataset(*correction, "phase_correction_rad", na * nt));
  const std::vector<double> flags = doubles_of(dataset(*correction, "flags", na * nt));
  const auto freq_attribute = correction->attributes.find("obs_freq_ghz");
  if (freq_attribute == correction->attributes.end())
    throw InvalidInput("night: /results/correction has no obs_freq_ghz attribute");

  CorrectionPlan plan;
  plan.obs_freq_ghz = std::stod(freq_attribute->second);
  const ResolvedSite resolved = resolve_night_site(night, site, "given site");
  plan.site_description = resolved.description;
  plan.night_epoch_utc = night.time_epoch_utc;
  const PhasePerPath phase_per_path = site_phase_per_path(resolved.site.parameters);
  const double reference = plan.obs_freq_ghz * phase_per_path.factor(plan.obs_freq_ghz);
  plan.phase_scale = [phase_per_path, reference](double freq_ghz) {
    return freq_ghz * phase_per_path.factor(freq_ghz) / reference;
  };
  const double epoch_mjd_s = mjd_seconds_of_iso(night.time_epoch_utc);
  for (double t : time_s) plan.time_mjd_s.push_back(epoch_mjd_s + t);
  plan.phase_rad = phase;
  plan.usable.resize(na * nt);
  for (std::size_t i = 0; i < na * nt; ++i)
    plan.usable[i] = flags[i] == 0.0 && std::isfinite(phase[i]);
  return plan;
}

}  // namespace wvr::archive
