// Memory the process may still use, estimates of what large work needs, and refusing work that would not
// fit before it starts (a clear ResourceError instead of being killed half-way).
#pragma once

#include <string>

namespace polystokes {

/// Bytes this process can still allocate: the least of MemAvailable in /proc/meminfo (free pages from
/// sysconf where that line is missing), the cgroup v2 limit (memory.max minus memory.current) and the soft
/// RLIMIT_AS and RLIMIT_DATA minus what the process already maps. Reads a few small /proc and /sys files.
double available_memory_bytes();

/// Throws ResourceError "WHAT would need about X GB of memory, but only Y GB are available; refusing
/// before starting" when `bytes` exceeds available_memory_bytes().
void require_memory(double bytes, const std::string& what);

/// Before a file is read whole: require_memory for holding its bytes twice (as read_file does while it
/// reads). A file that cannot be examined is left to the reader to report.
void check_file_read_budget(const std::string& path);

/// Peak bytes of computing and writing a coefficient set of this degree on `threads` threads: six
/// (degree+1)^2 tables (C, S, sigma_C, sigma_S and the two moment tables), two triangular partial sums in
/// two slots per thread, and the text form (about 80 bytes per row, held up to 2.5 times while it grows)
/// plus, with `json`, the JSON form (700 bytes per row while it is built and printed; measured at degree
/// 1000: 615).
double coefficient_run_bytes(int degree, int threads, bool json);

}  // namespace polystokes
