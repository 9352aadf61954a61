// Exact gravity of constant-density polyhedra (several regions superposed): potential, acceleration and
// gravity-gradient tensor at any point, inside or outside, by the closed form of Werner & Scheeres 1997.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// The polyhedra prepared for evaluation at many points (face and edge data computed once).
///
/// Formulation (Werner & Scheeres 1997, Celest. Mech. Dyn. Astron. 65, 313-344): with r_f, r_e from
/// the field point to a face / edge, outward face normals n_f, in-plane edge normals n_fe, edge factors
/// L_e = ln((r_i + r_j + e)/(r_i + r_j - e)) and signed face solid angles omega_f,
///   U = (G rho / 2) sum_f (n_f . r_f) I_f,   grad U = -G rho sum_f n_f I_f,
///   grad grad U = G rho sum_f n_f (sum_(e in f) n_fe L_e - n_f omega_f)^T,
///   I_f = sum_(e in f) (n_fe . r_e) L_e - (n_f . r_f) omega_f  (= integral of 1/|r| over face f),
/// which is the edge-dyad / face-dyad form of the paper regrouped face by face; the Laplacian is
/// -G rho sum_f omega_f: -4 pi G rho inside, 0 outside.
///
/// Numerical robustness:
///  - omega_f by the atan2 form of van Oosterom & Strackee 1983 (IEEE Trans. Biomed. Eng. 30, 125-126), with
///    the triple product taken from the face's edge vectors; L_e as log1p of a ratio formed without
///    cancellation (from the signed projections of the endpoints on the edge line and the distance to it),
///    so points near faces, edges and vertices are fine. On an edge or vertex, U and grad U are finite and
///    the gradient tensor is infinite (it diverges logarithmically there); exactly on a face it is the mean
///    of the two one-sided limits (which differ by 4 pi G rho n n^T).
///  - The closed form loses a factor of about (distance / face size) * (distance / body size) in precision to
///    cancellation. Where that product exceeds 64 the face integrals are taken by Gauss-Legendre product
///    quadrature on the collapsed triangle instead, with the order chosen to reach round-off (the integrands
///    are analytic there), so the model is exact to rounding (a few 1e-14 relative at worst) everywhere.
///  - Beyond twice the region's radius every face integral is evaluated relative to its value seen from the
///    region's centroid (the subtracted terms sum to zero exactly on a closed surface), which removes the
///    loss of a factor distance / size in the sums: at 10^4 body radii the field agrees with the point mass
///    to a few 1e-15.
/// Cost O(faces) per point; see evaluate(Points) for parallel evaluation.
class PolyhedronGravity {
 public:
  /// Regions must be closed, outward-oriented meshes (mesh_check); density in kg/m^3 (negative: a void).
  /// Degenerate (zero-area) faces contribute nothing. Uses G = gravitational_constant (constants.h).
  explicit PolyhedronGravity(const std::vector<DensityRegion>& regions);

  /// Field at `point` (mesh frame, metres). Throws ConventionError for a non-finite point.
  FieldValue evaluate(const Eigen::Vector3d& point) const;

  /// evaluate() at every row, split over `threads` (0 = all hardware threads); identical for any count.
  std::vector<FieldValue> evaluate(const Points& points, int threads = 0) const;

  /// Solid-angle sum of region `region`'s faces seen from `point`, over 4 pi: 1 inside, 0 outside, 1/2 on a
  /// face (Werner & Scheeres 1997, sec. 2.5). O(faces).
  double winding_number(const Eigen::Vector3d& point, size_t region = 0) const;

  /// Sum of density * winding number over the regions: the density at `point` (0 outside), kg/m^3.
  double density_at(const Eigen::Vector3d& point) const;

  size_t region_count() const { return regions_.size(); }
  size_t face_count() const;

 private:
  struct Face {
    Eigen::Vector3d v[3];            // vertices relative to the region centre
    Eigen::Vector3d edge_unit[3];    // from v[k] to v[k+1]
    Eigen::Vector3d edge_normal[3];  // in-plane, outward: edge_unit x normal
    double edge_length[3];
    Eigen::Vector3d normal;              // unit, outward
    Eigen::Vector3d double_area_normal;  // (v1 - v0) x (v2 - v0)
    double area, plane;                  // plane = normal . v0
    Eigen::Vector3d centroid;
    double radius;  // largest centroid-vertex distance
  };
  struct Region {
    Eigen::Vector3d center;  // volume centroid (or vertex mean), the origin of the face data
    double density = 0;
    double radius = 0;          // largest vertex distance from center
    double plane_area_sum = 0;  // sum_f plane_f area_f = 3 volume
    std::vector<Face> faces;
  };
  FieldValue evaluate_region(const Region& region, const Eigen::Vector3d& point) const;

  // One face's integral I_f and v_f = -grad I_f seen from x (region frame): closed form when rule_order is 0,
  // else the collapsed Gauss rule of that order; with reduced_distance = |x| > 0 both are taken relative to
  // the values seen from the region centre (A_f/|x| and A_f x/|x|^3 subtracted).
  struct FaceTerms {
    double integral = 0;
    Eigen::Vector3d vector = Eigen::Vector3d::Zero();
  };
  FaceTerms face_terms(const Face& face, const Eigen::Vector3d& x, int rule_order, double reduced_distance) const;
  // Plain (unreduced) terms of a face near x, closed form or quadrature to rounding: the fast field's near part.
  FaceTerms near_face_terms(const Face& face, const Eigen::Vector3d& x) const;
  friend class FastPolyhedronField;  // shares the prepared faces and their terms (fast_field.h)

  struct TriangleRuleNode {
    double a, b, weight;  // y = v0 + a e1 + b e2; weight times the face area (field/triangle_rule.h)
  };
  std::vector<Region> regions_;
  std::vector<std::vector<TriangleRuleNode>> rules_;  // rules_[q]: q x q collapsed Gauss rule on the triangle
};

}  // namespace polystokes
