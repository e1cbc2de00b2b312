#pragma once
// Large nights spend much of their time in page faults: every array of a night is allocated,
// touched page by page (4 KiB each) and freed, stage after stage. glibc's malloc can put its
// large allocations on transparent huge pages (2 MiB) instead, with the tunable
// glibc.malloc.hugetlb=1 (glibc 2.35 and later; older versions ignore it). A tunable is read
// when the process starts, so skyphase re-executes itself once with it set. Measured on
// `skyphase process` of a 64-antenna, 8-hour night with every baseline (2-core development
// machine): 21.3-25.4 s without, 16.0-17.9 s with; peak memory 1.289 and 1.291 GB.

#include <optional>
#include <string>

namespace skyphase {

// The GLIBC_TUNABLES value that adds glibc.malloc.hugetlb=1 to `current` (null: unset), or
// nothing when `current` already sets that tunable (to any value: the user's choice stands).
std::optional<std::string> tunables_with_huge_page_malloc(const char* current);

// Whether this process runs with glibc.malloc.hugetlb=1.
bool huge_page_malloc_on();

// Re-executes the program (/proc/self/exe) with the tunable added, unless GLIBC_TUNABLES
// already sets it (glibc.malloc.hugetlb=0 keeps 4 KiB pages); returns, and the program runs
// on as started, when the exec fails.
void reexec_with_huge_page_malloc(char** argv);

}  // namespace skyphase
