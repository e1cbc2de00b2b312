// The /site record of a night file (schema version 2): the site model as attributes of one
// group, so that a night carries the atmosphere shape it was made or recorded with.

#include "night/night_file_site.hpp"

#include "night/night_file_h5.hpp"
#include "wvr/error.hpp"

namespace wvr::detail {
namespace {

constexpr const char* kGroup = "/site";

// Optional parameters are attributes that are present or absent.
struct OptionalField {
  const char* name;
  std::optional<double> SiteParameters::*member;
};
constexpr OptionalField kOptionalFields[] = {
    {"pwv_mm", &SiteParameters::pwv_mm},
    {"surface_relative_humidity_pct", &SiteParameters::surface_relative_humidity_pct},
};

struct RequiredField {
  const char* name;
  double SiteParameters::*member;
};
constexpr RequiredField kRequiredFields[] = {
    {"altitude_m", &SiteParameters::altitude_m},
    {"surface_temperature_k", &SiteParameters::surface_temperature_k},
    {"surface_pressure_hpa", &SiteParameters::surface_pressure_hpa},
    {"lapse_rate_k_per_km", &SiteParameters::lapse_rate_k_per_km},
    {"tropopause_m", &SiteParameters::tropopause_m},
    {"water_scale_height_m", &SiteParameters::water_scale_height_m},
};

struct InversionField {
  const char* name;
  double Inversion::*member;
};
constexpr InversionField kInversionFields[] = {
    {"inversion_base_above_ground_m", &Inversion::base_above_ground_m},
    {"inversion_depth_m", &Inversion::depth_m},
    {"inversion_temperature_jump_k", &Inversion::temperature_jump_k},
};

}  // namespace

void write_site_group(const h5::Writer& writer, const Night& night) {
  if (!night.site) return;
  const NightSite& record = *night.site;
  const SiteParameters& p = record.site.parameters;
  h5::Id group = writer.create_group(writer.file(), kGroup, false);
  writer.string_attribute(group.get(), kGroup, "name", record.site.name);
  writer.string_attribute(group.get(), kGroup, "provenance", record.provenance);
  writer.double_attribute(group.get(), kGroup, "latitude_deg", record.site.latitude_deg);
  for (const RequiredField& f : kRequiredFields)
    writer.double_attribute(group.get(), kGroup, f.name, p.*(f.member));
  for (const OptionalField& f : kOptionalFields)
    if (const std::optional<double>& v = p.*(f.member)) {
      writer.double_attribute(group.get(), kGroup, f.name, *v);
    }
  if (p.inversion)
    for (const InversionField& f : kInversionFields)
      writer.double_attribute(group.get(), kGroup, f.name, (*p.inversion).*(f.member));
}

void read_site_group(const h5::Reader& reader, Night& night) {
  if (!reader.exists(kGroup)) return;
  h5::Id group = reader.open_group(kGroup);
  const auto number = [&](const char* name) {
    return reader.double_attribute(group.get(), kGroup, name);
  };
  NightSite record;
  record.site.name = reader.string_attribute(group.get(), kGroup, "name");
  record.provenance = reader.string_attribute(group.get(), kGroup, "provenance");
  record.site.latitude_deg = number("latitude_deg");
  SiteParameters& p = record.site.parameters;
  for (const RequiredField& f : kRequiredFields) p.*(f.member) = number(f.name);
  for (const OptionalField& f : kOptionalFields)
    if (reader.has_attribute(group.get(), f.name)) p.*(f.member) = number(f.name);
  std::size_t inversion_fields = 0;
  for (const InversionField& f : kInversionFields)
    inversion_fields += reader.has_attribute(group.get(), f.name) ? 1 : 0;
  if (inversion_fields == std::size(kInversionFields)) {
    Inversion inversion;
    for (const InversionField& f : kInversionFields) inversion.*(f.member) = number(f.name);
    p.inversion = inversion;
  } else if (inversion_fields != 0) {
    reader.fail(kGroup, "has only some of the inversion_* attributes (all three or none)");
  }
  night.site = std::move(record);
}

}  // namespace wvr::detail
