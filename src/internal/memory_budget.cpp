#include "internal/memory_budget.h"

#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fmt/format.h>
#include <fstream>
#include <limits>
#include <sstream>

#include "polystokes/core/errors.h"

namespace polystokes {
namespace {

constexpr double unlimited = std::numeric_limits<double>::infinity();

/// Value in bytes of a "Key:   N kB" line of a /proc file; +inf if absent.
double proc_kilobytes(const char* file, const std::string& key) {
  std::ifstream in(file);
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind(key + ":", 0) != 0) continue;
    std::istringstream fields(line.substr(key.size() + 1));
    double kilobytes = 0;
    if (fields >> kilobytes) return kilobytes * 1024.0;
  }
  return unlimited;
}

/// A number in a one-line /sys file ("max" and unreadable files count as unlimited).
double sys_number(const std::string& file) {
  std::ifstream in(file);
  std::string word;
  if (!(in >> word) || word == "max") return unlimited;
  double value = 0;
  const auto [end, ec] = std::from_chars(word.data(), word.data() + word.size(), value);
  return ec == std::errc() && end == word.data() + word.size() ? value : unlimited;
}

/// cgroup v2 headroom of this process's group: memory.max - memory.current ("0::/path" in /proc/self/cgroup).
double cgroup_headroom() {
  std::ifstream in("/proc/self/cgroup");
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind("0::", 0) != 0) continue;
    const std::string group = "/sys/fs/cgroup" + line.substr(3);
    const double limit = sys_number(group + "/memory.max");
    if (!std::isfinite(limit)) return unlimited;
    const double used = sys_number(group + "/memory.current");
    return std::isfinite(used) ? std::max(0.0, limit - used) : limit;
  }
  return unlimited;
}

/// Soft limit `resource` minus the current use `status_key` (VmSize, VmData) of this process.
double rlimit_headroom(int resource, const char* status_key) {
  rlimit limit{};
  if (::getrlimit(resource, &limit) != 0 || limit.rlim_cur == RLIM_INFINITY) return unlimited;
  const double used = proc_kilobytes("/proc/self/status", status_key);
  const double cap = static_cast<double>(limit.rlim_cur);
  return std::isfinite(used) ? std::max(0.0, cap - used) : cap;
}

double gigabytes(double bytes) { return bytes / 1e9; }

}  // namespace

double available_memory_bytes() {
  double available = proc_kilobytes("/proc/meminfo", "MemAvailable");
  if (!std::isfinite(available)) {
    const long pages = ::sysconf(_SC_AVPHYS_PAGES), page = ::sysconf(_SC_PAGESIZE);
    if (pages > 0 && page > 0) available = static_cast<double>(pages) * static_cast<double>(page);
  }
  available = std::min(available, cgroup_headroom());
  available = std::min(available, rlimit_headroom(RLIMIT_AS, "VmSize"));
  available = std::min(available, rlimit_headroom(RLIMIT_DATA, "VmData"));
  return available;
}

void require_memory(double bytes, const std::string& what) {
  const double available = available_memory_bytes();
  if (bytes > available)
    throw ResourceError(fmt::format("{} would need about {:.2f} GB of memory, but only {:.2f} GB are available; "
                                    "refusing before starting",
                                    what, gigabytes(bytes), gigabytes(available)));
}

void check_file_read_budget(const std::string& path) {
  std::error_code error;
  const auto size = std::filesystem::file_size(path, error);
  if (error) return;
  require_memory(2.0 * static_cast<double>(size),
                 fmt::format("{}: reading a file of {:.2f} GB", path, gigabytes(static_cast<double>(size))));
}

double coefficient_run_bytes(int degree, int threads, bool json) {
  const double n = static_cast<double>(std::max(0, degree)) + 1.0;
  const double tables = 6.0 * 8.0 * n * n;
  const double triangle = n * (n + 1.0) / 2.0;
  const double partial_sums = static_cast<double>(std::max(1, threads)) * 2.0 * 2.0 * 8.0 * triangle;
  const double text = 2.5 * 80.0 * triangle;
  return tables + partial_sums + text + (json ? 700.0 * triangle : 0.0);
}

}  // namespace polystokes
