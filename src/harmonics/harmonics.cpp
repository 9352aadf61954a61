#include "polystokes/harmonics/harmonics.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <condition_variable>
#include <cstdint>
#include <exception>
#include <mutex>
#include <thread>

#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"
#include "harmonics/fan_decomposition.h"
#include "harmonics/moment_kernel.h"

namespace polystokes {

namespace {

// Factors of the standard forward column recursion (Holmes & Featherstone 2002, J. Geodesy 76, eqs. 11-13),
// computed once per degree: sectorial seeds s_m, the first step c_m and the column factors a_nm, b_nm.
struct LegendreRecursion {
  explicit LegendreRecursion(int degree)
      : degree(degree), a(degree + 1, degree + 1), b(degree + 1, degree + 1) {
    sectorial.resize(size_t(degree + 1));
    first_step.resize(size_t(degree + 1));
    for (int m = 1; m <= degree; ++m)
      sectorial[size_t(m)] = m == 1 ? std::sqrt(3.0) : std::sqrt((2.0 * m + 1.0) / (2.0 * m));
    for (int m = 0; m <= degree; ++m) {
      first_step[size_t(m)] = std::sqrt(2.0 * m + 3.0);
      for (int n = m + 2; n <= degree; ++n) {
        a(n, m) = std::sqrt((2.0 * n - 1.0) * (2.0 * n + 1.0) / ((n - m) * double(n + m)));
        b(n, m) = std::sqrt((2.0 * n + 1.0) * (n + m - 1.0) * (n - m - 1.0) /
                            ((n - m) * double(n + m) * (2.0 * n - 3.0)));
      }
    }
  }

  void evaluate(double t, Eigen::MatrixXd& out) const {
    out.setZero(degree + 1, degree + 1);
    const double u = std::sqrt(std::max(0.0, (1.0 - t) * (1.0 + t)));
    out(0, 0) = 1.0;
    for (int m = 1; m <= degree; ++m) out(m, m) = u * sectorial[size_t(m)] * out(m - 1, m - 1);
    for (int m = 0; m <= degree; ++m) {
      if (m + 1 <= degree) out(m + 1, m) = first_step[size_t(m)] * t * out(m, m);
      for (int n = m + 2; n <= degree; ++n) out(n, m) = a(n, m) * t * out(n - 1, m) - b(n, m) * out(n - 2, m);
    }
  }

  int degree;
  std::vector<double> sectorial, first_step;
  Eigen::MatrixXd a, b;
};

}  // namespace

void fully_normalized_legendre(int degree, double t, Eigen::MatrixXd& out) {
  LegendreRecursion(degree).evaluate(t, out);
}

Eigen::MatrixXd fully_normalized_legendre(int degree, double t) {
  Eigen::MatrixXd out;
  fully_normalized_legendre(degree, t, out);
  return out;
}

namespace {

size_t triangle_size(int degree) { return size_t(degree + 1) * size_t(degree + 2) / 2; }
size_t triangle_offset(int n) { return size_t(n) * size_t(n + 1) / 2; }

// A face in expansion coordinates (origin removed, rotated, divided by the scale radius).
struct ScaledFace {
  Eigen::Vector3d v[3];
  double det;  // 6 * signed volume of the tetrahedron (origin, a, b, c), times density
};

template <class Visit>
void for_each_scaled_face(const DensityRegion& region, const HarmonicFrame& frame, Eigen::Index begin,
                          Eigen::Index end, Visit&& visit) {
  const Mesh& mesh = region.mesh;
  for (Eigen::Index f = begin; f < end; ++f) {
    ScaledFace face;
    for (int k = 0; k < 3; ++k)
      face.v[k] =
          frame.axes * (mesh.vertices.row(mesh.faces(f, k)).transpose() - frame.origin) / frame.scale_radius;
    face.det = region.density * face.v[0].dot(face.v[1].cross(face.v[2]));
    visit(face);
  }
}

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

// Faces are cut into blocks whose size depends only on the degree, and block sums are added in block order,
// so results are bit-identical for any number of threads.
struct FaceBlock {
  size_t region;
  Eigen::Index begin, end;  // positions in the region's blocking order
  const int* order;         // that order (mesh face ids), or null for the mesh's own
};

// Interleaves the low 21 bits of three coordinates (Morton code).
uint64_t morton3(uint32_t x, uint32_t y, uint32_t z) {
  uint64_t code = 0;
  for (int bit = 0; bit < 21; ++bit)
    code |= (uint64_t((x >> bit) & 1u) << (3 * bit)) | (uint64_t((y >> bit) & 1u) << (3 * bit + 1)) |
            (uint64_t((z >> bit) & 1u) << (3 * bit + 2));
  return code;
}

// Fans share work only between neighbouring faces of the same block. Meshes written by tessellating or
// re-meshing programs list faces in compact patches (about 0.9 products per face); a list without locality
// (shuffled, merged from pieces) costs up to 3. Four sample blocks decide: above 1.5 products per face the
// region is blocked in Morton order of its face centroids instead (about 1.0 per face), at the price of one
// sort and 4 bytes per face. Deterministic: depends on the mesh only.
std::vector<int> blocking_order(const Mesh& mesh, Eigen::Index block_faces) {
  const Eigen::Index faces = mesh.faces.rows();
  if (faces <= 2 * block_faces) return {};
  FanDecomposer probe;
  double products = 0;
  constexpr int samples = 4;
  for (int s = 0; s < samples; ++s) {
    const Eigen::Index begin = (faces - block_faces) * s / (samples - 1);
    products +=
        double(probe.decompose(mesh.faces, mesh.vertices.rows(), begin, begin + block_faces).products());
  }
  if (products <= 1.5 * samples * double(block_faces)) return {};
  const Eigen::Vector3d low = mesh.vertices.colwise().minCoeff().transpose();
  const Eigen::Vector3d extent = mesh.vertices.colwise().maxCoeff().transpose() - low;
  const double cells = double(1u << 21) - 1;
  std::vector<std::pair<uint64_t, int>> keys(static_cast<size_t>(faces));
  for (Eigen::Index f = 0; f < faces; ++f) {
    Eigen::Vector3d centroid = Eigen::Vector3d::Zero();
    for (int k = 0; k < 3; ++k) {
      const int vertex = mesh.faces(f, k);
      if (vertex < 0 || vertex >= mesh.vertices.rows())
        throw MeshError(fmt::format("face {} refers to vertex {}, but the mesh has {} vertices", f, vertex,
                                    mesh.vertices.rows()));
      centroid += mesh.vertices.row(vertex).transpose() / 3.0;
    }
    uint32_t cell[3];
    for (int c = 0; c < 3; ++c)
      cell[c] =
          extent[c] > 0 ? uint32_t(std::clamp((centroid[c] - low[c]) / extent[c], 0.0, 1.0) * cells) : 0;
    keys[size_t(f)] = {morton3(cell[0], cell[1], cell[2]), int(f)};
  }
  std::sort(keys.begin(), keys.end());
  std::vector<int> order(static_cast<size_t>(faces));
  for (size_t i = 0; i < keys.size(); ++i) order[i] = keys[i].second;
  return order;
}

std::vector<FaceBlock> make_blocks(const std::vector<DensityRegion>& regions,
                                   const std::vector<std::vector<int>>& orders, int degree) {
  const Eigen::Index size = moment_block_faces(degree);
  std::vector<FaceBlock> blocks;
  for (size_t r = 0; r < regions.size(); ++r) {
    const Eigen::Index faces = regions[r].mesh.faces.rows();
    const int* order = orders[r].empty() ? nullptr : orders[r].data();
    for (Eigen::Index begin = 0; begin < faces; begin += size)
      blocks.push_back({r, begin, std::min(faces, begin + size), order});
  }
  return blocks;
}

int thread_count(int requested, size_t work_items) {
  int threads = requested > 0 ? requested : int(std::max(1u, std::thread::hardware_concurrency()));
  return int(std::min<size_t>(size_t(threads), std::max<size_t>(1, work_items)));
}

// Per-thread scratch of the fast path.
struct BlockWorker {
  FanDecomposer decomposer;
  std::vector<Eigen::Vector3d> local;  // expansion coordinates of the decomposition's vertices
  std::vector<double> weights;         // per fan face
  FanWorkspace workspace;
};

// Decomposes one block of faces into fans and runs the recursion on it, into `re`/`im` (triangle layout).
void accumulate_face_block(const DensityRegion& region, const HarmonicFrame& frame, const FaceBlock& range,
                           int degree, BlockWorker& worker, double* re, double* im) {
  const Mesh& mesh = region.mesh;
  const FanDecomposition& fans =
      worker.decomposer.decompose(mesh.faces, mesh.vertices.rows(), range.begin, range.end, range.order);
  worker.local.resize(fans.vertices.size());
  const Eigen::Matrix3d map = frame.axes / frame.scale_radius;
  for (size_t v = 0; v < fans.vertices.size(); ++v)
    worker.local[v] = map * (mesh.vertices.row(fans.vertices[v]).transpose() - frame.origin);
  worker.weights.resize(fans.fan_faces.size());
  for (size_t f = 0; f < fans.fan_faces.size(); ++f) {
    const Eigen::Vector3d& a = worker.local[size_t(fans.fan_corners[3 * f])];
    const Eigen::Vector3d& b = worker.local[size_t(fans.fan_corners[3 * f + 1])];
    const Eigen::Vector3d& c = worker.local[size_t(fans.fan_corners[3 * f + 2])];
    worker.weights[f] = region.density * a.dot(b.cross(c));
  }
  accumulate_fan_block(fans, worker.local.data(), worker.weights.data(), degree, worker.workspace, re, im);
}

// Runs block_work(block, worker, re, im) over all blocks on a pool of threads and returns the sums added in
// block order. A thread starts block b only while b is within a window of the next block to be added, so the
// partial sums held at once stay bounded whatever the relative speed of the threads; the window holds about
// 1 MB of partial sums (at least 2, at most 32 per thread), so a thread the system pauses for a while does
// not stop the others at once.
size_t sum_window(size_t size, int threads) {
  const double slot_bytes = 2.0 * sizeof(double) * double(size);
  return size_t(std::clamp(1e6 / slot_bytes, 2.0 * threads, 32.0 * threads));
}

template <class Work>
void sum_blocks_in_order(size_t blocks, size_t size, const MomentOptions& options, Work&& block_work,
                         std::vector<double>& total_re, std::vector<double>& total_im) {
  constexpr size_t slack = 8;  // the kernel writes exact zeros just past the last row
  total_re.assign(size + slack, 0.0);
  total_im.assign(size + slack, 0.0);
  const int threads = thread_count(options.threads, blocks);
  const size_t window = sum_window(size, threads);
  std::vector<std::vector<double>> slot_re(window), slot_im(window);
  std::vector<char> ready(window, 0);
  size_t next_block = 0, next_to_add = 0;
  long reported = -1;
  std::exception_ptr failure;
  std::mutex mutex;
  std::condition_variable changed;
  auto worker = [&]() {
    BlockWorker scratch;
    for (;;) {
      size_t b;
      {
        std::unique_lock<std::mutex> lock(mutex);
        changed.wait(lock,
                     [&] { return failure || next_block >= blocks || next_block < next_to_add + window; });
        if (failure || next_block >= blocks) return;
        b = next_block++;
      }
      std::vector<double>& re = slot_re[b % window];
      std::vector<double>& im = slot_im[b % window];
      try {
        re.assign(size + slack, 0.0);
        im.assign(size + slack, 0.0);
        block_work(b, scratch, re.data(), im.data());
      } catch (...) {
        std::lock_guard<std::mutex> lock(mutex);
        if (!failure) failure = std::current_exception();
        changed.notify_all();
        return;
      }
      {
        std::lock_guard<std::mutex> lock(mutex);
        ready[b % window] = 1;
        while (next_to_add < blocks && ready[next_to_add % window]) {
          const size_t s = next_to_add % window;
          for (size_t i = 0; i < size; ++i) {
            total_re[i] += slot_re[s][i];
            total_im[i] += slot_im[s][i];
          }
          ready[s] = 0;
          ++next_to_add;
        }
        // At most about a thousand progress calls however many blocks there are.
        const long permille = long(1000 * next_to_add / blocks);
        if (options.progress && permille > reported) {
          reported = permille;
          options.progress(double(next_to_add) / double(blocks));
        }
      }
      changed.notify_all();
    }
  };
  std::vector<std::thread> pool;
  for (int t = 1; t < threads; ++t) pool.emplace_back(worker);
  worker();
  for (auto& thread : pool) thread.join();
  if (failure) std::rethrow_exception(failure);
  total_re.resize(size);
  total_im.resize(size);
}

// Bytes the fast path and the result need for `degree` on `threads` threads: four (degree+1)^2 tables
// (moments and coefficients), the per-thread partial sums and the per-thread recursion rows.
double moment_bytes(int degree, int threads) {
  const double triangle = double(triangle_size(degree));
  const double rows = double(fan_workspace_bytes(degree, size_t(1.3 * double(moment_block_faces(degree))),
                                                 size_t(moment_block_faces(degree))));
  return 4.0 * 8.0 * double(degree + 1) * double(degree + 1) +
         double(sum_window(size_t(triangle), threads)) * 16.0 * triangle + threads * rows;
}

void check_degree(int degree, int threads) {
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

void check_frame(const HarmonicFrame& frame, const std::vector<DensityRegion>& regions, int threads = 1) {
  if (!(frame.scale_radius > 0)) throw ConventionError("scale radius must be positive");
  if (!(frame.scale_radius >= brillouin_radius(regions, frame.origin, threads) * (1 - 1e-12)))
    throw ConventionError("scale radius is smaller than the largest vertex distance");
}

// Gauss-Legendre nodes and weights on [0, 1] by Newton iteration on P_q (Golub & Welsch 1969 give the same
// rule; Abramowitz & Stegun 1964, 25.4.29).
void gauss_legendre_unit(int q, std::vector<double>& nodes, std::vector<double>& weights) {
  nodes.resize(size_t(q));
  weights.resize(size_t(q));
  for (int i = 0; i < q; ++i) {
    double x = std::cos(M_PI * (i + 0.75) / (q + 0.5));
    double dp = 1;
    for (int iter = 0; iter < 100; ++iter) {
      double p0 = 1, p1 = x;
      for (int k = 2; k <= q; ++k) {
        const double p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      if (q == 1) {
        p1 = x;
        p0 = 1;
      }
      dp = q * (x * p1 - p0) / (x * x - 1.0);
      const double step = p1 / dp;
      x -= step;
      if (std::abs(step) < 1e-16) break;
    }
    nodes[size_t(i)] = 0.5 * (1.0 - x);
    weights[size_t(i)] = 1.0 / ((1.0 - x * x) * dp * dp);  // 2/((1-x^2)P'^2) on [-1,1], halved for [0,1]
  }
}

}  // namespace

// The fan recursion keeps two rows per entity (about one entity per face); a block's rows should stay in the
// second-level cache while every degree sweeps over them.
Eigen::Index moment_block_faces(int degree) {
  constexpr double budget = 1.0e6;
  const double per_face = double(fan_workspace_bytes(std::max(0, degree), 1100, 1000)) / 1000;
  return Eigen::Index(std::clamp(budget / per_face, 128.0, 4096.0));
}

double moment_products_per_face(const Mesh& mesh, int degree) {
  const Eigen::Index size = moment_block_faces(degree), faces = mesh.faces.rows();
  const std::vector<int> order = blocking_order(mesh, size);
  FanDecomposer decomposer;
  double products = 0;
  for (Eigen::Index begin = 0; begin < faces; begin += size)
    products += double(decomposer
                           .decompose(mesh.faces, mesh.vertices.rows(), begin, std::min(faces, begin + size),
                                      order.empty() ? nullptr : order.data())
                           .products());
  return faces > 0 ? products / double(faces) : 0.0;
}

namespace {

// harmonic_moments for a frame already known to be valid.
HarmonicMoments fast_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                             int degree, const MomentOptions& options) {
  std::vector<std::vector<int>> orders;
  for (const auto& region : regions)
    orders.push_back(blocking_order(region.mesh, moment_block_faces(degree)));
  const auto blocks = make_blocks(regions, orders, degree);
  std::vector<double> re, im;
  sum_blocks_in_order(
      blocks.size(), triangle_size(degree), options,
      [&](size_t b, BlockWorker& worker, double* acc_re, double* acc_im) {
        const FaceBlock& block = blocks[b];
        accumulate_face_block(regions[block.region], frame, block, degree, worker, acc_re, acc_im);
      },
      re, im);
  return unpack_moments(degree, frame.scale_radius, re, im);
}

}  // namespace

HarmonicMoments harmonic_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                 int degree, const MomentOptions& options) {
  check_degree(degree, thread_count(options.threads, SIZE_MAX));
  check_frame(frame, regions, options.threads);
  return fast_moments(regions, frame, degree, options);
}

HarmonicMoments harmonic_moments_reference(const std::vector<DensityRegion>& regions,
                                           const HarmonicFrame& frame, int degree) {
  check_degree(degree, 1);
  check_frame(frame, regions);
  // int_T f dV = det/(n+3) int_{w1,w2>=0, w1+w2<=1} f(w1 a + w2 b + (1-w1-w2) c) dw for f homogeneous of
  // degree n (radial integration of the cone over the face). The face integral uses the collapsed (Duffy)
  // square w1 = s, w2 = (1-s) t with q-point Gauss-Legendre in s and t, exact for degree 2q-1 >= n+1.
  const int q = degree / 2 + 1;
  std::vector<double> nodes, weights;
  gauss_legendre_unit(q, nodes, weights);
  Eigen::MatrixXd sum_re = Eigen::MatrixXd::Zero(degree + 1, degree + 1);
  Eigen::MatrixXd sum_im = sum_re;
  Eigen::MatrixXd legendre;
  const LegendreRecursion recursion(degree);
  std::vector<double> cos_m(size_t(degree + 1)), sin_m(size_t(degree + 1));
  for (const auto& region : regions) {
    for_each_scaled_face(region, frame, 0, region.mesh.faces.rows(), [&](const ScaledFace& face) {
      for (int i = 0; i < q; ++i) {
        for (int j = 0; j < q; ++j) {
          const double s = nodes[size_t(i)], t = nodes[size_t(j)];
          const double w = weights[size_t(i)] * weights[size_t(j)] * (1.0 - s);
          const Eigen::Vector3d x =
              s * face.v[0] + (1.0 - s) * t * face.v[1] + (1.0 - s) * (1.0 - t) * face.v[2];
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
            const double scale = face.det / (n + 3.0) * w * rn;
            for (int m = 0; m <= n; ++m) {
              sum_re(n, m) += scale * legendre(n, m) * cos_m[size_t(m)];
              sum_im(n, m) += scale * legendre(n, m) * sin_m[size_t(m)];
            }
          }
        }
      }
    });
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

const char* operational_caution() {
  return "CAUTION: this is a constant-density, shape-derived gravity model. Validate it against tracking "
         "data "
         "and review it under the mission's own procedures before any operational use.";
}

namespace {

// Refuses a request before any pass over the meshes.
void check_compute_request(const std::vector<DensityRegion>& regions, const ComputeOptions& options) {
  check_degree(options.degree, thread_count(options.execution.threads, SIZE_MAX));
  if (regions.empty()) throw ConventionError("no mesh given");
  if (options.reference_radius < 0 || !std::isfinite(options.reference_radius))
    throw ConventionError("reference radius must be positive");
  if (options.origin == OriginChoice::point && !options.origin_point.allFinite())
    throw ConventionError("expansion origin must be a finite point");
}

// compute_coefficients for a checked request and the regions' mass properties.
CoefficientSet coefficients_with(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                 const ComputeOptions& options) {
  HarmonicFrame frame;
  frame.origin = options.origin == OriginChoice::center_of_mass ? props.center_of_mass
                 : options.origin == OriginChoice::point        ? options.origin_point
                                                                : Eigen::Vector3d::Zero();
  if (options.frame == FrameChoice::principal) frame.axes = props.principal_axes.transpose();
  const double brillouin = brillouin_radius(regions, frame.origin, options.execution.threads);
  frame.scale_radius = brillouin;
  const double reference = options.reference_radius > 0 ? options.reference_radius : brillouin;

  // The frame is valid by construction: its scale radius is the Brillouin radius just measured.
  const HarmonicMoments moments = fast_moments(regions, frame, options.degree, options.execution);

  CoefficientSet set = make_empty_set(options.degree);
  // Normalizing by the kernel's own degree-0 moment (the same mass to rounding) makes C00 exactly 1.
  moments_to_coefficients(moments, moments.re(0, 0), reference, set);
  set.body = options.body;
  set.gm = gravitational_constant * props.mass;
  set.reference_radius = reference;
  set.origin = to_string(options.origin);
  set.frame = options.frame == FrameChoice::principal ? "principal" : "mesh";
  set.origin_in_mesh = frame.origin;
  set.axes_in_mesh = frame.axes;
  set.center_of_mass = props.center_of_mass;
  set.mass = props.mass;
  set.volume = props.volume;
  set.brillouin_radius = brillouin;
  set.length_unit = to_string(regions.front().mesh.unit);
  for (size_t r = 0; r < regions.size(); ++r) {
    const DensityRegion& region = regions[r];
    Region info;
    info.mesh = region.mesh.source;
    info.checksum = region.mesh.checksum;
    info.unit = to_string(region.mesh.unit);
    info.density = region.density;
    info.volume = props.region_volumes[r];
    info.faces = long(region.mesh.faces.rows());
    set.regions.push_back(info);
  }
  set.created = std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_timestamp();
  // What import and the mesh checks changed in the input (a reversed inside-out mesh, merged vertices)
  // stays with the set, not only on the terminal of the run that made it.
  for (size_t r = 0; r < regions.size(); ++r)
    for (const auto& notice : regions[r].mesh.notices)
      set.history.push_back(fmt::format("region {} mesh {}: {}", r + 1, regions[r].mesh.source, notice));
  set.history.push_back(
      fmt::format("computed exactly from {} region(s), degree {}, G = {} m^3 kg^-1 s^-2 (CODATA 2018)",
                  regions.size(), options.degree, gravitational_constant));
  set.notes.push_back(operational_caution());
  set.notes.push_back(
      fmt::format("Homogeneous interior assumed within each region. The series converges only "
                  "outside the Brillouin sphere (radius {} m about the expansion origin).",
                  brillouin));
  if (options.convention.normalization != Normalization::fully || options.convention.condon_shortley ||
      options.convention.zonal_as_j)
    set = convert_convention(set, options.convention);
  return set;
}

}  // namespace

std::string to_string(OriginChoice origin) {
  switch (origin) {
    case OriginChoice::center_of_mass: return "com";
    case OriginChoice::mesh: return "mesh";
    case OriginChoice::point: return "point";
  }
  return "";
}

CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions,
                                    const ComputeOptions& options) {
  check_compute_request(regions, options);
  return coefficients_with(regions, mass_properties(regions, options.execution.threads), options);
}

CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                    const ComputeOptions& options) {
  check_compute_request(regions, options);
  if (props.region_volumes.size() != regions.size())
    throw ConventionError("mass properties given for a different number of regions");
  return coefficients_with(regions, props, options);
}

}  // namespace polystokes
