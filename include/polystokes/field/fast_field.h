// Fast exact gravity of constant-density polyhedra at many points: the direct sum (polyhedron_gravity) for
// faces near a point and a fast multipole method for the rest, with an a-priori error bound met by design.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

struct FastFieldOptions {
  /// Error allowed, relative to the scales of FastFieldReport: GM/R_B for the potential and
  /// max(|a|, GM/R_B^2) for the acceleration at each point. 1e-15 < accuracy < 1.
  double accuracy = 1e-10;
  int threads = 0;  ///< 0 = all hardware threads; results do not depend on the count
  int order = 0;    ///< expansion order (2..40); 0 = chosen from the accuracy
  int checks = 64;  ///< points evaluated again by the direct sum after a run (spread over the set), 0 = none
  /// exact_field only: below this many face-point pairs the direct sum runs instead, as it is faster there on
  /// two cores (measured at 1e-8 to 1e-10: slower at 10^4 x 10^4, 3 to 10 times faster at 10^5 x 10^5;
  /// docs/performance.md).
  double direct_pairs = 2e9;
};

/// What a run did and how accurate it was. Scales: GM = G sum(rho V) over the regions (absolute values if
/// that sum is not positive), R_B = largest vertex distance from the regions' centre (the |rho| V weighted
/// mean of their volume centroids).
struct FastFieldReport {
  int order = 0;        ///< expansion order p
  double opening = 0;   ///< largest (r_A + r_B)/d of an accepted cell pair
  double accuracy = 0;  ///< as requested
  long faces = 0, points = 0;
  long source_cells = 0, target_cells = 0;
  long multipole_to_local = 0;    ///< cell-cell far interactions
  long multipole_to_point = 0;    ///< cell-point far interactions (small target cells)
  long near_pairs = 0;            ///< face-point pairs summed directly
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
/// n_fk: sources are triangles with polynomial surface densities (a density varying linearly in the body
/// only raises their degree, which changes the weights of the moment recursion, not the structure). Faces
/// near a point are summed by the direct closed form (PolyhedronGravity's face terms: same values as the
/// direct sum); far cell pairs by the fast multipole method of Greengard & Rokhlin 1987 (J. Comput. Phys. 73,
/// 325-348) with complex solid harmonics: exact moments of each face, multipole-to-multipole,
/// multipole-to-local truncated at total degree p, local-to-local, and multipole-to-point for small target
/// cells, found by a dual tree traversal (Dehnen 2002, J. Comput. Phys. 179, 27-42).
///
/// Error bound. Every step is exact up to rounding (face moments by the barycentric recursion of
/// solid_harmonics, translations of the polynomial expansions) except the truncation of accepted far pairs.
/// For a pair of cells with centres d apart and radii r_A (targets) and r_B (faces' full extent),
/// x = (r_A + r_B)/d < 0.75, the truncation error of each single-layer potential is at most
/// Q_B x^(p+1) / (d - r_A - r_B), Q_B the cell's sum of |G rho| area (the Taylor remainder of 1/|x - y| with
/// |P_n| <= 1, charges taken with their absolute value). A pair is accepted when that bound, for the
/// acceleration and for the potential (U = (phi_0 - x . phi)/2), is at most accuracy * scale * (Q_B /
/// Q_total)
/// * (R_B / (d - r_A - r_B)) / s; the bounds of each point's accepted pairs are then summed exactly, before
/// any expansion is evaluated, and if a sum exceeds accuracy * scale the pairs are chosen again with s four
/// times larger. So every returned value meets the accuracy by a bound known in advance (reported as
/// bound_potential, bound_acceleration); the run-time check against the direct sum confirms it on a sample.
/// The bound is pessimistic (measured errors are 3 to 5 orders below it). The gradient tensor is not part of
/// it; it is reported by the run-time check. Cost: O(faces p^2) to prepare, then roughly O(points log faces)
/// expansions of cost O(p^2) to O(p^4) each plus the near faces' closed forms; results do not depend on the
/// thread count.
class FastPolyhedronField {
 public:
  /// Regions as PolyhedronGravity. Throws ConventionError for options out of range.
  explicit FastPolyhedronField(const std::vector<DensityRegion>& regions,
                               const FastFieldOptions& options = {});
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

/// The exact field of the regions at `points` by whichever method is faster for the size: the direct sum
/// below options.direct_pairs face-point pairs, else FastPolyhedronField at `options`. `method` (if given)
/// receives one line saying which ran, with the fast method's accuracy and run-time check.
std::vector<FieldValue> exact_field(const std::vector<DensityRegion>& regions, const Points& points,
                                    const FastFieldOptions& options = {}, std::string* method = nullptr);

}  // namespace polystokes
