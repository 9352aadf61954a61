#include "polystokes/harmonics/moments.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <string>

#include "harmonics/face_blocks.h"
#include "harmonics/fan_decomposition.h"
#include "harmonics/moment_kernel.h"
#include "harmonics/moment_limits.h"
#include "harmonics/quadrature.h"
#include "internal/parallel.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/legendre.h"

namespace polystokes {

namespace {

size_t triangle_size(int degree) { return size_t(degree + 1) * size_t(degree + 2) / 2; }
size_t triangle_offset(int n) { return size_t(n) * size_t(n + 1) / 2; }

// Whittaker's integral representation (Whittaker & Watson 1927, A Course of Modern Analysis, sec. 18.3;
// Hobson 1931, The Theory of Spherical and Ellipsoidal Harmonics, ch. III): with
//   l_u(x) = z + i (x cos u + y sin u),
//   l_u(x)^n = r^n [P_n + 2 sum_m i^m n!/(n+m)! P_n^m(sin lat) cos(m (u - lon))],
// so the coefficient of e^{-imu} in l_u(x)^n is G_m = i^m n!/(n+m)! r^n P_n^m e^{i m lon}.
// Over a simplex, int l^n dV = vol * 3! n!/(n+3)! h_n(l(v0), .., l(v3)) with h_n the complete homogeneous
// symmetric polynomial (e.g. Baldoni et al. 2011, "How to integrate a polynomial over a simplex",
// Math. Comp. 80, Cor. 12). With v0 = origin, l(v0) = 0. h_n(a, b, c) follows from
//   h_n(a) = a h_{n-1}(a),  h_n(a,b) = h_n(a) + b h_{n-1}(a,b),  h_n(a,b,c) = h_n(a,b) + c h_{n-1}(a,b,c),
// each product being a 3-term operator on Fourier coefficients: O(n) per step, O(N^2) per face. The faces are
// grouped into vertex fans (fan_decomposition.h) so that the three recursions are shared between faces, and
// the products run vectorized over orders (moment_kernel.h), in the scaled basis H_m = (-i)^m 2^m G_m:
// every product of l_u's satisfies f(u) = conj f(u + pi), so only m >= 0 is stored. The power-of-two scaling
// is exact (rounding as unscaled), keeps the sectorial orders (2^-n r^n unscaled) from underflowing and turns
// the normalization factor into K_nm / 2^m <= 1; no order is ever extracted from numbers 2^m times larger
// than itself, as a transform from sampled values of u would. Scaled orders of equatorial points reach
// 2^(0.32 n), hence max_moment_degree (docs/performance.md, "Accuracy and stability").

// Faces are cut into blocks whose size depends only on the degree (face_blocks.h), and block sums are added
// in block order, so results are bit-identical for any number of threads.
struct FaceBlock {
  size_t region;
  Eigen::Index begin, end;  // positions in the region's blocking order
  const int* order;         // that order (mesh face ids), or null for the mesh's own
};

std::vector<FaceBlock> make_blocks(const std::vector<DensityRegion>& regions,
                                   const std::vector<std::vector<int>>& orders, Eigen::Index size) {
  std::vector<FaceBlock> blocks;
  for (size_t r = 0; r < regions.size(); ++r) {
    const Eigen::Index faces = regions[r].mesh.faces.rows();
    const int* order = orders[r].empty() ? nullptr : orders[r].data();
    for (Eigen::Index begin = 0; begin < faces; begin += size)
      blocks.push_back({r, begin, std::min(faces, begin + size), order});
  }
  return blocks;
}

// Per-thread scratch of the fast path.
struct BlockWorker {
  FanDecomposer decomposer;
  std::vector<Eigen::Vector3d> local;  // expansion coordinates of the decomposition's vertices
  std::vector<double> weights;         // per fan face
  FanWorkspace workspace;
};

// Block sums in the triangle layout, with the slack the kernel writes exact zeros into past the last row.
struct BlockSum {
  std::vector<double> re, im;
};
constexpr size_t kSlack = 8;

// Runs the recursion on one block of faces already grouped into fans, into `sum`.
void accumulate_fans(const DensityRegion& region, const HarmonicFrame& frame, const FanDecomposition& fans,
                     int degree, BlockWorker& worker, BlockSum& sum) {
  const Mesh& mesh = region.mesh;
  worker.local.resize(fans.vertices.size());
  const Eigen::Matrix3d map = frame.axes / frame.scale_radius;
  for (size_t v = 0; v < fans.vertices.size(); ++v)
    worker.local[v] = map * (mesh.vertices.row(fans.vertices[v]).transpose() - frame.origin);
  worker.weights.resize(fans.fan_faces.size());
  for (size_t f = 0; f < fans.fan_faces.size(); ++f) {
    const Eigen::Vector3d& a = worker.local[size_t(fans.fan_corners[3 * f])];
    const Eigen::Vector3d& b = worker.local[size_t(fans.fan_corners[3 * f + 1])];
    const Eigen::Vector3d& c = worker.local[size_t(fans.fan_corners[3 * f + 2])];
    worker.weights[f] = region.density.constant() * a.dot(b.cross(c));
  }
  sum.re.assign(triangle_size(degree) + kSlack, 0.0);
  sum.im.assign(triangle_size(degree) + kSlack, 0.0);
  accumulate_fan_block(fans, worker.local.data(), worker.weights.data(), degree, worker.workspace,
                       sum.re.data(), sum.im.data());
}

// Partial sums held at once: about 1 MB of them (at least 2, at most 32 per thread), so a thread the system
// pauses for a while does not stop the others at once.
size_t sum_window(size_t size, int threads) {
  const double slot_bytes = 2.0 * sizeof(double) * double(size);
  return size_t(std::clamp(1e6 / slot_bytes, 2.0 * threads, 32.0 * threads));
}

HarmonicMoments unpack_moments(int degree, double scale_radius, const std::vector<double>& re,
                               const std::vector<double>& im) {
  HarmonicMoments moments;
  moments.degree = degree;
  moments.scale_radius = scale_radius;
  moments.re.setZero(degree + 1, degree + 1);
  moments.im.setZero(degree + 1, degree + 1);
  const double r3 = scale_radius * scale_radius * scale_radius;
  for (int n = 0; n <= degree; ++n) {
    // int over a tetrahedron = det * n!/(n+3)! * h_n; Pnm r^n e^{im lon} = sqrt((2-d_m0)(2n+1)) K~_nm H_m
    // with K~_nm = sqrt((n-m)!(n+m)!)/(n! 2^m), built as a running product.
    const double degree_factor = r3 / ((n + 1.0) * (n + 2.0) * (n + 3.0)) * std::sqrt(2.0 * n + 1.0);
    double k_scaled = 1.0;
    for (int m = 0; m <= n; ++m) {
      if (m > 0) k_scaled *= std::sqrt((n + m) / double(n - m + 1)) / 2.0;
      const double factor = degree_factor * k_scaled * (m == 0 ? 1.0 : std::sqrt(2.0));
      moments.re(n, m) = factor * re[triangle_offset(n) + size_t(m)];
      moments.im(n, m) = factor * im[triangle_offset(n) + size_t(m)];
    }
  }
  return moments;
}

// Sums block_sum(b, worker, sum) over all blocks in block order (parallel.h), reporting progress at most
// about 1000 times however many blocks there are.
template <class Sum>
HarmonicMoments sum_blocks(size_t blocks, int degree, double scale_radius, const MomentOptions& options,
                           Sum&& block_sum) {
  const size_t size = triangle_size(degree);
  std::vector<double> total_re(size, 0.0), total_im(size, 0.0);
  long reported = -1;
  ordered_blocks<BlockWorker>(
      blocks, options.threads, sum_window(size, resolve_threads(options.threads)),
      [&](size_t b, BlockWorker& worker) {
        BlockSum sum;
        block_sum(b, worker, sum);
        return sum;
      },
      [&](size_t b, BlockSum sum) {
        for (size_t i = 0; i < size; ++i) {
          total_re[i] += sum.re[i];
          total_im[i] += sum.im[i];
        }
        const long permille = long(1000 * (b + 1) / blocks);
        if (options.progress && permille > reported) {
          reported = permille;
          options.progress(double(b + 1) / double(blocks));
        }
      });
  return unpack_moments(degree, scale_radius, total_re, total_im);
}

// Bytes the fast path and the result need for `degree` on `threads` threads: four (degree+1)^2 tables
// (moments and coefficients), the partial sums in flight and the per-thread recursion rows.
double moment_bytes(int degree, int threads) {
  const double triangle = double(triangle_size(degree));
  const double rows = double(fan_workspace_bytes(degree, size_t(1.3 * double(moment_block_faces(degree))),
                                                 size_t(moment_block_faces(degree))));
  return 4.0 * 8.0 * double(degree + 1) * double(degree + 1) +
         double(sum_window(size_t(triangle), threads)) * 16.0 * triangle + threads * rows;
}

void check_frame(const HarmonicFrame& frame, const std::vector<DensityRegion>& regions, int threads = 1) {
  if (!(frame.scale_radius > 0)) throw ConventionError("scale radius must be positive");
  if (!(frame.scale_radius >= brillouin_radius(regions, frame.origin, threads) * (1 - 1e-12)))
    throw ConventionError("scale radius is smaller than the largest vertex distance");
}

}  // namespace

void check_moment_degree(int degree, int threads) {
  if (degree < 0) throw ConventionError("degree must be >= 0, got " + std::to_string(degree));
  // The scaled orders of a point on the equator reach about 2^(0.32 n) (2^-2j C(n, j) at order n - 2j), so
  // beyond degree 3200 they overflow doubles; 3000 leaves room for the sums over a million faces.
  if (degree > max_moment_degree) {
    // The memory estimate's integer arithmetic is only meant for degrees a machine could hold.
    const std::string memory = degree <= 1000000
                                   ? fmt::format("about {:.1f} GB", moment_bytes(degree, threads) / 1e9)
                                   : std::string("more than 10000 GB");
    throw ResourceError(
        fmt::format("degree {} is beyond {}, the largest the moment recursion's floating-point "
                    "range supports (it would also need {} of memory)",
                    degree, max_moment_degree, memory));
  }
  constexpr double limit = 8e9;
  const double bytes = moment_bytes(degree, threads);
  if (bytes > limit)
    throw ResourceError(
        fmt::format("degree {} would need about {:.1f} GB for the coefficient tables; "
                    "refusing (limit {:.0f} GB)",
                    degree, bytes / 1e9, limit / 1e9));
}

HarmonicMoments harmonic_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                 int degree, const MomentOptions& options) {
  check_moment_degree(degree, resolve_threads(options.threads));
  check_frame(frame, regions, options.threads);
  const Eigen::Index size = moment_block_faces(degree);
  std::vector<std::vector<int>> orders;
  for (const auto& region : regions) orders.push_back(blocking_order(region.mesh, size));
  const auto blocks = make_blocks(regions, orders, size);
  return sum_blocks(blocks.size(), degree, frame.scale_radius, options,
                    [&](size_t b, BlockWorker& worker, BlockSum& sum) {
                      const FaceBlock& block = blocks[b];
                      const Mesh& mesh = regions[block.region].mesh;
                      const FanDecomposition& fans = worker.decomposer.decompose(
                          mesh.faces, mesh.vertices.rows(), block.begin, block.end, block.order);
                      accumulate_fans(regions[block.region], frame, fans, degree, worker, sum);
                    });
}

struct PreparedMoments::Blocks {
  int degree = 0;
  std::vector<Faces> faces;            // per region: the faces prepared
  std::vector<size_t> region;          // per block
  std::vector<FanDecomposition> fans;  // per block
};

PreparedMoments::PreparedMoments(const std::vector<DensityRegion>& regions, int degree)
    : blocks_(std::make_unique<Blocks>()) {
  check_moment_degree(degree, 1);
  blocks_->degree = degree;
  const Eigen::Index size = moment_block_faces(degree);
  FanDecomposer decomposer;
  for (size_t r = 0; r < regions.size(); ++r) {
    const Mesh& mesh = regions[r].mesh;
    blocks_->faces.push_back(mesh.faces);
    const std::vector<int> order = blocking_order(mesh, size);
    for (Eigen::Index begin = 0; begin < mesh.faces.rows(); begin += size) {
      blocks_->region.push_back(r);
      blocks_->fans.push_back(decomposer.decompose(mesh.faces, mesh.vertices.rows(), begin,
                                                   std::min(mesh.faces.rows(), begin + size),
                                                   order.empty() ? nullptr : order.data()));
    }
  }
}

PreparedMoments::~PreparedMoments() = default;
PreparedMoments::PreparedMoments(PreparedMoments&&) noexcept = default;
PreparedMoments& PreparedMoments::operator=(PreparedMoments&&) noexcept = default;

int PreparedMoments::degree() const { return blocks_->degree; }

HarmonicMoments PreparedMoments::moments(const std::vector<DensityRegion>& regions,
                                         const HarmonicFrame& frame, const MomentOptions& options,
                                         int degree) const {
  if (degree < 0) degree = blocks_->degree;
  if (degree > blocks_->degree)
    throw ConventionError(
        fmt::format("moments of degree {} asked of a body prepared for degree {}", degree, blocks_->degree));
  if (regions.size() != blocks_->faces.size())
    throw ConventionError(
        fmt::format("{} region(s) given to a body prepared with {}", regions.size(), blocks_->faces.size()));
  for (size_t r = 0; r < regions.size(); ++r)
    if (regions[r].mesh.faces != blocks_->faces[r])
      throw ConventionError(fmt::format("region {} ({}) does not have the faces the body was prepared with",
                                        r + 1, regions[r].mesh.source));
  check_frame(frame, regions, options.threads);
  return sum_blocks(blocks_->fans.size(), degree, frame.scale_radius, options,
                    [&](size_t b, BlockWorker& worker, BlockSum& sum) {
                      accumulate_fans(regions[blocks_->region[b]], frame, blocks_->fans[b], degree, worker,
                                      sum);
                    });
}

HarmonicMoments harmonic_moments_reference(const std::vector<DensityRegion>& regions,
                                           const HarmonicFrame& frame, int degree) {
  check_moment_degree(degree, 1);
  check_frame(frame, regions);
  // int_T f dV = det/(n+3) int_{w1,w2>=0, w1+w2<=1} f(w1 a + w2 b + (1-w1-w2) c) dw for f homogeneous of
  // degree n (radial integration of the cone over the face). The face integral uses the collapsed (Duffy)
  // square w1 = s, w2 = (1-s) t with q-point Gauss-Legendre in s and t, exact for degree 2q-1 >= n+1.
  const int q = degree / 2 + 1;
  const GaussRule rule = gauss_legendre_unit(q);
  Eigen::MatrixXd sum_re = Eigen::MatrixXd::Zero(degree + 1, degree + 1);
  Eigen::MatrixXd sum_im = sum_re;
  Eigen::MatrixXd legendre;
  const LegendreRecursion recursion(degree);
  std::vector<double> cos_m(size_t(degree + 1)), sin_m(size_t(degree + 1));
  for (const auto& region : regions) {
    const Mesh& mesh = region.mesh;
    for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
      // The face in expansion coordinates (origin removed, rotated, divided by the scale radius).
      Eigen::Vector3d v[3];
      for (int k = 0; k < 3; ++k)
        v[k] = frame.axes * (mesh.vertices.row(mesh.faces(f, k)).transpose() - frame.origin) /
               frame.scale_radius;
      const double det = region.density.constant() * v[0].dot(v[1].cross(v[2]));
      for (int i = 0; i < q; ++i) {
        for (int j = 0; j < q; ++j) {
          const double s = rule.nodes[size_t(i)], t = rule.nodes[size_t(j)];
          const double w = rule.weights[size_t(i)] * rule.weights[size_t(j)] * (1.0 - s);
          const Eigen::Vector3d x = s * v[0] + (1.0 - s) * t * v[1] + (1.0 - s) * (1.0 - t) * v[2];
          const double r = x.norm();
          if (r == 0) continue;
          const double lon = std::atan2(x.y(), x.x());
          for (int m = 0; m <= degree; ++m) {
            cos_m[size_t(m)] = std::cos(m * lon);
            sin_m[size_t(m)] = std::sin(m * lon);
          }
          recursion.evaluate(x.z() / r, legendre);
          double rn = 1;
          for (int n = 0; n <= degree; ++n, rn *= r) {
            const double scale = det / (n + 3.0) * w * rn;
            for (int m = 0; m <= n; ++m) {
              sum_re(n, m) += scale * legendre(n, m) * cos_m[size_t(m)];
              sum_im(n, m) += scale * legendre(n, m) * sin_m[size_t(m)];
            }
          }
        }
      }
    }
  }
  const double r3 = std::pow(frame.scale_radius, 3);
  HarmonicMoments moments;
  moments.degree = degree;
  moments.scale_radius = frame.scale_radius;
  moments.re = sum_re * r3;
  moments.im = sum_im * r3;
  return moments;
}

void moments_to_coefficients(const HarmonicMoments& moments, double mass, double reference_radius,
                             CoefficientSet& set) {
  const double ratio = moments.scale_radius / reference_radius;
  double power = 1;
  for (int n = 0; n <= moments.degree; ++n, power *= ratio) {
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = moments.re(n, m) * power / (mass * (2.0 * n + 1.0));
      set.S(n, m) = m == 0 ? 0.0 : moments.im(n, m) * power / (mass * (2.0 * n + 1.0));
    }
  }
}

}  // namespace polystokes
