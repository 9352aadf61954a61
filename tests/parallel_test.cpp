// The one parallel-for and ordered block reduction (internal/parallel.h): every index once, results and
// errors independent of the thread count.
#include "internal/parallel.h"

#include <catch2/catch.hpp>
#include <cmath>
#include <stdexcept>
#include <vector>

#include "polystokes/core/errors.h"

using namespace polystokes;

TEST_CASE("0 threads means every core; a positive count is taken as given", "[parallel]") {
  CHECK(resolve_threads(3) == 3);
  CHECK(resolve_threads(0) >= 1);
  CHECK(resolve_threads(-1) == resolve_threads(0));
}

TEST_CASE("the threads that run never exceed the work items or the cores", "[parallel]") {
  CHECK(worker_threads(64, 1000) == resolve_threads(0));
  CHECK(worker_threads(0, 1) == 1);
  CHECK(worker_threads(1, 1000) == 1);
  CHECK(worker_threads(0, 0) == 1);
}

TEST_CASE("parallel_for runs every index exactly once for 1, 2, 3 and all threads", "[parallel]") {
  for (int threads : {1, 2, 3, 0}) {
    std::vector<int> runs(1000, 0);
    parallel_for(runs.size(), threads, [&](size_t i) { ++runs[i]; });
    CAPTURE(threads);
    CHECK(std::count(runs.begin(), runs.end(), 1) == 1000);
  }
  parallel_for(0, 4, [](size_t) { FAIL("no index to run"); });
}

TEST_CASE("an error in a task reaches the caller as the same family, the lowest failing index's",
          "[parallel]") {
  for (int threads : {1, 2, 4}) {
    CAPTURE(threads);
    auto work = [](size_t i) {
      if (i == 700) throw MeshError("index 700");
      if (i == 37) throw ConventionError("index 37");
    };
    try {
      parallel_for(1000, threads, work);
      FAIL("no error raised");
    } catch (const ConventionError& e) {
      CHECK(std::string(e.what()) == "index 37");
    }
    CHECK_THROWS_AS(parallel_for(10, threads, [](size_t) { throw std::runtime_error("x"); }),
                    std::runtime_error);
  }
}

TEST_CASE(
    "ordered_blocks adds partials strictly in block order, so a rounding-sensitive sum is the same "
    "for any thread count",
    "[parallel]") {
  // Terms of alternating size whose floating-point sum depends on the order (common practice): the sum in
  // block order by a plain loop is the oracle.
  auto term = [](size_t b) { return (b % 3 == 0 ? 1e16 : 1.0) * (b % 2 ? -1.0 : 1.0) + 0.1 * double(b); };
  double expected = 0;
  for (size_t b = 0; b < 500; ++b) expected += term(b);
  for (int threads : {1, 2, 3, 0}) {
    for (size_t in_flight : {size_t(1), size_t(2), size_t(64)}) {
      CAPTURE(threads, in_flight);
      double sum = 0;
      size_t next = 0;
      bool in_order = true;
      ordered_blocks<int>(
          500, threads, in_flight, [&](size_t b, int&) { return term(b); },
          [&](size_t b, double partial) {
            in_order = in_order && b == next++;
            sum += partial;
          });
      CHECK(in_order);
      CHECK(next == 500);
      CHECK(sum == expected);
    }
  }
}

TEST_CASE("ordered_blocks: the lowest failing block's error arrives after every block before it was added",
          "[parallel]") {
  for (int threads : {1, 2, 3}) {
    CAPTURE(threads);
    size_t added = 0;
    try {
      ordered_blocks<int>(
          200, threads, 8,
          [](size_t b, int&) {
            if (b == 150) throw MeshError("block 150");
            if (b == 60) throw ConventionError("block 60");
            return double(b);
          },
          [&](size_t, double) { ++added; });
      FAIL("no error raised");
    } catch (const ConventionError& e) {
      CHECK(std::string(e.what()) == "block 60");
    }
    CHECK(added == 60);
  }
}
