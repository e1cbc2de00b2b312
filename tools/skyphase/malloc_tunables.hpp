#pragma once
// Large nights spend much of their time in page faults: every array of a night is allocated,
// touched page by page and freed, stage after stage, and every fresh page is cleared by the
// kernel first. Two settings of glibc's malloc help, each a tunable read when the process
// starts, so skyphase re-executes itself once with them set:
// - glibc.malloc.hugetlb=1 (glibc 2.35 and later; older versions ignore it) puts large
//   allocations on transparent huge pages (2 MiB). Measured on `skyphase process` of a
//   64-antenna, 8-hour night with every baseline (2-core development machine): 21.3-25.4 s
//   without, 16.0-17.9 s with; peak memory 1.289 and 1.291 GB.
// - glibc.malloc.mmap_max=0 with a trim threshold of 16 GiB keeps freed memory in the heap for
//   the next stage instead of returning it to the kernel, which would clear it again. Measured
//   on the same night (under load from a concurrent build): process 23.1-23.3 s -> 20.5-21.2 s,
//   system time 2.3-3.0 s -> 1.3-1.5 s, peak memory 1.291 -> 1.295 GB.
// A value the user gives for any of these tunables stands.

#include <optional>
#include <string>

namespace skyphase {

// The GLIBC_TUNABLES value that adds the settings above to `current` (null: unset), each unless
// `current` already sets that tunable (to any value); nothing when there is nothing to add.
std::optional<std::string> tunables_for_large_nights(const char* current);

// Whether this process runs with glibc.malloc.hugetlb=1.
bool huge_page_malloc_on();

// Whether this process keeps freed memory for reuse (glibc.malloc.mmap_max=0).
bool freed_memory_kept();

// Re-executes the program (/proc/self/exe) with the settings added, unless GLIBC_TUNABLES
// already sets them all; returns, and the program runs on as started, when the exec fails.
void reexec_with_malloc_tunables(char** argv);

}  // namespace skyphase
