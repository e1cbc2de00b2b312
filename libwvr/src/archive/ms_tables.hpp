#pragma once
// Small helpers over casacore tables shared by the MeasurementSet reader and writer: opening
// without ever writing the input, checked column access, and errors as InvalidInput.

#include <casacore/tables/Tables/Table.h>

#include <filesystem>
#include <string>

namespace wvr::archive {

// Opens a table read-only without taking locks, so that nothing in the input's directory is
// ever written (casacore otherwise records lock state in table.lock). Throws InvalidInput
// naming the path when it is not a readable table.
casacore::Table open_table_read_only(const std::filesystem::path& path);

// The subtable `name` of a MeasurementSet (read-only, unlocked); throws InvalidInput naming
// the MS and subtable when it is missing or unreadable.
casacore::Table open_subtable(const std::filesystem::path& ms, const std::string& name);

// Throws InvalidInput "<table>: column <name> is missing" unless the column exists.
void require_column(const casacore::Table& table,
                    const std::string& table_label,
                    const std::string& name);

// Appends a row to a HISTORY table in the MeasurementSet layout (TIME, OBSERVATION_ID, MESSAGE,
// PRIORITY, ORIGIN, OBJECT_ID, APPLICATION, CLI_COMMAND, APP_PARAMS): origin libwvr.
void append_history(const std::filesystem::path& history_table,
                    const std::string& message,
                    double time_mjd_s,
                    const std::string& application);

// The unit of a column from its QuantumUnits keyword ("" when absent).
std::string column_unit(const casacore::Table& table, const std::string& column);

}  // namespace wvr::archive
