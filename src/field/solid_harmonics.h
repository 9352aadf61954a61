// Complex solid harmonics and the expansions of the fast multipole method for the kernel 1/|x - y|: moments
// of point sources, and the multipole-to-multipole, multipole-to-local and local-to-local translations.
#pragma once

#include <Eigen/Core>
#include <complex>

namespace polystokes {

using Complex = std::complex<double>;

// Normalization (that of Greengard & Rokhlin 1987, J. Comput. Phys. 73, 325-348, written with the factorials
// moved into the harmonics so that every translation is a plain convolution, as in Dehnen 2014, Comput.
// Astrophys. Cosmol. 1, 1): with P_n^m the associated Legendre functions without the Condon-Shortley phase,
//   R_n^m(r) = r^n P_n^m(cos theta) e^{i m phi} / (n + m)!,   I_n^m(r) = (n - m)! P_n^m(cos theta) e^{i m
//   phi} / r^{n+1}, and X_n^{-m} = (-1)^m conj(X_n^m) for both. Then 1/|x - y| = sum_{n,m} conj(R_n^m(y))
//   I_n^m(x)                                  (|y| < |x|), R_n^m(a + b) = sum_{k,l} R_k^l(a)
//   R_{n-k}^{m-l}(b), I_n^m(t - r) = sum_{k,l} conj(R_k^l(r)) I_{n+k}^{m+l}(t)                          (|r|
//   < |t|).
// Only m >= 0 is stored (real sources make X_n^{-m} = (-1)^m conj(X_n^m) hold for every expansion too).

/// Stored harmonics of orders 0..order: (order + 1)(order + 2)/2.
inline int harmonic_count(int order) { return (order + 1) * (order + 2) / 2; }
inline int harmonic_index(int n, int m) { return n * (n + 1) / 2 + m; }

/// X_n^m for any |m| <= n from the stored m >= 0 half.
inline Complex harmonic(const Complex* x, int n, int m) {
  if (m >= 0) return x[harmonic_index(n, m)];
  const Complex c = std::conj(x[harmonic_index(n, -m)]);
  return (m & 1) ? -c : c;
}

/// R_n^m(r), n <= order, m >= 0, into out[harmonic_index(n, m)].
void regular_harmonics(const Eigen::Vector3d& r, int order, Complex* out);

/// I_n^m(r), n <= order, m >= 0 (r != 0).
void irregular_harmonics(const Eigen::Vector3d& r, int order, Complex* out);

/// Expansions carry `channels` independent source densities, each harmonic_count(order) values, channel
/// after channel. All translations add into their output.
struct ExpansionShape {
  int order = 0;
  int channels = 1;
  int count() const { return harmonic_count(order); }
  int size() const { return channels * count(); }
};

/// Multipole of point charges: M_n^m += q conj(R_n^m(y - c)); `charges` has one value per channel.
/// `scratch` holds harmonic_count(order) values.
void add_point_multipole(const ExpansionShape& shape, const Eigen::Vector3d& offset, const double* charges,
                         Complex* multipole, Complex* scratch);

/// Multipole of a triangle (vertices relative to the expansion centre) carrying a constant surface density
/// per channel: M_n^m += density conj(integral over the triangle of R_n^m dA), exact up to rounding.
/// `scratch` holds 3 harmonic_count(order) values. O(order^2).
void add_triangle_multipole(const ExpansionShape& shape, const Eigen::Vector3d (&vertex)[3], double area,
                            const double* densities, Complex* multipole, Complex* scratch);

/// Multipole about a parent centre from one about a child centre; shift = child centre - parent centre.
/// Exact (the moments of degree n need the child's of degree <= n only).
void translate_multipole(const ExpansionShape& shape, const Eigen::Vector3d& shift, const Complex* child,
                         Complex* parent, Complex* scratch);

/// A multipole in the form multipole_to_local reads: per channel both halves m = -n..n at [n^2 + n + m],
/// real parts then imaginary parts; 2 channels (order + 1)^2 values.
void unfold_multipole(const ExpansionShape& shape, const Complex* multipole, double* out);

/// Local expansion (orders 0..local_order) about centre c_A from an unfolded multipole about c_B, t = c_A -
/// c_B, keeping the terms of multipole degree j <= min(order, total - n) for local order n: with total =
/// order it is the Taylor expansion of total degree `order` of the source field about the two centres.
/// `scratch` holds harmonic_count(total) values.
void multipole_to_local(const ExpansionShape& shape, const Eigen::Vector3d& t, int local_order, int total,
                        const double* multipole, Complex* local, Complex* scratch);

/// Local expansion about a new centre (shift = new centre - old centre), orders 0..out_order (exact).
void translate_local(const ExpansionShape& shape, const Eigen::Vector3d& shift, int out_order,
                     const Complex* local, Complex* out, Complex* scratch);

/// Value and gradient of one channel from its local expansion of order >= 1 about the point itself.
inline void local_value_gradient(const Complex* local, double& value, Eigen::Vector3d& gradient) {
  value = local[0].real();
  // R_1^0 = z, R_1^1 = (x + i y)/2, R_1^{-1} = -conj(R_1^1): the degree-1 part is L_1^0 z + Re(L_1^1 (x + i
  // y)).
  gradient = Eigen::Vector3d(local[2].real(), -local[2].imag(), local[1].real());
}

}  // namespace polystokes
