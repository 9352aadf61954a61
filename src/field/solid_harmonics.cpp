#include "field/solid_harmonics.h"

#include <algorithm>
#include <vector>

namespace polystokes {

namespace {

// Both halves m = -n..n of stored harmonics, real and imaginary parts apart, at [n^2 + n + m].
void unfold(const Complex* x, int order, double* re, double* im) {
  for (int n = 0; n <= order; ++n)
    for (int m = -n; m <= n; ++m) {
      const Complex value = harmonic(x, n, m);
      re[n * n + n + m] = value.real();
      im[n * n + n + m] = value.imag();
    }
}

}  // namespace

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
    if (m + 1 <= order)
      out[harmonic_index(m + 1, m)] = ((2.0 * m + 1.0) * z * inv_r2) * out[harmonic_index(m, m)];
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
    for (int m = 0; m <= n; ++m)
      third[harmonic_index(n, m)] = weight * std::conj(third[harmonic_index(n, m)]);
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
  const int order = shape.order, count = shape.count(), full = (order + 1) * (order + 1);
  thread_local std::vector<double> buffer;
  buffer.resize(size_t(4 * full));
  double *r_re = buffer.data(), *r_im = r_re + full, *c_re = r_im + full, *c_im = c_re + full;
  unfold(scratch, order, r_re, r_im);
  for (int c = 0; c < shape.channels; ++c) {
    unfold(child + c * count, order, c_re, c_im);
    Complex* to = parent + c * count;
    for (int n = 0; n <= order; ++n)
      for (int m = 0; m <= n; ++m) {
        double re = 0, im = 0;
        for (int k = 0; k <= n; ++k) {
          const int lo = std::max(-k, m - (n - k)), hi = std::min(k, m + (n - k));
          const double *ar = r_re + k * k + k, *ai = r_im + k * k + k;
          const int base = (n - k) * (n - k) + (n - k) + m;
          for (int l = lo; l <= hi; ++l) {  // conj(R_k^l) child_{n-k}^{m-l}
            re += ar[l] * c_re[base - l] + ai[l] * c_im[base - l];
            im += ar[l] * c_im[base - l] - ai[l] * c_re[base - l];
          }
        }
        to[harmonic_index(n, m)] += Complex(re, im);
      }
  }
}

void unfold_multipole(const ExpansionShape& shape, const Complex* multipole, double* out) {
  const int full = (shape.order + 1) * (shape.order + 1);
  for (int c = 0; c < shape.channels; ++c)
    unfold(multipole + c * shape.count(), shape.order, out + 2 * c * full, out + (2 * c + 1) * full);
}

void multipole_to_local(const ExpansionShape& shape, const Eigen::Vector3d& t, int local_order, int total,
                        const double* multipole, Complex* local, Complex* scratch) {
  // With x - c_B = t + r: I_j^k(t + r) = sum_{n,l} (-1)^n conj(R_n^l(r)) I_{j+n}^{k+l}(t), and conj(R_n^l) =
  // (-1)^l R_n^{-l}, so L_n^m = (-1)^(n+m) sum_{j,k} M_j^k I_{j+n}^{k-m}(t). The dominant cost of the method:
  // both halves unfolded into real arrays so that the inner loop has no branch.
  constexpr int kMaxChannels = 8;
  irregular_harmonics(t, total, scratch);
  const int order = shape.order, channels = shape.channels;
  const int full = (order + 1) * (order + 1), full_total = (total + 1) * (total + 1);
  thread_local std::vector<double> buffer;
  buffer.resize(size_t(2 * full_total));
  double *i_re = buffer.data(), *i_im = i_re + full_total;
  unfold(scratch, total, i_re, i_im);
  const int out_count = harmonic_count(local_order);
  for (int n = 0; n <= local_order; ++n) {
    const int top = std::min(order, total - n);
    for (int m = 0; m <= n; ++m) {
      double sum_re[kMaxChannels] = {}, sum_im[kMaxChannels] = {};
      for (int j = 0; j <= top; ++j) {
        const double* ir = i_re + (j + n) * (j + n) + (j + n) - m;
        const double* ii = i_im + (j + n) * (j + n) + (j + n) - m;
        const int base = j * j + j;
        for (int c = 0; c < channels; ++c) {
          const double* mr = multipole + 2 * c * full + base;
          const double* mi = mr + full;
          double re = 0, im = 0;
          for (int k = -j; k <= j; ++k) {
            re += mr[k] * ir[k] - mi[k] * ii[k];
            im += mr[k] * ii[k] + mi[k] * ir[k];
          }
          sum_re[c] += re;
          sum_im[c] += im;
        }
      }
      const double sign = ((n + m) & 1) ? -1.0 : 1.0;
      for (int c = 0; c < channels; ++c)
        local[c * out_count + harmonic_index(n, m)] += sign * Complex(sum_re[c], sum_im[c]);
    }
  }
}

void translate_local(const ExpansionShape& shape, const Eigen::Vector3d& shift, int out_order,
                     const Complex* local, Complex* out, Complex* scratch) {
  // R_n^m((x - c2) + (c2 - c1)) = sum_{k,l} R_{n-k}^{m-l}(c2 - c1) R_k^l(x - c2).
  regular_harmonics(shift, shape.order, scratch);
  const int order = shape.order, count = shape.count(), full = (order + 1) * (order + 1);
  const int out_count = harmonic_count(out_order);
  thread_local std::vector<double> buffer;
  buffer.resize(size_t(4 * full));
  double *r_re = buffer.data(), *r_im = r_re + full, *l_re = r_im + full, *l_im = l_re + full;
  unfold(scratch, order, r_re, r_im);
  for (int c = 0; c < shape.channels; ++c) {
    unfold(local + c * count, order, l_re, l_im);
    Complex* to = out + c * out_count;
    for (int j = 0; j <= out_order; ++j)
      for (int i = 0; i <= j; ++i) {
        double re = 0, im = 0;
        for (int n = j; n <= order; ++n) {
          const int lo = std::max(-n, i - (n - j)), hi = std::min(n, i + (n - j));
          const double *ar = l_re + n * n + n, *ai = l_im + n * n + n;
          const int base = (n - j) * (n - j) + (n - j) - i;
          for (int m = lo; m <= hi; ++m) {  // L_n^m R_{n-j}^{m-i}
            re += ar[m] * r_re[base + m] - ai[m] * r_im[base + m];
            im += ar[m] * r_im[base + m] + ai[m] * r_re[base + m];
          }
        }
        to[harmonic_index(j, i)] += Complex(re, im);
      }
  }
}

}  // namespace polystokes
