#include "polystokes/sets/transforms.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <cmath>
#include <complex>
#include <limits>
#include <optional>

#include "polystokes/core/errors.h"
#include "polystokes/harmonics/legendre.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

namespace {

using Complex = std::complex<double>;

// Every transform works on fully normalized, phase-free, C_n0 numbers and converts back at the end.
const Convention working_convention{};

void check_matrices(const CoefficientSet& set) {
  const Eigen::Index size = set.degree + 1;
  if (set.degree < 0 || set.C.rows() != size || set.C.cols() != size || set.S.rows() != size ||
      set.S.cols() != size || set.sigma_C.rows() != size || set.sigma_C.cols() != size ||
      set.sigma_S.rows() != size || set.sigma_S.cols() != size)
    throw ConventionError(fmt::format("coefficient matrices of '{}' are not {} x {}", set.body, size, size));
}

std::string vector_text(const Eigen::Vector3d& v) { return fmt::format("({}, {}, {})", v.x(), v.y(), v.z()); }

std::string matrix_text(const Eigen::Matrix3d& q) {
  return fmt::format("[[{}, {}, {}], [{}, {}, {}], [{}, {}, {}]]", q(0, 0), q(0, 1), q(0, 2), q(1, 0),
                     q(1, 1), q(1, 2), q(2, 0), q(2, 1), q(2, 2));
}

// i^p for any integer p.
Complex i_power(int p) {
  switch (((p % 4) + 4) % 4) {
    case 0:
      return {1, 0};
    case 1:
      return {0, 1};
    case 2:
      return {-1, 0};
    default:
      return {0, -1};
  }
}

void check_rotation(const Eigen::Matrix3d& q) {
  if (!q.allFinite()) throw ConventionError("rotation matrix has non-finite entries");
  const double orthogonality = (q * q.transpose() - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff();
  if (orthogonality > 1e-10)
    throw ConventionError(
        fmt::format("matrix {} is not orthogonal (|Q Q^T - 1| = {:.3g})", matrix_text(q), orthogonality));
  if (q.determinant() < 0)
    throw ConventionError(
        fmt::format("matrix {} is a reflection (determinant -1), not a rotation", matrix_text(q)));
}

}  // namespace

CoefficientSet rescale_reference_radius(const CoefficientSet& set, double radius) {
  check_matrices(set);
  if (!(radius > 0) || !std::isfinite(radius))
    throw ConventionError(fmt::format("new reference radius must be positive, got {} m", radius));
  if (!(set.reference_radius > 0))
    throw ConventionError("the set has no reference radius; it cannot be rescaled");
  CoefficientSet out = set;
  const double ratio = set.reference_radius / radius;
  for (int n = 0; n <= set.degree; ++n) {
    const double factor = std::pow(ratio, n);
    for (int m = 0; m <= n; ++m) {
      out.C(n, m) *= factor;
      out.S(n, m) *= factor;
      out.sigma_C(n, m) *= factor;
      out.sigma_S(n, m) *= factor;
    }
  }
  out.reference_radius = radius;
  out.history.push_back(fmt::format("reference radius changed from {} m to {} m (C, S times (R_old/R_new)^n)",
                                    set.reference_radius, radius));
  return out;
}

CoefficientSet truncate_degree(const CoefficientSet& set, int degree) {
  check_matrices(set);
  if (degree < 0 || degree > set.degree)
    throw ConventionError(fmt::format("cannot cut a set of degree {} at degree {}: give 0 to {}", set.degree,
                                      degree, set.degree));
  CoefficientSet out = set;
  const Eigen::Index size = degree + 1;
  out.C = set.C.topLeftCorner(size, size);
  out.S = set.S.topLeftCorner(size, size);
  out.sigma_C = set.sigma_C.topLeftCorner(size, size);
  out.sigma_S = set.sigma_S.topLeftCorner(size, size);
  out.degree = degree;
  out.history.push_back(
      fmt::format("degree cut from {} to {} (degrees above {} dropped)", set.degree, degree, degree));
  return out;
}

CoefficientSet rescale_gm(const CoefficientSet& set, double gm) {
  check_matrices(set);
  if (!(gm > 0) || !std::isfinite(gm))
    throw ConventionError(fmt::format("new GM must be positive, got {}", gm));
  if (!(set.gm > 0)) throw ConventionError("the set has no GM; it cannot be rescaled");
  CoefficientSet out = set;
  const double factor = set.gm / gm;
  out.C *= factor;
  out.S *= factor;
  out.sigma_C *= factor;
  out.sigma_S *= factor;
  out.gm = gm;
  out.history.push_back(
      fmt::format("GM changed from {} to {} m^3 s^-2 (C, S times GM_old/GM_new = {})", set.gm, gm, factor));
  return out;
}

Eigen::Vector3d center_of_mass_offset(const CoefficientSet& set) {
  check_matrices(set);
  if (set.degree < 1) return Eigen::Vector3d::Zero();
  const CoefficientSet work = expressed_in(set, working_convention);
  if (work.C(0, 0) == 0) throw ConventionError("C00 is zero; the centre of mass is undefined");
  return std::sqrt(3.0) * set.reference_radius / work.C(0, 0) *
         Eigen::Vector3d(work.C(1, 1), work.S(1, 1), work.C(1, 0));
}

// Translation. With G_n^m(x) the coefficient of e^{-imu} in l_u(x)^n / n!, l_u(x) = z + i(x cos u + y sin u)
// (Whittaker's representation, as in moments.cpp), G_n^m = i^m r^n Pnm e^{im lon} / (n+m)! for m >= 0 and
// G_n^{-m} = (-1)^m conj(G_n^m). Expanding l_u(a + b)^n / n! binomially gives the addition theorem
//   G_n^m(a + b) = sum_{k <= n} sum_{|l| <= k} G_k^l(a) G_{n-k}^{m-l}(b).
// Moments mu_n^m = int G_n^m(x) dm about the old origin become, about old origin + d,
//   mu'_n^m = int G_n^m(x - d) dm = sum_{k,l} G_{n-k}^{m-l}(-d) mu_k^l.
// Scaled by K_nm = 1/sqrt((n-m)!(n+m)!) (hats), every factor is O(r^n) and the weights become
//   sqrt(binom(n+m, k+l) binom(n-m, k-l)) <= 2^n.
// Lengths are in units of the reference radius and masses in units of M, so
//   mu^_n^m = i^m sqrt((2n+1)/(2-d_m0)) (C + iS)_nm  (fully normalized),
//   G^_n^m(x) = i^m r^n Pbar_nm(sin lat) e^{im lon} / sqrt((2-d_m0)(2n+1)).
namespace {

// A note when the translation's rounding bound exceeds 1e-10 of a degree's scale: its RMS, or 1e-3 of the
// largest RMS of the degrees from it on when that is larger (a degree that vanishes, like degree 1 about the
// centre of mass, is judged against the body's following terms, as compare does).
std::optional<std::string> shift_rounding_note(const Eigen::VectorXd& bound, const Eigen::VectorXd& rms) {
  constexpr double threshold = 1e-10;  // computed sets hold 1e-13; 1e-10 is a loss worth saying
  constexpr double relative_floor = 1e-3;
  int first = -1, worst = -1;
  double worst_ratio = 0, following = 0;
  for (Eigen::Index n = bound.size() - 1; n >= 0; --n) {
    following = std::max(following, rms[n]);
    const double scale = std::max(rms[n], relative_floor * following);
    if (scale == 0) continue;
    const double ratio = bound[n] / scale;
    if (ratio > threshold) first = int(n);
    if (ratio > worst_ratio) worst_ratio = ratio, worst = int(n);
  }
  if (first < 0) return std::nullopt;
  return fmt::format(
      "Accuracy after the origin shift: rounding in the translation sums is amplified like ((r_B + "
      "|d|)/R')^n "
      "(R' the body's farthest point from the new origin); its bound exceeds {} of the coefficients from "
      "degree {} "
      "on and reaches {:.2g} of the RMS at degree {}. Computing the set about the wanted origin directly "
      "(compute --origin X,Y,Z) avoids this loss.",
      threshold, first, worst_ratio, worst);
}

}  // namespace

CoefficientSet shift_origin(const CoefficientSet& set, const Eigen::Vector3d& shift,
                            const ShiftOptions& options) {
  check_matrices(set);
  constexpr int max_shift_degree = 500;
  if (set.degree > max_shift_degree)
    throw ResourceError(fmt::format("shifting a degree-{} set is O(degree^4) work; refusing above degree {}",
                                    set.degree, max_shift_degree));
  if (!shift.allFinite()) throw ConventionError("shift vector has non-finite components");
  if (!(set.reference_radius > 0))
    throw ConventionError("the set has no reference radius; it cannot be shifted");
  const bool known_brillouin = set.brillouin_radius > 0;
  const double brillouin = known_brillouin ? set.brillouin_radius : set.reference_radius;
  const double length = shift.norm();
  const bool outside = length > brillouin;
  if (outside && !options.allow_outside)
    throw ShiftOutsideError(fmt::format(
        "a shift of {:.9g} m moves the expansion origin outside the {} ({:.9g} m) of '{}'; the shifted "
        "series would hold only outside {:.9g} m about the new origin",
        length, known_brillouin ? "Brillouin sphere" : "reference sphere (Brillouin radius unknown)",
        brillouin, set.body, brillouin + length));

  const int N = set.degree;
  const double R = set.reference_radius;
  const CoefficientSet work = expressed_in(set, working_convention);

  // sqrt(binom(a, b)) for a <= 2N from Pascal's triangle (exact integers up to 2^53, one rounding per step
  // after).
  std::vector<std::vector<double>> root_binomial(size_t(2 * N + 1));
  {
    std::vector<double> row{1.0};
    for (int a = 0; a <= 2 * N; ++a) {
      if (a > 0) {
        std::vector<double> next(size_t(a + 1), 1.0);
        for (int b = 1; b < a; ++b) next[size_t(b)] = row[size_t(b - 1)] + row[size_t(b)];
        row.swap(next);
      }
      root_binomial[size_t(a)].resize(row.size());
      for (size_t b = 0; b < row.size(); ++b) root_binomial[size_t(a)][b] = std::sqrt(row[b]);
    }
  }
  auto weight = [&](int a, int b) { return root_binomial[size_t(a)][size_t(b)]; };

  // G^_j^q(-d / R) for j <= N, |q| <= j, stored at j*j + j + q.
  std::vector<Complex> g(size_t(N + 1) * size_t(N + 1), Complex(0, 0));
  g[0] = 1.0;
  const Eigen::Vector3d b = -shift / R;
  const double rb = b.norm();
  if (rb > 0 && N > 0) {
    const Eigen::MatrixXd legendre = fully_normalized_legendre(N, b.z() / rb);
    const double lon = std::atan2(b.y(), b.x());
    double power = 1;
    for (int j = 0; j <= N; ++j, power *= rb) {
      for (int q = 0; q <= j; ++q) {
        const Complex value = i_power(q) * power * legendre(j, q) * std::polar(1.0, q * lon) /
                              std::sqrt((q == 0 ? 1.0 : 2.0) * (2.0 * j + 1.0));
        g[size_t(j * j + j + q)] = value;
        if (q > 0) g[size_t(j * j + j - q)] = (q % 2 ? -1.0 : 1.0) * std::conj(value);
      }
    }
  }
  auto g_at = [&](int j, int q) { return g[size_t(j * j + j + q)]; };
  // s_nm = sqrt((2n+1)/(2-d_m0)): mu^ = i^m s (C + iS), C + iS = i^-m mu^ / s.
  auto s_factor = [](int n, int m) { return std::sqrt((2.0 * n + 1.0) / (m == 0 ? 1.0 : 2.0)); };

  CoefficientSet out = set;
  out.C.setZero();
  out.S.setZero();
  out.sigma_C.setZero();
  out.sigma_S.setZero();
  // Running rounding bound of each sum, |fl(sum x_i) - sum x_i| <= gamma_k sum |x_i| with gamma_k ~ k u
  // (Higham 2002, Accuracy and Stability of Numerical Algorithms, 2nd ed., sec. 4.2): far shifts make the
  // terms much larger than their sum, and this says by how much at each degree.
  Eigen::VectorXd rounding_bound = Eigen::VectorXd::Zero(N + 1), degree_rms = Eigen::VectorXd::Zero(N + 1);
  for (int n = 0; n <= N; ++n) {
    double bound_square = 0, rms_square = 0;
    const double gamma = 2.0 * (n + 1) * (n + 2) * std::numeric_limits<double>::epsilon();
    for (int m = 0; m <= n; ++m) {
      const Complex beta = i_power(-m) / s_factor(n, m);
      double c_out = 0, s_out = 0, var_c = 0, var_s = 0, abs_c = 0, abs_s = 0;
      for (int k = 0; k <= n; ++k) {
        const int j = n - k;
        for (int lp = 0; lp <= k; ++lp) {
          // Input (k, lp) enters through l = +lp (as c) and l = -lp (as conj c): out += z1 c + z2 conj(c).
          Complex z1(0, 0), z2(0, 0);
          const Complex alpha = i_power(lp) * s_factor(k, lp);
          const int q1 = m - lp;
          if (q1 >= -j && q1 <= j)
            z1 = beta * weight(n + m, k + lp) * weight(n - m, k - lp) * g_at(j, q1) * alpha;
          const int q2 = m + lp;
          if (lp > 0 && q2 <= j)
            z2 = beta * weight(n + m, k - lp) * weight(n - m, k + lp) * g_at(j, q2) * (lp % 2 ? -1.0 : 1.0) *
                 std::conj(alpha);
          if (z1 == Complex(0, 0) && z2 == Complex(0, 0)) continue;
          const double cc = (z1 + z2).real(), cs = -(z1 - z2).imag();
          const double sc = (z1 + z2).imag(), ss = (z1 - z2).real();
          const double c_in = work.C(k, lp), s_in = work.S(k, lp);
          c_out += cc * c_in + cs * s_in;
          s_out += sc * c_in + ss * s_in;
          abs_c += std::abs(cc * c_in) + std::abs(cs * s_in);
          abs_s += std::abs(sc * c_in) + std::abs(ss * s_in);
          const double vc = work.sigma_C(k, lp) * work.sigma_C(k, lp),
                       vs = work.sigma_S(k, lp) * work.sigma_S(k, lp);
          var_c += cc * cc * vc + cs * cs * vs;
          var_s += sc * sc * vc + ss * ss * vs;
        }
      }
      out.C(n, m) = c_out;
      out.sigma_C(n, m) = std::sqrt(var_c);
      // Zonal sine terms vanish identically; the sum only holds rounding there.
      out.S(n, m) = m == 0 ? 0.0 : s_out;
      out.sigma_S(n, m) = m == 0 ? 0.0 : std::sqrt(var_s);
      bound_square += gamma * gamma * (abs_c * abs_c + (m == 0 ? 0.0 : abs_s * abs_s));
      rms_square += c_out * c_out + (m == 0 ? 0.0 : s_out * s_out);
    }
    rounding_bound[n] = std::sqrt(bound_square);
    degree_rms[n] = std::sqrt(rms_square);
  }
  out.convention = working_convention;
  out = expressed_in(out, set.convention);

  // The new origin is placed in the mesh frame only when the old one is and the shift's direction is.
  out.origin_known = set.origin_known && (set.axes_known || shift.norm() == 0);
  out.origin_in_mesh = out.origin_known
                           ? Eigen::Vector3d(set.origin_in_mesh + set.axes_in_mesh.transpose() * shift)
                           : Eigen::Vector3d::Zero();
  const double tiny = 1e-9 * R;
  if (N >= 1 && out.C(0, 0) != 0 && center_of_mass_offset(out).norm() <= tiny)
    out.origin = OriginKind::center_of_mass;
  else if (out.origin_known && out.origin_in_mesh.norm() <= tiny)
    out.origin = OriginKind::mesh;
  else
    out.origin = OriginKind::shifted;
  if (known_brillouin) out.brillouin_radius = brillouin + length;
  out.history.push_back(fmt::format(
      "expansion origin shifted by {} m (set frame) to {}, translation of degrees 0..{} by the addition "
      "theorem (exact but for rounding, see the notes)",
      vector_text(shift),
      out.origin_known ? vector_text(out.origin_in_mesh) + " m (mesh frame)"
                       : "a point unknown in the mesh frame",
      N));
  out.notes.push_back(
      fmt::format("After the origin shift of {:.9g} m the series converges only outside "
                  "{:.9g} m about the new origin ({} radius {:.9g} m plus the shift length).",
                  length, brillouin + length, known_brillouin ? "old Brillouin" : "reference", brillouin));
  if (outside)
    out.notes.push_back(
        fmt::format("CAUTION: the shift ({:.9g} m) is longer than the {} radius ({:.9g} m): "
                    "the new origin lies outside the body's bounding sphere.",
                    length, known_brillouin ? "Brillouin" : "reference", brillouin));
  if (const auto loss = shift_rounding_note(rounding_bound, degree_rms)) out.notes.push_back(*loss);
  return out;
}

// Real Wigner-D matrices degree by degree for one rotation, O(l^2) work and memory per degree.
//
// Q is split as Rz(alpha) Ry(beta) Rz(gamma). Rotations about z act on the real harmonics exactly
// (cos/sin pairs of order k turn by k alpha). The rotation about y uses the Wigner functions
// d^l_{mu,nu}(beta) of the complex harmonics, built for fixed (mu, nu) by the three-term recurrence in l
//   (l-1) sqrt((l^2-mu^2)(l^2-nu^2)) d^l = (2l-1)((l-1) l cos(beta) - mu nu) d^{l-1}
//                                          - l sqrt(((l-1)^2-mu^2)((l-1)^2-nu^2)) d^{l-2}
// (Varshalovich, Moskalev & Khersonskii 1988, Quantum Theory of Angular Momentum, sec. 4.8.2; from memory)
// from the border values at l = max(|mu|, |nu|),
//   d^l_{l,nu} = (-1)^(l-nu) B(l,nu),   d^l_{nu,l} = B(l,nu),
//   d^l_{-l,nu} = B(l,-nu),              d^l_{nu,-l} = (-1)^(l+nu) B(l,-nu),
//   B(l,nu) = sqrt(binom(2l, l+nu)) cos(beta/2)^(l+nu) sin(beta/2)^(l-nu)  (Wigner's form, ibid. 4.3).
// For fixed orders this is the recurrence of Jacobi polynomials in cos(beta), stable upwards like the
// Legendre recursions; B is carried from degree to degree by one bounded factor, so nothing overflows.
// (The Ivanic & Ruedenberg 1996 recursion for real harmonics was tried first; in double precision it
// loses about a tenth of a digit per degree, ~1e-8 at degree 100, so it serves only as a test reference.)
// With Y^mu the orthonormal complex harmonics (Condon-Shortley phase included) and Pbar the 4pi functions,
// Z_mu = sqrt(4pi) eps_mu Y^mu = Pbar_{l|mu|} e^{i mu lon} / sqrt(2 - d_mu0), eps_mu = (-1)^mu for mu > 0 and
// 1 otherwise; the real harmonics are Y_k = (Z_k + Z_-k)/sqrt(2), Y_-k = (Z_k - Z_-k)/(i sqrt(2)), Y_0 = Z_0.
RealWignerD::RealWignerD(const Eigen::Matrix3d& q) {
  check_rotation(q);
  // Rz(a) Ry(b) Rz(g): q00 + q11 = (1 + cos b) cos(a + g),  q10 - q01 = (1 + cos b) sin(a + g),
  //                    q00 - q11 = (cos b - 1) cos(a - g),  q10 + q01 = (cos b - 1) sin(a - g),
  //                    (q02, q12) = sin b (cos a, sin a),   (q20, q21) = sin b (-cos g, sin g).
  // The angle combination that matters near b = 0 (a + g) is taken from the upper block, the one that
  // matters near b = pi (a - g) likewise, and the other from the third row and column, whose error is damped
  // by the same small factor; so Q is reproduced to rounding.
  beta_ = std::atan2(std::hypot(q(0, 2), q(1, 2)), q(2, 2));
  const double a_column = std::atan2(q(1, 2), q(0, 2)), g_row = std::atan2(q(2, 1), -q(2, 0));
  double sum, difference;
  if (q(2, 2) >= 0) {
    sum = std::atan2(q(1, 0) - q(0, 1), q(0, 0) + q(1, 1));
    difference = a_column - g_row;
  } else {
    sum = a_column + g_row;
    difference = std::atan2(-(q(1, 0) + q(0, 1)), -(q(0, 0) - q(1, 1)));
  }
  alpha_ = 0.5 * (sum + difference);
  gamma_ = 0.5 * (sum - difference);
  // (a, g) and (a + pi, g + pi) give the same sum and difference modulo 2 pi; the third column decides.
  if (std::cos(alpha_) * q(0, 2) + std::sin(alpha_) * q(1, 2) < 0) {
    alpha_ += M_PI;
    gamma_ += M_PI;
  }
  cos_beta_ = std::cos(beta_);
  cos_half_ = std::cos(beta_ / 2);
  sin_half_ = std::sin(beta_ / 2);
}

const Eigen::MatrixXd& RealWignerD::next() {
  ++l_;
  advance_wigner_d();
  build_real();
  return real_;
}

void RealWignerD::advance_wigner_d() {
  const int l = l_;
  // Border factors B(l, nu), nu = -l..l, from those of degree l - 1 by the ratio of the closed forms.
  std::vector<double> border(size_t(2 * l + 1));
  if (l == 0) {
    border[0] = 1;
  } else if (l == 1) {
    border[0] = sin_half_ * sin_half_;
    border[1] = std::sqrt(2.0) * cos_half_ * sin_half_;
    border[2] = cos_half_ * cos_half_;
  } else {
    const double c2 = cos_half_ * cos_half_, s2 = sin_half_ * sin_half_, top = 2.0 * l * (2.0 * l - 1.0);
    for (int nu = -l; nu <= l; ++nu) {
      border[size_t(nu + l)] =
          nu >= 0 ? border_[size_t(nu - 1 + l - 1)] * std::sqrt(top / ((l + nu) * (l + nu - 1.0))) * c2
                  : border_[size_t(nu + 1 + l - 1)] * std::sqrt(top / ((l - nu) * (l - nu - 1.0))) * s2;
    }
  }
  Eigen::MatrixXd d(2 * l + 1, 2 * l + 1);
  // Interior by the recurrence (root[k] = sqrt(l^2 - k^2), root1[k] = sqrt((l-1)^2 - k^2)), then the border.
  if (l >= 2) {
    std::vector<double> root(size_t(l + 1)), root1(size_t(l + 1));
    for (int k = 0; k <= l; ++k) {
      root[size_t(k)] = std::sqrt(double(l - k) * (l + k));
      root1[size_t(k)] = k <= l - 1 ? std::sqrt(double(l - 1 - k) * (l - 1 + k)) : 0.0;
    }
    const double lead = (2.0 * l - 1.0), lower = 1.0 / (l - 1.0);
    for (int nu = -l + 1; nu <= l - 1; ++nu) {
      const double rn = root[size_t(std::abs(nu))], rn1 = root1[size_t(std::abs(nu))];
      for (int mu = -l + 1; mu <= l - 1; ++mu) {
        const double prev2 =
            std::abs(mu) <= l - 2 && std::abs(nu) <= l - 2 ? d2_(mu + l - 2, nu + l - 2) : 0.0;
        d(mu + l, nu + l) =
            (lead * ((l - 1.0) * l * cos_beta_ - double(mu) * nu) * d1_(mu + l - 1, nu + l - 1) -
             l * root1[size_t(std::abs(mu))] * rn1 * prev2) *
            lower / (root[size_t(std::abs(mu))] * rn);
      }
    }
  } else if (l == 1) {
    d(1, 1) = cos_beta_;  // d^1_00
  }
  for (int k = -l; k <= l; ++k) {
    d(l + l, k + l) = ((l - k) % 2 ? -1.0 : 1.0) * border[size_t(k + l)];  // d_{l,k}
    d(k + l, l + l) = border[size_t(k + l)];                               // d_{k,l}
    d(0, k + l) = border[size_t(-k + l)];                                  // d_{-l,k}
    d(k + l, 0) = ((l + k) % 2 ? -1.0 : 1.0) * border[size_t(-k + l)];     // d_{k,-l}
  }
  border_.swap(border);
  d2_.swap(d1_);
  d1_.swap(d);
}

void RealWignerD::build_real() {
  const int l = l_;
  // In the real basis the y rotation is block diagonal (it commutes with y -> -y, which keeps cosines and
  // negates sines). With dt_{mu,nu} = eps_mu eps_nu d_{mu,nu} (so Z(Ry x) = dt Z(x)) and Y = U Z as above,
  // w_0 = 1, w_k = 1/sqrt(2):
  //   cos block Dy(k, j)   = w_k w_j (sum of dt(+-k, +-j) over the distinct sign choices),  k, j >= 0
  //   sin block Dy(-k, -j) = (dt(k,j) - dt(k,-j) - dt(-k,j) + dt(-k,-j)) / 2,                k, j > 0
  auto eps = [](int mu) { return mu > 0 && mu % 2 ? -1.0 : 1.0; };
  auto dt = [&](int mu, int nu) { return eps(mu) * eps(nu) * d1_(mu + l, nu + l); };
  const double root_half = std::sqrt(0.5);
  Eigen::MatrixXd cos_block(l + 1, l + 1), sin_block(l + 1, l + 1);
  for (int j = 0; j <= l; ++j) {
    for (int k = 0; k <= l; ++k) {
      double sum = dt(k, j);
      if (j > 0) sum += dt(k, -j);
      if (k > 0) sum += dt(-k, j);
      if (j > 0 && k > 0) sum += dt(-k, -j);
      cos_block(k, j) = (k == 0 ? 1.0 : root_half) * (j == 0 ? 1.0 : root_half) * sum;
      sin_block(k, j) = k > 0 && j > 0 ? 0.5 * (dt(k, j) - dt(k, -j) - dt(-k, j) + dt(-k, -j)) : 0.0;
    }
  }
  // D = Dz(alpha) Dy(beta) Dz(gamma); Dz(t) turns each pair (cos k, sin k) by
  // [cos kt, -sin kt; sin kt, cos kt].
  std::vector<double> ca(size_t(l + 1)), sa(size_t(l + 1)), cg(size_t(l + 1)), sg(size_t(l + 1));
  for (int k = 0; k <= l; ++k) {
    ca[size_t(k)] = std::cos(k * alpha_);
    sa[size_t(k)] = std::sin(k * alpha_);
    cg[size_t(k)] = std::cos(k * gamma_);
    sg[size_t(k)] = std::sin(k * gamma_);
  }
  real_.resize(2 * l + 1, 2 * l + 1);
  for (int j = 0; j <= l; ++j) {
    for (int k = 0; k <= l; ++k) {
      const double c = cos_block(k, j), s = sin_block(k, j);
      const double ck = ca[size_t(k)], sk = sa[size_t(k)], cj = cg[size_t(j)], sj = sg[size_t(j)];
      real_(l + k, l + j) = ck * c * cj - sk * s * sj;                      // (cos k, cos j)
      if (j > 0) real_(l + k, l - j) = -(ck * c * sj + sk * s * cj);        // (cos k, sin j)
      if (k > 0) real_(l - k, l + j) = sk * c * cj + ck * s * sj;           // (sin k, cos j)
      if (k > 0 && j > 0) real_(l - k, l - j) = ck * s * cj - sk * c * sj;  // (sin k, sin j)
    }
  }
}

CoefficientSet rotate_set(const CoefficientSet& set, const Eigen::Matrix3d& rotation, FrameKind frame) {
  check_matrices(set);
  RealWignerD sequence(rotation);
  CoefficientSet work = expressed_in(set, working_convention);
  for (int n = 0; n <= set.degree; ++n) {
    // Real coefficient vector of degree n, m = -n..n (m < 0: S of order |m|).
    Eigen::VectorXd a(2 * n + 1), var(2 * n + 1);
    for (int m = 0; m <= n; ++m) {
      a(n + m) = work.C(n, m);
      var(n + m) = work.sigma_C(n, m) * work.sigma_C(n, m);
      if (m > 0) {
        a(n - m) = work.S(n, m);
        var(n - m) = work.sigma_S(n, m) * work.sigma_S(n, m);
      }
    }
    // U_new(x) = U_old(Q^T x) = a . Y(Q^T x) = a . D(Q)^T Y(x), so a_new = D(Q) a.
    const Eigen::MatrixXd& D = sequence.next();
    const Eigen::VectorXd b = D * a;
    const Eigen::VectorXd var_b = D.cwiseAbs2() * var;
    for (int m = 0; m <= n; ++m) {
      work.C(n, m) = b(n + m);
      work.sigma_C(n, m) = std::sqrt(var_b(n + m));
      work.S(n, m) = m > 0 ? b(n - m) : 0.0;
      work.sigma_S(n, m) = m > 0 ? std::sqrt(var_b(n - m)) : 0.0;
    }
  }
  CoefficientSet out = expressed_in(work, set.convention);
  if (set.axes_known) out.axes_in_mesh = rotation * set.axes_in_mesh;
  out.frame = frame;
  drop_frame_orientation(out);  // before the rotation's line, which callers may complete
  out.history.push_back(
      fmt::format("axes rotated (real Wigner-D, degrees 0..{}): x_new = Q x_old with Q = {}", set.degree,
                  matrix_text(rotation)));
  return out;
}

CoefficientSet rotate_about_z(const CoefficientSet& set, double angle) {
  check_matrices(set);
  if (!std::isfinite(angle)) throw ConventionError("rotation angle is not finite");
  // Normalization and phase factors depend on (n, m) only, so they commute with this map.
  CoefficientSet out = set;
  for (int m = 1; m <= set.degree; ++m) {
    const double c = std::cos(m * angle), s = std::sin(m * angle);
    for (int n = m; n <= set.degree; ++n) {
      out.C(n, m) = set.C(n, m) * c - set.S(n, m) * s;
      out.S(n, m) = set.C(n, m) * s + set.S(n, m) * c;
      out.sigma_C(n, m) = std::hypot(c * set.sigma_C(n, m), s * set.sigma_S(n, m));
      out.sigma_S(n, m) = std::hypot(s * set.sigma_C(n, m), c * set.sigma_S(n, m));
    }
  }
  const Eigen::Matrix3d rotation = euler_zyz_matrix(angle, 0, 0);
  if (set.axes_known) out.axes_in_mesh = rotation * set.axes_in_mesh;
  out.frame = FrameKind::rotated;
  drop_frame_orientation(out);
  out.history.push_back(fmt::format("axes rotated about z by {} rad (longitudes + {} rad)", angle, angle));
  return out;
}

Eigen::Matrix3d euler_zyz_matrix(double alpha, double beta, double gamma) {
  auto rz = [](double angle) {
    Eigen::Matrix3d r;
    r << std::cos(angle), -std::sin(angle), 0, std::sin(angle), std::cos(angle), 0, 0, 0, 1;
    return r;
  };
  Eigen::Matrix3d ry;
  ry << std::cos(beta), 0, std::sin(beta), 0, 1, 0, -std::sin(beta), 0, std::cos(beta);
  return rz(alpha) * ry * rz(gamma);
}

Eigen::Matrix3d principal_axes_rotation(const CoefficientSet& set) {
  check_matrices(set);
  if (set.degree < 2)
    throw ConventionError("principal axes need the degree-2 terms; the set has degree " +
                          std::to_string(set.degree));
  const CoefficientSet work = expressed_in(set, working_convention);
  const double c00 = work.C(0, 0);
  if (c00 == 0) throw ConventionError("C00 is zero; the principal axes are undefined");
  // Unnormalized degree-2 terms in units of M R^2: C20 = Jzz - (Jxx + Jyy)/2, C21 = Jxz, S21 = Jyz,
  // C22 = (Jxx - Jyy)/4, S22 = Jxy/2, with J = int x x^T dm (Heiskanen & Moritz 1967, Physical Geodesy,
  // sec. 2-13, eqs. 2-90 and 2-91; written here from memory in the J form).
  const double c20 = std::sqrt(5.0) * work.C(2, 0) / c00;
  const double c21 = std::sqrt(5.0 / 3.0) * work.C(2, 1) / c00,
               s21 = std::sqrt(5.0 / 3.0) * work.S(2, 1) / c00;
  const double c22 = std::sqrt(5.0 / 12.0) * work.C(2, 2) / c00,
               s22 = std::sqrt(5.0 / 12.0) * work.S(2, 2) / c00;
  Eigen::Matrix3d J;
  J << -c20 / 3.0 + 2.0 * c22, 2.0 * s22, c21,  //
      2.0 * s22, -c20 / 3.0 - 2.0 * c22, s21,   //
      c21, s21, 2.0 * c20 / 3.0;
  // Parallel-axis part about the origin: J_origin = J_com + c c^T, c = centre of mass / R from degree 1.
  const Eigen::Vector3d c = std::sqrt(3.0) * Eigen::Vector3d(work.C(1, 1), work.S(1, 1), work.C(1, 0)) / c00;
  J -= c * c.transpose();
  J -= J.trace() / 3.0 * Eigen::Matrix3d::Identity();
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(J);
  const Eigen::Vector3d e = solver.eigenvalues();  // ascending in J = descending in inertia
  const double scale = e.cwiseAbs().maxCoeff();
  const double gap = std::min(e(1) - e(0), e(2) - e(1));
  if (!(scale > 0) || gap < 1e-9 * scale)
    throw ConventionError(
        fmt::format("principal axes of '{}' are undefined: two principal moments agree to "
                    "{:.2g} of their spread (nearly axisymmetric or spherical)",
                    set.body, scale > 0 ? gap / scale : 0.0));
  Eigen::Matrix3d in_set;
  for (int k = 0; k < 3; ++k) in_set.col(k) = solver.eigenvectors().col(2 - k);
  // Same sign rule as mass_properties, applied in the mesh frame.
  const Eigen::Matrix3d& A = set.axes_in_mesh;
  const Eigen::Matrix3d in_mesh = with_axis_sign_rule(A.transpose() * in_set);
  return (A * in_mesh).transpose();
}

CoefficientSet rotate_to_principal_axes(const CoefficientSet& set) {
  CoefficientSet out = rotate_set(set, principal_axes_rotation(set), FrameKind::principal);
  out.history.back() += " (principal axes from the degree-2 terms about the centre of mass)";
  return out;
}

}  // namespace polystokes
