#include "harmonics.h"

#include <Eigen/Dense>
#include <algorithm>
#include <atomic>
#include <cmath>
#include <ctime>
#include <fmt/format.h>
#include <mutex>
#include <thread>

#include "conventions.h"
#include "errors.h"

namespace polystokes {

void fully_normalized_legendre(int degree, double t, Eigen::MatrixXd& out) {
  out.setZero(degree + 1, degree + 1);
  const double u = std::sqrt(std::max(0.0, (1.0 - t) * (1.0 + t)));
  out(0, 0) = 1.0;
  if (degree == 0) return;
  // Sectorial seeds, then the forward column recursion in n for each m
  // (Holmes & Featherstone 2002, J. Geodesy 76, eqs. 11-13).
  out(1, 1) = std::sqrt(3.0) * u;
  for (int m = 2; m <= degree; ++m) out(m, m) = u * std::sqrt((2.0 * m + 1.0) / (2.0 * m)) * out(m - 1, m - 1);
  for (int m = 0; m <= degree; ++m) {
    if (m + 1 <= degree) out(m + 1, m) = std::sqrt(2.0 * m + 3.0) * t * out(m, m);
    for (int n = m + 2; n <= degree; ++n) {
      const double a = std::sqrt((2.0 * n - 1.0) * (2.0 * n + 1.0) / ((n - m) * double(n + m)));
      const double b = std::sqrt((2.0 * n + 1.0) * (n + m - 1.0) * (n - m - 1.0) / ((n - m) * double(n + m) * (2.0 * n - 3.0)));
      out(n, m) = a * t * out(n - 1, m) - b * out(n - 2, m);
    }
  }
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
      face.v[k] = frame.axes * (mesh.vertices.row(mesh.faces(f, k)).transpose() - frame.origin) / frame.scale_radius;
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
// Math. Comp. 80, Cor. 12). With v0 = origin, l(v0) = 0 and h_n(a, b, c) follows from
//   h_n(a) = a h_{n-1}(a),  h_n(a,b) = h_n(a) + b h_{n-1}(a,b),  h_n(a,b,c) = h_n(a,b) + c h_{n-1}(a,b,c),
// each product being a 3-term operator on Fourier coefficients: O(n) per step, O(N^2) per face.
// Coefficients are stored scaled, G~_k = 2^k G_k, for k >= 0 only: every product of l_u's satisfies
// f(u) = conj f(u + pi), hence G_{-k} = (-1)^k conj G_k. The scaling keeps all stored values O(r^n) and turns
// the normalization factor into K_nm / 2^m <= 1, so no degree overflows and the small high-order terms are
// never formed as differences of large numbers.
class FaceAccumulator {
 public:
  explicit FaceAccumulator(int degree) : degree_(degree) {
    for (auto& buffer : buffers_) buffer.assign(size_t(degree + 2), 0.0);
  }

  void add(const ScaledFace& face, double* acc_re, double* acc_im) {
    for (auto& buffer : buffers_) std::fill(buffer.begin(), buffer.end(), 0.0);
    // prev/cur re/im for the three running products h(a), h(a,b), h(a,b,c).
    double* prev_re[3];
    double* prev_im[3];
    double* cur_re[3];
    double* cur_im[3];
    for (int j = 0; j < 3; ++j) {
      prev_re[j] = buffers_[4 * j + 0].data();
      prev_im[j] = buffers_[4 * j + 1].data();
      cur_re[j] = buffers_[4 * j + 2].data();
      cur_im[j] = buffers_[4 * j + 3].data();
      prev_re[j][0] = 1.0;
    }
    Factor factor[3];
    for (int j = 0; j < 3; ++j) factor[j] = Factor(face.v[j]);
    acc_re[0] += face.det;
    for (int n = 1; n <= degree_; ++n) {
      multiply(factor[0], prev_re[0], prev_im[0], nullptr, nullptr, n, cur_re[0], cur_im[0]);
      multiply(factor[1], prev_re[1], prev_im[1], cur_re[0], cur_im[0], n, cur_re[1], cur_im[1]);
      multiply(factor[2], prev_re[2], prev_im[2], cur_re[1], cur_im[1], n, cur_re[2], cur_im[2]);
      double* out_re = acc_re + triangle_offset(n);
      double* out_im = acc_im + triangle_offset(n);
      const double det = face.det;
      for (int k = 0; k <= n; ++k) {
        out_re[k] += det * cur_re[2][k];
        out_im[k] += det * cur_im[2][k];
      }
      for (int j = 0; j < 3; ++j) {
        std::swap(prev_re[j], cur_re[j]);
        std::swap(prev_im[j], cur_im[j]);
      }
    }
  }

 private:
  // l_u(v) in scaled coefficients: G~'_k = z G~_k + beta G~_{k-1} + alpha G~_{k+1}, where
  // beta = 2 * (i/2)(x + iy) = -y + ix and alpha = (1/2) * (i/2)(x - iy) = (y + ix)/4.
  struct Factor {
    Factor() = default;
    explicit Factor(const Eigen::Vector3d& v)
        : z(v.z()), beta_re(-v.y()), beta_im(v.x()), alpha_re(v.y() / 4.0), alpha_im(v.x() / 4.0) {}
    double z = 0, beta_re = 0, beta_im = 0, alpha_re = 0, alpha_im = 0;
  };

  // out = add + l * p, p holding degree n-1 (entries n and n+1 are zero).
  static void multiply(const Factor& l, const double* p_re, const double* p_im, const double* add_re,
                       const double* add_im, int n, double* out_re, double* out_im) {
    // k = 0 needs G~_{-1} = -conj(G~_1) / 4.
    const double m1_re = -p_re[1] / 4.0, m1_im = p_im[1] / 4.0;
    out_re[0] = l.z * p_re[0] + (l.beta_re * m1_re - l.beta_im * m1_im) + (l.alpha_re * p_re[1] - l.alpha_im * p_im[1]);
    out_im[0] = l.z * p_im[0] + (l.beta_re * m1_im + l.beta_im * m1_re) + (l.alpha_re * p_im[1] + l.alpha_im * p_re[1]);
    for (int k = 1; k <= n; ++k) {
      out_re[k] = l.z * p_re[k] + (l.beta_re * p_re[k - 1] - l.beta_im * p_im[k - 1]) +
                  (l.alpha_re * p_re[k + 1] - l.alpha_im * p_im[k + 1]);
      out_im[k] = l.z * p_im[k] + (l.beta_re * p_im[k - 1] + l.beta_im * p_re[k - 1]) +
                  (l.alpha_re * p_im[k + 1] + l.alpha_im * p_re[k + 1]);
    }
    if (add_re) {
      for (int k = 0; k <= n; ++k) {
        out_re[k] += add_re[k];
        out_im[k] += add_im[k];
      }
    }
  }

  int degree_;
  std::vector<double> buffers_[12];
};

// Facets are cut into a fixed number of chunks that does not depend on the thread count, and chunk sums are
// added in chunk order, so results are bit-identical for any number of threads.
struct Chunk {
  size_t region;
  Eigen::Index begin, end;
};

std::vector<Chunk> make_chunks(const std::vector<DensityRegion>& regions) {
  constexpr Eigen::Index chunk_faces = 4096;
  std::vector<Chunk> chunks;
  for (size_t r = 0; r < regions.size(); ++r) {
    const Eigen::Index faces = regions[r].mesh.faces.rows();
    for (Eigen::Index begin = 0; begin < faces; begin += chunk_faces)
      chunks.push_back({r, begin, std::min(faces, begin + chunk_faces)});
  }
  return chunks;
}

int thread_count(int requested, size_t work_items) {
  int threads = requested > 0 ? requested : int(std::max(1u, std::thread::hardware_concurrency()));
  return int(std::min<size_t>(size_t(threads), std::max<size_t>(1, work_items)));
}

// Runs chunk_work(chunk, acc_re, acc_im) over all chunks on a pool, each chunk into its own partial sum of
// `size` entries, and returns the ordered reduction. Peak extra memory: one partial per thread plus one per
// finished-but-unreduced chunk (reduced in order as soon as possible).
template <class Work>
void reduce_chunks(const std::vector<Chunk>& chunks, size_t size, const MomentOptions& options, Work&& chunk_work,
                   std::vector<double>& total_re, std::vector<double>& total_im) {
  total_re.assign(size, 0.0);
  total_im.assign(size, 0.0);
  std::vector<std::vector<double>> partial_re(chunks.size()), partial_im(chunks.size());
  std::vector<char> done(chunks.size(), 0);
  size_t next_to_reduce = 0;
  std::atomic<size_t> next_chunk{0};
  std::mutex mutex;
  auto worker = [&]() {
    for (;;) {
      const size_t c = next_chunk.fetch_add(1);
      if (c >= chunks.size()) return;
      std::vector<double> re(size, 0.0), im(size, 0.0);
      chunk_work(chunks[c], re.data(), im.data());
      std::lock_guard<std::mutex> lock(mutex);
      partial_re[c].swap(re);
      partial_im[c].swap(im);
      done[c] = 1;
      while (next_to_reduce < chunks.size() && done[next_to_reduce]) {
        for (size_t i = 0; i < size; ++i) {
          total_re[i] += partial_re[next_to_reduce][i];
          total_im[i] += partial_im[next_to_reduce][i];
        }
        std::vector<double>().swap(partial_re[next_to_reduce]);
        std::vector<double>().swap(partial_im[next_to_reduce]);
        ++next_to_reduce;
      }
      if (options.progress) options.progress(double(next_to_reduce) / double(chunks.size()));
    }
  };
  const int threads = thread_count(options.threads, chunks.size());
  std::vector<std::thread> pool;
  for (int t = 1; t < threads; ++t) pool.emplace_back(worker);
  worker();
  for (auto& thread : pool) thread.join();
}

void check_degree(int degree) {
  if (degree < 0) throw ConventionError("degree must be >= 0, got " + std::to_string(degree));
  // Four (degree+1)^2 matrices per set plus per-thread partial sums; refuse before allocating.
  const double bytes = 8.0 * 8.0 * double(degree + 1) * double(degree + 1);
  constexpr double limit = 8e9;
  if (degree > 20000 || bytes > limit)
    throw ResourceError(fmt::format("degree {} would need about {:.1f} GB for the coefficient tables; "
                                    "refusing (limit {:.0f} GB)", degree, bytes / 1e9, limit / 1e9));
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
    // int over a tetrahedron = det * n!/(n+3)! * h_n; Pnm r^n e^{im lon} = sqrt((2-d_m0)(2n+1)) K~_nm (-i)^m G~_m
    // with K~_nm = sqrt((n-m)!(n+m)!)/(n! 2^m), built as a running product.
    const double degree_factor = r3 / ((n + 1.0) * (n + 2.0) * (n + 3.0)) * std::sqrt(2.0 * n + 1.0);
    double k_scaled = 1.0;
    for (int m = 0; m <= n; ++m) {
      if (m > 0) k_scaled *= std::sqrt((n + m) / double(n - m + 1)) / 2.0;
      const double factor = degree_factor * k_scaled * (m == 0 ? 1.0 : std::sqrt(2.0));
      const double a = re[triangle_offset(n) + size_t(m)], b = im[triangle_offset(n) + size_t(m)];
      double out_re = 0, out_im = 0;
      switch (m % 4) {  // multiply by (-i)^m
        case 0: out_re = a; out_im = b; break;
        case 1: out_re = b; out_im = -a; break;
        case 2: out_re = -a; out_im = -b; break;
        default: out_re = -b; out_im = a; break;
      }
      moments.re(n, m) = factor * out_re;
      moments.im(n, m) = factor * out_im;
    }
  }
  return moments;
}

void check_frame(const HarmonicFrame& frame, const std::vector<DensityRegion>& regions) {
  if (!(frame.scale_radius > 0)) throw ConventionError("scale radius must be positive");
  if (!(frame.scale_radius >= brillouin_radius(regions, frame.origin) * (1 - 1e-12)))
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
      if (q == 1) { p1 = x; p0 = 1; }
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

HarmonicMoments harmonic_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                 int degree, const MomentOptions& options) {
  check_degree(degree);
  check_frame(frame, regions);
  const auto chunks = make_chunks(regions);
  std::vector<double> re, im;
  reduce_chunks(chunks, triangle_size(degree), options,
                [&](const Chunk& chunk, double* acc_re, double* acc_im) {
                  FaceAccumulator accumulator(degree);
                  for_each_scaled_face(regions[chunk.region], frame, chunk.begin, chunk.end,
                                       [&](const ScaledFace& face) { accumulator.add(face, acc_re, acc_im); });
                },
                re, im);
  return unpack_moments(degree, frame.scale_radius, re, im);
}

HarmonicMoments harmonic_moments_reference(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                           int degree) {
  check_degree(degree);
  check_frame(frame, regions);
  // int_T f dV = det/(n+3) int_{w1,w2>=0, w1+w2<=1} f(w1 a + w2 b + (1-w1-w2) c) dw for f homogeneous of degree n
  // (radial integration of the cone over the face). The face integral uses the collapsed (Duffy) square
  // w1 = s, w2 = (1-s) t with q-point Gauss-Legendre in s and t, exact for degree 2q-1 >= n+1.
  const int q = degree / 2 + 1;
  std::vector<double> nodes, weights;
  gauss_legendre_unit(q, nodes, weights);
  Eigen::MatrixXd sum_re = Eigen::MatrixXd::Zero(degree + 1, degree + 1);
  Eigen::MatrixXd sum_im = sum_re;
  Eigen::MatrixXd legendre;
  std::vector<double> cos_m(size_t(degree + 1)), sin_m(size_t(degree + 1));
  for (const auto& region : regions) {
    for_each_scaled_face(region, frame, 0, region.mesh.faces.rows(), [&](const ScaledFace& face) {
      for (int i = 0; i < q; ++i) {
        for (int j = 0; j < q; ++j) {
          const double s = nodes[size_t(i)], t = nodes[size_t(j)];
          const double w = weights[size_t(i)] * weights[size_t(j)] * (1.0 - s);
          const Eigen::Vector3d x = s * face.v[0] + (1.0 - s) * t * face.v[1] + (1.0 - s) * (1.0 - t) * face.v[2];
          const double r = x.norm();
          if (r == 0) continue;
          const double lon = std::atan2(x.y(), x.x());
          for (int m = 0; m <= degree; ++m) {
            cos_m[size_t(m)] = std::cos(m * lon);
            sin_m[size_t(m)] = std::sin(m * lon);
          }
          fully_normalized_legendre(degree, x.z() / r, legendre);
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
  return "CAUTION: this is a constant-density, shape-derived gravity model. Validate it against tracking data "
         "and review it under the mission's own procedures before any operational use.";
}

namespace {

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

}  // namespace

CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const ComputeOptions& options) {
  check_degree(options.degree);
  if (regions.empty()) throw ConventionError("no mesh given");
  if (options.reference_radius < 0 || !std::isfinite(options.reference_radius))
    throw ConventionError("reference radius must be positive");
  const MassProperties props = mass_properties(regions);

  HarmonicFrame frame;
  frame.origin = options.origin == OriginChoice::center_of_mass ? props.center_of_mass : Eigen::Vector3d::Zero();
  if (options.frame == FrameChoice::principal) frame.axes = props.principal_axes.transpose();
  const double brillouin = brillouin_radius(regions, frame.origin);
  frame.scale_radius = brillouin;
  const double reference = options.reference_radius > 0 ? options.reference_radius : brillouin;

  const HarmonicMoments moments = harmonic_moments(regions, frame, options.degree, options.execution);

  CoefficientSet set = make_empty_set(options.degree);
  // Normalizing by the kernel's own degree-0 moment (the same mass to rounding) makes C00 exactly 1.
  moments_to_coefficients(moments, moments.re(0, 0), reference, set);
  set.body = options.body;
  set.gm = gravitational_constant * props.mass;
  set.reference_radius = reference;
  set.origin = options.origin == OriginChoice::center_of_mass ? "com" : "mesh";
  set.frame = options.frame == FrameChoice::principal ? "principal" : "mesh";
  set.origin_in_mesh = frame.origin;
  set.axes_in_mesh = frame.axes;
  set.center_of_mass = props.center_of_mass;
  set.mass = props.mass;
  set.volume = props.volume;
  set.brillouin_radius = brillouin;
  set.length_unit = to_string(regions.front().mesh.unit);
  for (const auto& region : regions) {
    Region info;
    info.mesh = region.mesh.source;
    info.checksum = region.mesh.checksum;
    info.unit = to_string(region.mesh.unit);
    info.density = region.density;
    info.volume = volume_moments(region.mesh).volume;
    info.faces = long(region.mesh.faces.rows());
    set.regions.push_back(info);
  }
  set.created = std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_now();
  set.history.push_back(fmt::format("computed exactly from {} region(s), degree {}, G = {} m^3 kg^-1 s^-2 (CODATA 2018)",
                                    regions.size(), options.degree, gravitational_constant));
  set.notes.push_back(operational_caution());
  set.notes.push_back(fmt::format("Homogeneous interior assumed within each region. The series converges only "
                                  "outside the Brillouin sphere (radius {} m about the expansion origin).",
                                  brillouin));
  if (options.convention.normalization != Normalization::fully || options.convention.condon_shortley ||
      options.convention.zonal_as_j)
    set = convert_convention(set, options.convention);
  return set;
}

}  // namespace polystokes
