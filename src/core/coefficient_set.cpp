#include "polystokes/core/coefficient_set.h"

#include <fmt/format.h>

#include <ctime>

#include "polystokes/core/errors.h"

namespace polystokes {

CoefficientSet make_empty_set(int degree) {
  if (degree < 0) throw ConventionError("degree must be >= 0, got " + std::to_string(degree));
  CoefficientSet set;
  set.degree = degree;
  const int size = degree + 1;
  set.C = Eigen::MatrixXd::Zero(size, size);
  set.S = Eigen::MatrixXd::Zero(size, size);
  set.sigma_C = Eigen::MatrixXd::Zero(size, size);
  set.sigma_S = Eigen::MatrixXd::Zero(size, size);
  return set;
}

std::string utc_timestamp() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);  // the reentrant form: std::gmtime shares one buffer between threads
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

MeshUnitChoice mesh_unit_for_set(const CoefficientSet& set, const std::string& mesh_checksum,
                                 std::optional<LengthUnit> requested, const std::string& mesh_name) {
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    if (mesh_checksum.empty() || region.checksum != mesh_checksum) continue;
    const LengthUnit recorded = parse_length_unit(region.unit);
    if (requested && *requested != recorded)
      throw ConventionError(fmt::format(
          "{} is region {} of the set (same SHA-256), which was computed from it in {}, but it is to be read "
          "in {}: lengths would be off by a factor 1000 (read it in {}, or leave the unit out)",
          mesh_name, i + 1, region.unit, to_string(*requested), region.unit));
    return {recorded,
            fmt::format("the unit the set records for region {}, whose SHA-256 this file has", i + 1)};
  }
  if (requested) return {*requested, "as given"};
  if (!set.regions.empty())
    return {parse_length_unit(set.length_unit),
            "the unit of the set's source meshes; this file is none of them"};
  return {LengthUnit::meter, "the default; the set records no source mesh"};
}

}  // namespace polystokes
