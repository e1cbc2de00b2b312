// Sky dips as CSV text: one sample per line, "time_s,antenna,elevation_deg," then one brightness
// column (K, RJ-equivalent) per radiometer channel, named by the channel. See libwvr/FORMAT.md.
#include <charconv>
#include <fstream>
#include <map>
#include <sstream>
#include <string>

#include "wvr/error.hpp"
#include "wvr/sky_dip.hpp"

namespace wvr {
namespace {

std::vector<std::string> split_fields(const std::string& line) {
  std::vector<std::string> fields;
  std::string field;
  std::istringstream in(line);
  while (std::getline(in, field, ',')) {
    const auto first = field.find_first_not_of(" \t\r");
    const auto last = field.find_last_not_of(" \t\r");
    fields.push_back(first == std::string::npos ? "" : field.substr(first, last - first + 1));
  }
  if (!line.empty() && line.back() == ',') fields.emplace_back();
  return fields;
}

double parse_number(const std::string& text, const std::string& where) {
  double value = 0.0;
  const char* end = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(text.data(), end, value);
  if (text.empty() || ec != std::errc() || ptr != end)
    throw InvalidInput(where + " = '" + text + "' is not a number");
  return value;
}

}  // namespace

std::vector<SkyDip> parse_sky_dip_csv(std::istream& in,
                                      const RadiometerConfig& radiometer,
                                      const std::string& source_name) {
  std::string line;
  int line_number = 0;
  std::vector<std::string> header;
  while (std::getline(in, line)) {
    ++line_number;
    if (line.empty() || line[0] == '#') continue;
    header = split_fields(line);
    break;
  }
  if (header.empty()) throw InvalidInput(source_name + ": no header line");
  auto column_of = [&](const std::string& name) -> std::size_t {
    for (std::size_t k = 0; k < header.size(); ++k)
      if (header[k] == name) return k;
    throw InvalidInput(source_name + ": header has no column '" + name + "'");
  };
  const std::size_t time_column = column_of("time_s");
  const std::size_t antenna_column = column_of("antenna");
  const std::size_t elevation_column = column_of("elevation_deg");
  std::vector<std::size_t> channel_columns;
  for (const RadiometerChannel& ch : radiometer.channels)
    channel_columns.push_back(column_of(ch.name));

  std::vector<SkyDip> dips;
  std::map<std::string, std::size_t> dip_of_antenna;
  while (std::getline(in, line)) {
    ++line_number;
    if (line.empty() || line == "\r" || line[0] == '#') continue;
    const std::vector<std::string> fields = split_fields(line);
    const std::string where = source_name + " line " + std::to_string(line_number);
    if (fields.size() != header.size())
      throw InvalidInput(where + " has " + std::to_string(fields.size()) +
                         " fields; the header has " + std::to_string(header.size()));
    const std::string& antenna = fields[antenna_column];
    if (antenna.empty()) throw InvalidInput(where + ": antenna is empty");
    auto [it, added] = dip_of_antenna.try_emplace(antenna, dips.size());
    if (added) dips.push_back(SkyDip{antenna, {}, {}, {}});
    SkyDip& dip = dips[it->second];
    dip.time_s.push_back(parse_number(fields[time_column], where + " time_s"));
    dip.elevation_deg.push_back(parse_number(fields[elevation_column], where + " elevation_deg"));
    std::vector<double> row;
    for (std::size_t c = 0; c < channel_columns.size(); ++c)
      row.push_back(
          parse_number(fields[channel_columns[c]], where + " " + radiometer.channels[c].name));
    dip.brightness_k.push_back(std::move(row));
  }
  if (dips.empty()) throw InvalidInput(source_name + ": no samples after the header");
  return dips;
}

std::vector<SkyDip> read_sky_dip_csv(const std::filesystem::path& path,
                                     const RadiometerConfig& radiometer) {
  std::ifstream in(path);
  if (!in) throw InvalidInput("dip file '" + path.string() + "' cannot be opened");
  return parse_sky_dip_csv(in, radiometer, path.string());
}

void write_sky_dip_csv(std::ostream& out,
                       const std::vector<SkyDip>& dips,
                       const RadiometerConfig& radiometer) {
  out << "time_s,antenna,elevation_deg";
  for (const RadiometerChannel& ch : radiometer.channels) out << "," << ch.name;
  out << "\n";
  char text[32];
  auto number = [&](double v) {
    const auto [ptr, ec] = std::to_chars(text, text + sizeof text, v);
    return std::string(text, ptr);
  };
  for (const SkyDip& dip : dips) {
    for (std::size_t i = 0; i < dip.elevation_deg.size(); ++i) {
      out << number(dip.time_s.empty() ? 0.0 : dip.time_s[i]) << "," << dip.antenna << ","
          << number(dip.elevation_deg[i]);
      for (double b : dip.brightness_k[i]) out << "," << number(b);
      out << "\n";
    }
  }
}

}  // namespace wvr
