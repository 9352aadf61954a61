#include "io/coefficient_common.h"

#include <fmt/format.h>

#include <climits>
#include <cmath>
#include <utility>

namespace polystokes::coefficient_io {

namespace {

void check_shape(const CoefficientSet& set) {
  if (set.degree < 0 || set.degree >= INT_MAX)
    throw ConventionError(
        fmt::format("coefficient set: degree must be in 0..{}, got {}", INT_MAX - 1, set.degree));
  const Eigen::Index size = set.degree + 1;
  const std::pair<const char*, const Eigen::MatrixXd*> matrices[] = {
      {"C", &set.C}, {"S", &set.S}, {"sigma_C", &set.sigma_C}, {"sigma_S", &set.sigma_S}};
  for (const auto& [name, matrix] : matrices) {
    if (matrix->rows() != size || matrix->cols() != size) {
      throw ConventionError(fmt::format("coefficient set: degree {} needs {}x{} matrices but {} is {}x{}",
                                        set.degree, size, size, name, matrix->rows(), matrix->cols()));
    }
  }
}

void require_finite(double value, const std::string& what) {
  if (!std::isfinite(value)) {
    throw OutputError(
        fmt::format("coefficient set not written: {} is {}; the coefficient formats hold finite "
                    "numbers only",
                    what, value));
  }
}

void require_finite(const Eigen::Vector3d& value, const std::string& what) {
  for (int i = 0; i < 3; ++i) require_finite(value[i], fmt::format("{}[{}]", what, i));
}

}  // namespace

void check_writable(const CoefficientSet& set) {
  check_shape(set);
  require_finite(set.gm, "gm");
  require_finite(set.reference_radius, "reference_radius");
  require_finite(set.brillouin_radius, "brillouin_radius");
  require_finite(set.mass, "mass");
  require_finite(set.volume, "volume");
  require_finite(set.center_of_mass, "center_of_mass");
  require_finite(set.origin_in_mesh, "origin_in_mesh");
  for (int row = 0; row < 3; ++row)
    require_finite(Eigen::Vector3d(set.axes_in_mesh.row(row)), fmt::format("axes_in_mesh row {}", row));
  // A set whose metadata the readers would refuse is not written (NaN angles included).
  check_frame_metadata(set.frame_metadata);
  for (size_t i = 0; i < set.regions.size(); ++i) {
    require_finite(set.regions[i].density, fmt::format("regions[{}].density", i));
    require_finite(set.regions[i].volume, fmt::format("regions[{}].volume", i));
  }
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      require_finite(set.C(n, m), fmt::format("C({},{})", n, m));
      require_finite(set.S(n, m), fmt::format("S({},{})", n, m));
      require_finite(set.sigma_C(n, m), fmt::format("sigma_C({},{})", n, m));
      require_finite(set.sigma_S(n, m), fmt::format("sigma_S({},{})", n, m));
      // -0.0 passes on purpose: it is not below zero and must round-trip like any other value.
      if (set.sigma_C(n, m) < 0 || set.sigma_S(n, m) < 0)
        throw OutputError(fmt::format("coefficient set not written: sigma at n={} m={} is negative", n, m));
    }
  }
}

std::string number(double value) { return fmt::format("{}", value); }

size_t utf8_sequence_length(std::string_view s, size_t i) {
  const auto byte = [&](size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char lead = byte(i);
  if (lead < 0x80) return 1;
  size_t length = 0;
  unsigned char low = 0x80, high = 0xBF;
  if (lead >= 0xC2 && lead <= 0xDF)
    length = 2;
  else if (lead == 0xE0)
    length = 3, low = 0xA0;
  else if (lead == 0xED)
    length = 3, high = 0x9F;
  else if (lead >= 0xE1 && lead <= 0xEF)
    length = 3;
  else if (lead == 0xF0)
    length = 4, low = 0x90;
  else if (lead >= 0xF1 && lead <= 0xF3)
    length = 4;
  else if (lead == 0xF4)
    length = 4, high = 0x8F;
  else
    return 0;
  if (i + length > s.size() || byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (size_t k = 2; k < length; ++k)
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  return length;
}

bool is_utf8(std::string_view s) {
  for (size_t i = 0; i < s.size();) {
    const size_t length = utf8_sequence_length(s, i);
    if (length == 0) return false;
    i += length;
  }
  return true;
}

std::string shown(std::string_view token) {
  constexpr size_t kShown = 40;
  if (token.size() <= kShown) return "'" + std::string(token) + "'";
  return "'" + std::string(token.substr(0, kShown)) + "...'";
}
CoefficientSet with_positive_degree_zero(CoefficientSet set, const std::string& source_name) {
  if (set.convention.zonal_as_j && set.C(0, 0) < 0) {
    set.C(0, 0) = -set.C(0, 0);
    set.history.push_back(
        fmt::format("{}: degree 0 stored as J_0 = -C00 (an earlier J-form file); read as C00 = {}",
                    source_name, set.C(0, 0)));
  }
  return set;
}

}  // namespace polystokes::coefficient_io
