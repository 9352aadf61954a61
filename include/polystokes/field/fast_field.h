// Fast exact gravity of constant-density polyhedra at many points: the direct sum (polyhedron_gravity) for
// faces near a point and a fast multipole method for the rest, with an a-priori error bound met by design.
#pragma once

#include <memory>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

struct FastFieldOptions {
  /// Error allowed, relative to the scales of FastFieldReport: GM/R_B for the potential and
  /// max(|a|, GM/R_B^2) for the acceleration at each point. 1e-15 < accuracy < 1.
  double accuracy = 1e-10;
  int threads = 0;   ///< 0 = all hardware threads; results do not depend on the count
  int order = 0;     ///< expansion order (2..40); 0 = chosen from the accuracy
  int checks = 64;   ///< points evaluated again by the direct sum after a run (spread over the set), 0 = none
};

/// What a run did and how accurate it was. Scales: GM = G sum(rho V) over the regions (absolute values if
/// that sum is not positive), R_B = largest vertex distance from the regions' centre (the |rho| V weighted
/// mean of their volume centroids).
struct FastFieldReport {
  int order = 0;            ///< expansion order p
  double opening = 0;       ///< largest (r_A + r_B)/d of an accepted cell pair
  double accuracy = 0;      ///< as requested
  long faces = 0, points = 0;
  long source_cells = 0, target_cells = 0;
  long multipole_to_local = 0;  ///< cell-cell far interactions
  long multipole_to_point = 0;  ///< cell-point far interactions (small target cells)
  long near_pairs = 0;          ///< face-point pairs summed directly
  double potential_scale = 0;     ///< GM/R_B, m^2 s^-2
  double acceleration_scale = 0;  ///< GM/R_B^2, m s^-2
  /// Largest a-priori error bound over the points, relative to the scales (never above the accuracy).
  double bound_potential = 0, bound_acceleration = 0;
  /// Run-time check: points evaluated by the direct sum too, and the largest errors found, relative to
  /// GM/R_B, max(|a|, GM/R_B^2) and max(|T|, GM/R_B^3) (Frobenius norm; the gradient is not part of the
  /// bound; points on an edge or vertex, where it is infinite, are left out of that figure).
  long checked = 0;
  double checked_potential = 0, checked_acceleration = 0, checked_gradient = 0;
};

struct FastFieldResult {
  std::vector<FieldValue> values;
  FastFieldReport report;
};

/// The regions prepared once (faces in an octree with their exact multipole moments), then evaluated at
/// any set of points.
///
/// Method. With div_y((y - x)/|y - x|) = 2/|y - x|, the potential of a constant-density polyhedron is
/// U(x) = (G rho/2) sum_f (n_f . (y - x)) integral_f dA/|y - x| (Werner & Scheeres 1997, Celest. Mech. Dyn.
/// Astron. 65, 313-344, eq. for U as a sum over faces), where n_f . (y - x) is constant on each face. So
/// U = (phi_0 - x . phi)/2, acceleration = -phi, gradient = -grad phi (symmetrized), with phi_0 and phi_k
/// (k = x, y, z) four single-layer potentials whose surface densities on face f are G rho n_f . y and G rho
/// n_fk: sources are triangles with polynomial surface densities, so a density varying linearly in the body
/// only raises their degree. Faces near a point are summed by the direct closed form (PolyhedronGravity's
/// face terms: same values as the direct sum); far cell pairs by the fast multipole method of Greengard &
/// Rokhlin 1987 (J. Comput. Phys. 73, 325-348) with complex solid harmonics: moments of each face exact by a
/// Gauss rule of degree p + density degree, multipole-to-multipole, multipole-to-local truncated at total
/// degree p, local-to-local, and multipole-to-point for small target cells, found by a dual tree traversal
/// (Dehnen 2002, J. Comput. Phys. 179, 27-42).
///
/// Error bound. A cell pair with centres d apart and radii r_A, r_B (faces' full extent) is accepted when
/// x = (r_A + r_B)/d < 0.75 and its truncation error, at most Q_B x^(p+1)/(d - r_A - r_B) for each
/// potential and Q_B (p + 2) x^p/(d^2 (1 - x)^2) for its gradient (Q_B the cell's sum of |G rho| area), is at
/// most accuracy * scale * Q_B / Q_total: the bounds of all accepted pairs of a point then sum to at most
/// accuracy * scale. Everything else (moments, translations) is exact up to rounding.
class FastPolyhedronField {
 public:
  /// Regions as PolyhedronGravity. Throws ConventionError for options out of range.
  explicit FastPolyhedronField(const std::vector<DensityRegion>& regions, const FastFieldOptions& options = {});
  ~FastPolyhedronField();

  /// Field at every row (mesh frame, metres), with the run's report (including the check against the direct
  /// sum on options.checks points). Throws ConventionError for a non-finite point.
  FastFieldResult evaluate(const Points& points) const;

  /// The direct sum over the same regions.
  const PolyhedronGravity& direct() const { return direct_; }

  size_t face_count() const { return direct_.face_count(); }

 private:
  struct Sources;
  PolyhedronGravity direct_;
  FastFieldOptions options_;
  std::unique_ptr<Sources> sources_;
};

}  // namespace polystokes
