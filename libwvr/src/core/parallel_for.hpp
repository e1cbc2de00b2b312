#pragma once
// The one way libwvr spreads independent work items over cores: contiguous blocks of item
// indices, one std::thread per block (the calling thread takes the first). Items must not
// depend on each other; results written per item do not depend on the thread count.
#include <algorithm>
#include <cstddef>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

namespace wvr::detail {

// Worker count for `requested` threads (0 = all hardware threads) and `items` work items.
inline std::size_t worker_count(int requested, std::size_t items) {
  const std::size_t hardware = std::max(1u, std::thread::hardware_concurrency());
  const std::size_t wanted = requested > 0 ? static_cast<std::size_t>(requested) : hardware;
  return std::max<std::size_t>(1, std::min(wanted, items));
}

// Calls body(begin, end, worker) for `workers` contiguous blocks covering [0, items).
// An exception thrown in any block is rethrown on the calling thread after all have joined.
template <typename Body>
void parallel_blocks(std::size_t items, std::size_t workers, Body&& body) {
  if (items == 0) return;
  workers = std::max<std::size_t>(1, std::min(workers, items));
  if (workers == 1) {
    body(std::size_t{0}, items, std::size_t{0});
    return;
  }
  std::exception_ptr failure;
  std::mutex failure_mutex;
  auto run = [&](std::size_t w) {
    try {
      body(items * w / workers, items * (w + 1) / workers, w);
    } catch (...) {
      const std::lock_guard<std::mutex> lock(failure_mutex);
      if (!failure) failure = std::current_exception();
    }
  };
  std::vector<std::thread> threads;
  threads.reserve(workers - 1);
  for (std::size_t w = 1; w < workers; ++w) threads.emplace_back(run, w);
  run(0);
  for (std::thread& t : threads) t.join();
  if (failure) std::rethrow_exception(failure);
}

}  // namespace wvr::detail
