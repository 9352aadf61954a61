// What the sampler, the summary and the shard file of an uncertainty run share: the layout of a sample's
// coefficient differences (SampleResult::delta: C(n, m) for n = 0..N, m = 0..n, then S in the same order) and
// how a point is named in messages and notes.
#pragma once

#include <fmt/format.h>

#include <Eigen/Core>
#include <cstddef>
#include <string>

namespace polystokes {

/// Number of values in a sample's delta at degree `degree`: (N + 1)(N + 2), C and S.
inline size_t packed_size(int degree) { return size_t(degree + 1) * size_t(degree + 2); }

/// "(x, y, z) m" in shortest round-trip numbers.
inline std::string describe_point(const Eigen::Vector3d& p) {
  return fmt::format("({}, {}, {}) m", p.x(), p.y(), p.z());
}

}  // namespace polystokes
