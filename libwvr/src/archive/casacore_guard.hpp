#pragma once
// casacore's headers (3.5) do not compile as C++20, so the files that include them are built as
// C++17 and the rest of the component reaches them through casacore-free headers like this one.

#include <functional>
#include <string>

namespace wvr::archive {

// Runs `body` with casacore's log limited to errors (it reports missing Earth-orientation
// tables as warnings on stderr) and turns casacore exceptions into InvalidInput prefixed with
// `label` (the table being read or written).
void with_casacore_errors(const std::string& label, const std::function<void()>& body);

}  // namespace wvr::archive
