// Available-memory query and fail-fast refusals. The figures come from the Linux kernel's own accounting:
// /proc/meminfo MemTotal and MemAvailable (Documentation/filesystems/proc.rst, "meminfo") and
// getrlimit(RLIMIT_AS) (POSIX.1-2017); the test reads them independently of the code under test.
#include <sys/resource.h>

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "polystokes/core/errors.h"
#include "internal/memory_budget.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

double meminfo_bytes(const std::string& key) {
  std::ifstream in("/proc/meminfo");
  std::string line;
  while (std::getline(in, line))
    if (line.rfind(key + ":", 0) == 0) return std::stod(line.substr(key.size() + 1)) * 1024.0;
  return -1;
}

}  // namespace

TEST_CASE("available memory is positive and no more than the machine's total or free memory", "[memory_budget]") {
  const double available = available_memory_bytes();
  CHECK(available > 0);
  const double total = meminfo_bytes("MemTotal");
  REQUIRE(total > 0);
  CHECK(available <= total);
  // MemAvailable moves while the test runs; allow 10% and 64 MB of drift.
  const double free_now = meminfo_bytes("MemAvailable");
  if (free_now > 0) CHECK(available <= 1.1 * free_now + 64e6);
  rlimit limit{};
  REQUIRE(getrlimit(RLIMIT_AS, &limit) == 0);
  if (limit.rlim_cur != RLIM_INFINITY) CHECK(available <= double(limit.rlim_cur));
}

TEST_CASE("require_memory refuses more than is available with a ResourceError saying what and how much",
          "[memory_budget]") {
  const double available = available_memory_bytes();
  CHECK_NOTHROW(require_memory(1e6, "a small table"));
  try {
    require_memory(2 * available + 1e9, "a table of the whole sky");
    FAIL("accepted");
  } catch (const ResourceError& error) {
    const std::string message = error.what();
    CHECK(message.find("a table of the whole sky would need about") != std::string::npos);
    CHECK(message.find("GB") != std::string::npos);
    CHECK(message.find("refusing before starting") != std::string::npos);
  }
}

TEST_CASE("the compute estimate covers at least the coefficient tables and grows with degree and JSON",
          "[memory_budget]") {
  // A set holds C, S, sigma_C and sigma_S, each (N+1)^2 doubles (coefficient_set.h); the written text at
  // least one row of two numbers per (n, m), m <= n.
  for (int degree : {0, 10, 1000, 10000}) {
    const double n1 = degree + 1.0;
    CAPTURE(degree);
    CHECK(coefficient_run_bytes(degree, 1, false) >= 4 * 8 * n1 * n1 + 2 * 8 * n1 * (n1 + 1) / 2);
    CHECK(coefficient_run_bytes(degree, 1, true) > coefficient_run_bytes(degree, 1, false));
    CHECK(coefficient_run_bytes(degree, 8, false) > coefficient_run_bytes(degree, 1, false));
  }
  CHECK(coefficient_run_bytes(2000, 2, false) > coefficient_run_bytes(1000, 2, false));
}

TEST_CASE("a file larger than memory allows is refused before it is read", "[memory_budget]") {
  // Sparse file: its size costs no disk space. An address-space limit would make the test depend on the
  // sanitizer build, so the file is made larger than the memory available instead.
  const std::string path = temp_directory() + "/huge.obj";
  const double available = available_memory_bytes();
  const auto size = static_cast<std::uintmax_t>(available / 2 + 1e9);
  {
    std::ofstream out(path, std::ios::binary);
    out << "v 0 0 0\n";
  }
  std::filesystem::resize_file(path, size);
  try {
    check_file_read_budget(path);
    FAIL("accepted");
  } catch (const ResourceError& error) {
    const std::string message = error.what();
    CHECK(message.find(path) != std::string::npos);
    CHECK(message.find("reading a file of") != std::string::npos);
  }
  std::filesystem::remove(path);
  CHECK_NOTHROW(check_file_read_budget(source_path("shapes-demo/unit_cube.obj")));
  CHECK_NOTHROW(check_file_read_budget(path));  // missing: left to the reader to report
}
