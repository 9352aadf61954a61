#include "field/solid_harmonics.h"

#include <algorithm>

namespace polystokes {

// Both recurrences follow from the Legendre recurrences (n - m) P_n^m = (2n - 1) cos(theta) P_{n-1}^m -
// (n + m - 1) P_{n-2}^m and P_m^m = (2m - 1) sin(theta) P_{m-1}^{m-1} (Abramowitz & Stegun 1964, 8.5.3 and
// 8.6.18 without the Condon-Shortley phase) in Cartesian form, so no angle is ever formed.
void regular_harmonics(const Eigen::Vector3d& r, int order, Complex* out) {
  const Complex w(r.x(), r.y());
  const double z = r.z(), r2 = r.squaredNorm();
  out[0] = 1.0;
  for (int m = 0; m <= order; ++m) {
    if (m > 0) out[harmonic_index(m, m)] = out[harmonic_index(m - 1, m - 1)] * w / (2.0 * m);
    if (m + 1 <= order) out[harmonic_index(m + 1, m)] = z * out[harmonic_index(m, m)];
    for (int n = m + 2; n <= order; ++n)
      out[harmonic_index(n, m)] =
          ((2.0 * n - 1.0) * z * out[harmonic_index(n - 1, m)] - r2 * out[harmonic_index(n - 2, m)]) /
          (double(n - m) * double(n + m));
  }
}

void irregular_harmonics(const Eigen::Vector3d& r, int order, Complex* out) {
  const Complex w(r.x(), r.y());
  const double z = r.z(), inv_r2 = 1.0 / r.squaredNorm();
  out[0] = std::sqrt(inv_r2);
  for (int m = 0; m <= order; ++m) {
    if (m > 0) out[harmonic_index(m, m)] = out[harmonic_index(m - 1, m - 1)] * w * ((2.0 * m - 1.0) * inv_r2);
    if (m + 1 <= order) out[harmonic_index(m + 1, m)] = ((2.0 * m + 1.0) * z * inv_r2) * out[harmonic_index(m, m)];
    for (int n = m + 2; n <= order; ++n)
      out[harmonic_index(n, m)] = ((2.0 * n - 1.0) * z * out[harmonic_index(n - 1, m)] -
                                   (double(n - 1 + m) * double(n - 1 - m)) * out[harmonic_index(n - 2, m)]) *
                                  inv_r2;
  }
}

void add_point_multipole(const ExpansionShape& shape, const Eigen::Vector3d& offset, const double* charges,
                         Complex* multipole, Complex* scratch) {
  regular_harmonics(offset, shape.order, scratch);
  const int count = shape.count();
  for (int c = 0; c < shape.channels; ++c) {
    const double q = charges[c];
    Complex* m = multipole + c * count;
    for (int i = 0; i < count; ++i) m[i] += q * std::conj(scratch[i]);
  }
}

namespace {

// out_n = R_1(b) * x_{n-1} (the convolution of the addition theorem), with R_1^0 = z, R_1^1 = (x + i y)/2,
// R_1^{-1} = -conj(R_1^1), for every m >= 0 of order n.
void multiply_first_order(const Eigen::Vector3d& b, int n, const Complex* x, Complex* out) {
  const Complex plus(0.5 * b.x(), 0.5 * b.y()), minus = -std::conj(plus);
  for (int m = 0; m <= n; ++m) {
    Complex sum = 0;
    if (m <= n - 1) sum += b.z() * x[harmonic_index(n - 1, m)];
    if (std::abs(m - 1) <= n - 1) sum += plus * harmonic(x, n - 1, m - 1);
    if (m + 1 <= n - 1) sum += minus * x[harmonic_index(n - 1, m + 1)];
    out[harmonic_index(n, m)] = sum;
  }
}

}  // namespace

void add_triangle_multipole(const ExpansionShape& shape, const Eigen::Vector3d (&vertex)[3], double area,
                            const double* densities, Complex* multipole, Complex* scratch) {
  // The addition theorem and homogeneity make R_n(l1 a + l2 b + l3 c) = sum_{i+j+k=n} l1^i l2^j l3^k
  // R_i(a) R_j(b) R_k(c) (products: the convolution over m), and R_n = R_1^n / n!, so with the barycentric
  // integrals of l1^i l2^j l3^k over the triangle, 2A i! j! k! / (n + 2)! (common practice in finite
  // elements), the moment is 2A h_n / (n + 2)!, h_n = sum_{i+j+k=n} R_1(a)^i R_1(b)^j R_1(c)^k the complete
  // homogeneous sum, by two recursions h^(2)_n = R_1(b) h^(2)_{n-1} + R_1(a)^n, h_n = R_1(c) h_{n-1} +
  // h^(2)_n. A density polynomial in (l1, l2, l3) only changes the factorial weights.
  const int order = shape.order, count = shape.count();
  Complex *first = scratch, *second = scratch + count, *third = scratch + 2 * count;
  regular_harmonics(vertex[0], order, first);
  double factorial = 1;
  for (int n = 0; n <= order; ++n) {
    if (n > 0) factorial *= n;
    for (int m = 0; m <= n; ++m) first[harmonic_index(n, m)] *= factorial;  // R_1(a)^n = n! R_n(a)
  }
  second[0] = third[0] = 1.0;
  for (int n = 1; n <= order; ++n) {
    multiply_first_order(vertex[1], n, second, second);
    multiply_first_order(vertex[2], n, third, third);
    for (int m = 0; m <= n; ++m) {
      second[harmonic_index(n, m)] += first[harmonic_index(n, m)];
      third[harmonic_index(n, m)] += second[harmonic_index(n, m)];
    }
  }
  double weight = 2.0 * area / 2.0;  // 2A / (n + 2)! at n = 0
  for (int n = 0; n <= order; ++n) {
    if (n > 0) weight /= (n + 2);
    for (int m = 0; m <= n; ++m) third[harmonic_index(n, m)] = weight * std::conj(third[harmonic_index(n, m)]);
  }
  for (int c = 0; c < shape.channels; ++c) {
    Complex* to = multipole + c * count;
    for (int i = 0; i < count; ++i) to[i] += densities[c] * third[i];
  }
}

void translate_multipole(const ExpansionShape& shape, const Eigen::Vector3d& shift, const Complex* child,
                         Complex* parent, Complex* scratch) {
  // conj R_n^m(y - c1) = sum_{k,l} conj R_k^l(c2 - c1) conj R_{n-k}^{m-l}(y - c2) (addition theorem).
  regular_harmonics(shift, shape.order, scratch);
  const int count = shape.count();
  for (int c = 0; c < shape.channels; ++c) {
    const Complex* from = child + c * count;
    Complex* to = parent + c * count;
    for (int n = 0; n <= shape.order; ++n)
      for (int m = 0; m <= n; ++m) {
        Complex sum = 0;
        for (int k = 0; k <= n; ++k)
          for (int l = std::max(-k, m - (n - k)); l <= std::min(k, m + (n - k)); ++l)
            sum += std::conj(harmonic(scratch, k, l)) * harmonic(from, n - k, m - l);
        to[harmonic_index(n, m)] += sum;
      }
  }
}

void multipole_to_local(const ExpansionShape& shape, const Eigen::Vector3d& t, int local_order, int total,
                        const Complex* multipole, Complex* local, Complex* scratch) {
  // With x - c_B = t + r: I_j^k(t + r) = sum_{n,l} (-1)^n conj(R_n^l(r)) I_{j+n}^{k+l}(t), and conj(R_n^l) =
  // (-1)^l R_n^{-l}, so L_n^m = (-1)^(n+m) sum_{j,k} M_j^k I_{j+n}^{k-m}(t).
  irregular_harmonics(t, total, scratch);
  const int count = shape.count(), out_count = harmonic_count(local_order);
  for (int c = 0; c < shape.channels; ++c) {
    const Complex* from = multipole + c * count;
    Complex* to = local + c * out_count;
    for (int n = 0; n <= local_order; ++n) {
      const int top = std::min(shape.order, total - n);
      for (int m = 0; m <= n; ++m) {
        Complex sum = 0;
        for (int j = 0; j <= top; ++j)
          for (int k = -j; k <= j; ++k) sum += harmonic(from, j, k) * harmonic(scratch, j + n, k - m);
        to[harmonic_index(n, m)] += ((n + m) & 1) ? -sum : sum;
      }
    }
  }
}

void translate_local(const ExpansionShape& shape, const Eigen::Vector3d& shift, int out_order,
                     const Complex* local, Complex* out, Complex* scratch) {
  // R_n^m((x - c2) + (c2 - c1)) = sum_{k,l} R_{n-k}^{m-l}(c2 - c1) R_k^l(x - c2).
  regular_harmonics(shift, shape.order, scratch);
  const int count = shape.count(), out_count = harmonic_count(out_order);
  for (int c = 0; c < shape.channels; ++c) {
    const Complex* from = local + c * count;
    Complex* to = out + c * out_count;
    for (int j = 0; j <= out_order; ++j)
      for (int i = 0; i <= j; ++i) {
        Complex sum = 0;
        for (int n = j; n <= shape.order; ++n)
          for (int m = std::max(-n, i - (n - j)); m <= std::min(n, i + (n - j)); ++m)
            sum += harmonic(from, n, m) * harmonic(scratch, n - j, m - i);
        to[harmonic_index(j, i)] += sum;
      }
  }
}

}  // namespace polystokes
