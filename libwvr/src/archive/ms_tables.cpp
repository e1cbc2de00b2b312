#include "archive/ms_tables.hpp"

#include <casacore/casa/Arrays/Vector.h>
#include <casacore/casa/Exceptions/Error.h>
#include <casacore/casa/Logging/LogFilter.h>
#include <casacore/casa/Logging/LogSink.h>
#include <casacore/tables/Tables/ArrayColumn.h>
#include <casacore/tables/Tables/ScalarColumn.h>
#include <casacore/tables/Tables/TableColumn.h>
#include <casacore/tables/Tables/TableLock.h>
#include <casacore/tables/Tables/TableRecord.h>

#include "archive/casacore_guard.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {

casacore::Table open_table_read_only(const std::filesystem::path& path) {
  if (!casacore::Table::isReadable(path.string())) {
    throw InvalidInput(path.string() + ": not a readable casacore table");
  }
  try {
    return casacore::Table(path.string(), casacore::TableLock(casacore::TableLock::NoLocking),
                           casacore::Table::Old);
  } catch (const casacore::AipsError& e) {
    throw InvalidInput(path.string() + ": cannot open the table: " + std::string(e.getMesg()));
  }
}

casacore::Table open_subtable(const std::filesystem::path& ms, const std::string& name) {
  const std::filesystem::path path = ms / name;
  if (!casacore::Table::isReadable(path.string())) {
    throw InvalidInput(ms.string() + ": subtable " + name + " is missing or unreadable");
  }
  return open_table_read_only(path);
}

void require_column(const casacore::Table& table,
                    const std::string& table_label,
                    const std::string& name) {
  if (!table.tableDesc().isColumn(name)) {
    throw InvalidInput(table_label + ": column " + name + " is missing");
  }
}

std::string column_unit(const casacore::Table& table, const std::string& column) {
  const casacore::TableRecord& keywords = casacore::TableColumn(table, column).keywordSet();
  const casacore::Int field = keywords.fieldNumber("QuantumUnits");
  if (field < 0) return "";
  const casacore::Vector<casacore::String> units = keywords.asArrayString(field);
  return units.empty() ? "" : std::string(units[0]);
}

void append_history(const std::filesystem::path& history_table,
                    const std::string& message,
                    double time_mjd_s,
                    const std::string& application) {
  casacore::Table history(history_table.string(),
                          casacore::TableLock(casacore::TableLock::NoLocking),
                          casacore::Table::Update);
  const casacore::rownr_t row = history.nrow();
  history.addRow();
  casacore::ScalarColumn<double>(history, "TIME").put(row, time_mjd_s);
  casacore::ScalarColumn<int>(history, "OBSERVATION_ID").put(row, 0);
  casacore::ScalarColumn<casacore::String>(history, "MESSAGE").put(row, message);
  casacore::ScalarColumn<casacore::String>(history, "PRIORITY").put(row, "NORMAL");
  casacore::ScalarColumn<casacore::String>(history, "ORIGIN").put(row, "libwvr");
  casacore::ScalarColumn<int>(history, "OBJECT_ID").put(row, 0);
  casacore::ScalarColumn<casacore::String>(history, "APPLICATION").put(row, application);
  const casacore::Vector<casacore::String> none(1, "");
  casacore::ArrayColumn<casacore::String>(history, "CLI_COMMAND").put(row, none);
  casacore::ArrayColumn<casacore::String>(history, "APP_PARAMS").put(row, none);
  history.flush();
}

void with_casacore_errors(const std::string& label, const std::function<void()>& body) {
  casacore::LogSink::globalSink().filter(casacore::LogFilter(casacore::LogMessage::SEVERE));
  try {
    body();
  } catch (const casacore::AipsError& e) {
    throw InvalidInput(label + ": " + std::string(e.getMesg()));
  }
}

}  // namespace wvr::archive
