// Splitting independent per-row work (one evaluation point per row) over threads.
// Each row is computed by the same code whatever the thread count, so results never depend on it.
#pragma once

#include <algorithm>
#include <thread>
#include <vector>

namespace polystokes {

/// Runs work(i) for i in [0, rows) on `threads` threads (0 = all hardware threads), in contiguous blocks.
/// work must not throw (capture errors per row and report them after the call).
template <class Work>
void parallel_rows(long rows, int threads, Work&& work) {
  long count = threads > 0 ? threads : long(std::max(1u, std::thread::hardware_concurrency()));
  count = std::max(1L, std::min(count, rows));
  const long block = (rows + count - 1) / std::max(1L, count);
  std::vector<std::thread> pool;
  for (long t = 1; t < count; ++t)
    pool.emplace_back([&work, t, block, rows] {
      for (long i = t * block; i < std::min(rows, (t + 1) * block); ++i) work(i);
    });
  for (long i = 0; i < std::min(rows, block); ++i) work(i);
  for (auto& thread : pool) thread.join();
}

}  // namespace polystokes
