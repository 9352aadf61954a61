// The library's one way of running loops on several threads (oneTBB): a parallel-for over indices and an
// ordered block reduction, both with results that never depend on the thread count, and one error rule.
#pragma once

#include <oneapi/tbb/blocked_range.h>
#include <oneapi/tbb/enumerable_thread_specific.h>
#include <oneapi/tbb/info.h>
#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>

#include <algorithm>
#include <atomic>
#include <cstddef>
#include <exception>
#include <mutex>
#include <utility>

namespace polystokes {

/// The number of threads a request means: `requested` if positive, else every core this process may use
/// (0 = all; oneTBB's default concurrency, which honours the affinity mask and cgroup limits).
inline int resolve_threads(int requested) {
  return requested > 0 ? requested : std::max(1, tbb::info::default_concurrency());
}

/// Threads that actually run `items` work items on a request: no more than the items, nor than the cores
/// (oneTBB never runs more, and warns on stderr when asked to; the results do not depend on the count).
inline int worker_threads(int requested, size_t items) {
  const size_t cores = size_t(std::max(1, tbb::info::default_concurrency()));
  return int(std::max<size_t>(1, std::min({size_t(resolve_threads(requested)), cores, items})));
}

/// Runs work(i) for every i in [0, count) on up to `threads` threads (0 = all). Each index runs the same code
/// whatever the thread count, so per-index results never depend on it. Error rule (shared with
/// ordered_blocks): an exception thrown by work reaches the caller unchanged (same type and message); when
/// several indices throw, the caller gets the one of the lowest index, so the error does not depend on
/// timing. Indices above a failed one may be skipped.
template <class Work>
void parallel_for(size_t count, int threads, Work&& work) {
  const int workers = worker_threads(threads, count);
  if (workers <= 1) {
    for (size_t i = 0; i < count; ++i) work(i);
    return;
  }
  std::atomic<size_t> failed{count};  // lowest failed index so far, count while none
  std::exception_ptr failure;
  std::mutex mutex;
  tbb::task_arena arena(workers);
  arena.execute([&] {
    tbb::parallel_for(tbb::blocked_range<size_t>(0, count, 1), [&](const tbb::blocked_range<size_t>& range) {
      for (size_t i = range.begin(); i != range.end(); ++i) {
        if (i > failed.load(std::memory_order_relaxed)) return;
        try {
          work(i);
        } catch (...) {
          std::lock_guard<std::mutex> lock(mutex);
          if (i < failed.load(std::memory_order_relaxed)) {
            failed.store(i, std::memory_order_relaxed);
            failure = std::current_exception();
          }
        }
      }
    });
  });
  if (failure) std::rethrow_exception(failure);
}

/// Ordered reduction: part(b, scratch) computes block b's partial result on up to `threads` threads (0 =
/// all), and add(b, std::move(partial)) receives the partials strictly in block order, one call at a time,
/// so a sum built in `add` is bit-identical for any thread count. At most `in_flight` partials exist at
/// once, whatever the relative speed of the threads. `Scratch` is default-constructed once per worker thread
/// and reused across its blocks. Errors as parallel_for: the exception of the lowest failing block reaches
/// the caller unchanged; blocks before it have been added.
template <class Scratch, class Part, class Add>
void ordered_blocks(size_t blocks, int threads, size_t in_flight, Part&& part, Add&& add) {
  using Partial = decltype(part(size_t(0), std::declval<Scratch&>()));
  struct Token {
    size_t block = 0;
    Partial partial{};
    std::exception_ptr failure;
  };
  tbb::enumerable_thread_specific<Scratch> scratch;
  const int workers = worker_threads(threads, blocks);
  if (workers <= 1) {
    Scratch& local = scratch.local();
    for (size_t b = 0; b < blocks; ++b) add(b, part(b, local));
    return;
  }
  size_t next = 0;
  tbb::task_arena arena(workers);
  arena.execute([&] {
    tbb::parallel_pipeline(
        std::max<size_t>(1, in_flight),
        tbb::make_filter<void, size_t>(tbb::filter_mode::serial_in_order,
                                       [&](tbb::flow_control& control) -> size_t {
                                         if (next >= blocks) control.stop();
                                         return next++;
                                       }) &
            tbb::make_filter<size_t, Token>(tbb::filter_mode::parallel,
                                            [&](size_t b) {
                                              Token token;
                                              token.block = b;
                                              try {
                                                token.partial = part(b, scratch.local());
                                              } catch (...) {
                                                token.failure = std::current_exception();
                                              }
                                              return token;
                                            }) &
            tbb::make_filter<Token, void>(tbb::filter_mode::serial_in_order, [&](Token token) {
              if (token.failure) std::rethrow_exception(token.failure);
              add(token.block, std::move(token.partial));
            }));
  });
}

}  // namespace polystokes
