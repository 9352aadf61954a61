// Benchmark of the exact coefficient computation against its cost floor, and of the exact polyhedron gravity.
// Prints one table: facets, degree, threads, seconds, floor seconds, ratio, peak memory; then gravity
// figures; then the whole `compute` command on a 10^6-facet OBJ file against the cost of parsing it.
//
// The coefficient floor: every facet must touch each of the (N+1)^2 coefficients, so a computation needs at
// least F (N+1)^2 multiply-adds. The floor loop does exactly that many over data read from memory (a
// per-facet weight times (N+1)^2 table values, the table cycled so it stays in the first-level cache; eight
// independent vector accumulators), split over the same threads and built with the same instruction-set
// clones as the kernel; its result is printed so it cannot be removed.
#include <malloc.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <tbb/global_control.h>
#include <time.h>
#include <unistd.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <numeric>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "harmonics/face_blocks.h"
#include "harmonics/moment_kernel.h"
#include "mesh/self_intersections.h"
#include "polystokes/field/fast_field.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/field/series.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/harmonics/moments.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/mesh_measures.h"
#include "polystokes/mesh/shapes.h"
#include "polystokes/uncertainty/uncertainty.h"

#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__)
#define BENCH_CLONES __attribute__((target_clones("arch=x86-64-v3", "default")))
#pragma GCC diagnostic ignored "-Wpsabi"
#else
#define BENCH_CLONES
#endif

using namespace polystokes;

namespace {

typedef double v4 __attribute__((vector_size(32)));

// Sum over f in [begin, end) and j < count of weight[f] * table[j % table_size]: (end - begin) * count
// multiply-adds, the table small enough to stay in the first-level cache whatever the degree.
BENCH_CLONES
double floor_kernel(const double* weight, long begin, long end, const double* table, long table_size,
                    long count) {
  v4 acc[8];
  for (auto& a : acc) a = v4{0, 0, 0, 0};
  double tail = 0;
  for (long f = begin; f < end; ++f) {
    const double w = weight[f];
    const v4 s = v4{w, w, w, w};
    for (long done = 0; done < count; done += table_size) {
      const long length = std::min(table_size, count - done);
      const long wide = length / 32 * 32, narrow = length / 4 * 4;
      for (long j = 0; j < wide; j += 32)
        for (int q = 0; q < 8; ++q) {
          v4 t;
          std::memcpy(&t, table + j + 4 * q, sizeof t);
          acc[q] = acc[q] + s * t;
        }
      for (long j = wide; j < narrow; j += 4) {
        v4 t;
        std::memcpy(&t, table + j, sizeof t);
        acc[0] = acc[0] + s * t;
      }
      for (long j = narrow; j < length; ++j) tail += w * table[j];
    }
  }
  v4 sum = acc[0];
  for (int q = 1; q < 8; ++q) sum = sum + acc[q];
  return sum[0] + sum[1] + sum[2] + sum[3] + tail;
}

double floor_run(const std::vector<double>& weight, const std::vector<double>& table, long count,
                 int threads) {
  const long faces = long(weight.size());
  std::vector<double> result(size_t(threads), 0.0);
  std::vector<std::thread> pool;
  for (int t = 0; t < threads; ++t)
    pool.emplace_back([&, t] {
      result[size_t(t)] = floor_kernel(weight.data(), faces * t / threads, faces * (t + 1) / threads,
                                       table.data(), long(table.size()), count);
    });
  for (auto& thread : pool) thread.join();
  return std::accumulate(result.begin(), result.end(), 0.0);
}

std::string fmt_e(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.1e", value);
  return text;
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Processor time of the whole process (all threads), s: unaffected by other programs sharing the cores.
double process_seconds() {
  timespec now;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &now);
  return double(now.tv_sec) + 1e-9 * double(now.tv_nsec);
}

// Resident memory in bytes from /proc/self/status ("VmRSS" now, "VmHWM" peak); 0 if unavailable.
double status_bytes(const char* key) {
  std::ifstream status("/proc/self/status");
  std::string line;
  const size_t length = std::strlen(key);
  while (std::getline(status, line))
    if (line.compare(0, length, key) == 0 && line.size() > length && line[length] == ':')
      return 1024.0 * std::atof(line.c_str() + length + 1);
  return 0;
}

// Resets the peak-resident counter (Linux >= 4.0); returns false if that is not possible.
bool reset_peak() {
  std::ofstream clear("/proc/self/clear_refs");
  clear << "5";
  return bool(clear);
}

double mesh_bytes(const Mesh& mesh) {
  return double(mesh.vertices.size()) * sizeof(double) + double(mesh.faces.size()) * sizeof(int);
}

// A lumpy, star-shaped body: the geodesic sphere with a smooth radial relief of about +-25 %.
Mesh lumpy_body(int frequency) {
  Mesh mesh = make_geodesic_sphere(frequency);
  for (Eigen::Index i = 0; i < mesh.vertices.rows(); ++i) {
    const Eigen::Vector3d u = mesh.vertices.row(i).transpose();
    const double r = 1.0 + 0.15 * std::sin(3.0 * u.x() + 1.0) * std::cos(2.0 * u.y()) + 0.1 * u.z() * u.z() -
                     0.08 * std::cos(5.0 * u.y() - 2.0 * u.z());
    mesh.vertices.row(i) = (1000.0 * r * u).transpose();  // metres
  }
  mesh.source = "lumpy" + std::to_string(frequency);
  return mesh;
}

Mesh shuffled(const Mesh& mesh) {
  Mesh out = mesh;
  std::vector<Eigen::Index> order(size_t(mesh.faces.rows()));
  std::iota(order.begin(), order.end(), 0);
  std::mt19937_64 random(12345);
  std::shuffle(order.begin(), order.end(), random);
  for (size_t i = 0; i < order.size(); ++i) out.faces.row(Eigen::Index(i)) = mesh.faces.row(order[i]);
  out.source = mesh.source + "-shuffled";
  return out;
}

// --- Accuracy: the fast path against the quadrature reference and against the same recursion in extended
// precision, face by face (80-bit long double on x86-64: 11 more bits), to see how rounding grows with
// degree.

// Sum over faces of weight * H_nk(h_n(a, b, c)) by the three plain recursions of h_n per face (no fans), in
// long double; same basis and k = -1 rule as moment_kernel.
void extended_precision_sums(const Mesh& mesh, const HarmonicFrame& frame, int degree,
                             std::vector<long double>& re, std::vector<long double>& im) {
  using Real = long double;
  const size_t row = size_t(degree) + 3;  // k = -1 .. degree + 1
  re.assign(size_t(degree + 1) * size_t(degree + 2) / 2, 0);
  im = re;
  std::vector<Real> seq_re(6 * row), seq_im(6 * row);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    Eigen::Vector3d v[3];
    for (int k = 0; k < 3; ++k)
      v[k] =
          frame.axes * (mesh.vertices.row(mesh.faces(f, k)).transpose() - frame.origin) / frame.scale_radius;
    const Real weight = Real(v[0].dot(v[1].cross(v[2])));
    std::fill(seq_re.begin(), seq_re.end(), 0);
    std::fill(seq_im.begin(), seq_im.end(), 0);
    // Sequence j (0: h(a), 1: h(a,b), 2: h(a,b,c)), parity p at (2 j + p) * row; order k at index k + 1.
    for (int j = 0; j < 3; ++j) seq_re[size_t(2 * j) * row + 1] = 1;
    re[0] += weight;
    for (int n = 1; n <= degree; ++n) {
      const size_t old_parity = size_t((n - 1) & 1), new_parity = size_t(n & 1);
      for (int j = 0; j < 3; ++j) {
        Real* o_re = &seq_re[(2 * size_t(j) + old_parity) * row];
        Real* o_im = &seq_im[(2 * size_t(j) + old_parity) * row];
        Real* n_re = &seq_re[(2 * size_t(j) + new_parity) * row];
        Real* n_im = &seq_im[(2 * size_t(j) + new_parity) * row];
        const Real* a_re = j == 0 ? nullptr : &seq_re[(2 * size_t(j - 1) + new_parity) * row];
        const Real* a_im = j == 0 ? nullptr : &seq_im[(2 * size_t(j - 1) + new_parity) * row];
        const Real x = v[j].x(), y = v[j].y(), z = v[j].z();
        o_re[0] = -o_re[2] / 4;
        o_im[0] = o_im[2] / 4;
        for (int k = 0; k <= n; ++k) {
          const size_t i = size_t(k) + 1;
          // H'_k = add + z H_k + w H_{k-1} - (conj(w)/4) H_{k+1}, w = x + i y.
          n_re[i] = (a_re ? a_re[i] : 0) + z * o_re[i] + x * o_re[i - 1] - y * o_im[i - 1] -
                    (x * o_re[i + 1] + y * o_im[i + 1]) / 4;
          n_im[i] = (a_im ? a_im[i] : 0) + z * o_im[i] + x * o_im[i - 1] + y * o_re[i - 1] -
                    (x * o_im[i + 1] - y * o_re[i + 1]) / 4;
        }
        n_re[size_t(n) + 2] = n_im[size_t(n) + 2] = 0;
      }
      const Real* h_re = &seq_re[(4 + new_parity) * row];
      const Real* h_im = &seq_im[(4 + new_parity) * row];
      for (int k = 0; k <= n; ++k) {
        re[size_t(n) * size_t(n + 1) / 2 + size_t(k)] += weight * h_re[k + 1];
        im[size_t(n) * size_t(n + 1) / 2 + size_t(k)] += weight * h_im[k + 1];
      }
    }
  }
  // Normalization as in harmonics.cpp: int over a tetrahedron = det n!/(n+3)! h_n, and
  // Pnm r^n e^{im lon} = sqrt((2 - d_m0)(2n+1)) K~_nm H_m with K~_nm = sqrt((n-m)!(n+m)!)/(n! 2^m).
  const Real r3 = Real(frame.scale_radius) * frame.scale_radius * frame.scale_radius;
  for (int n = 0; n <= degree; ++n) {
    const Real factor = r3 / ((n + 1.0L) * (n + 2.0L) * (n + 3.0L)) * std::sqrt(2.0L * n + 1);
    Real k_scaled = 1;
    for (int m = 0; m <= n; ++m) {
      if (m > 0) k_scaled *= std::sqrt((n + m) / Real(n - m + 1)) / 2;
      const size_t i = size_t(n) * size_t(n + 1) / 2 + size_t(m);
      re[i] *= factor * k_scaled * (m == 0 ? 1 : std::sqrt(2.0L));
      im[i] *= factor * k_scaled * (m == 0 ? 1 : std::sqrt(2.0L));
    }
  }
}

void print_accuracy(int max_degree) {
  struct Body {
    const char* name;
    Mesh mesh;
    Eigen::Vector3d origin;
  };
  Mesh tetra;
  tetra.vertices.resize(4, 3);
  tetra.vertices << 1.0, 0.2, -0.3, -0.4, 1.1, 0.1, -0.5, -0.7, 0.6, 0.3, -0.2, 1.2;
  tetra.faces.resize(4, 3);
  tetra.faces << 0, 1, 2, 0, 3, 1, 0, 2, 3, 1, 3, 2;
  const std::vector<Body> bodies = {
      {"tetrahedron", tetra, Eigen::Vector3d(0.05, 0.1, 0.15)},
      {"flat disk (z/10)",
       transformed(make_geodesic_sphere(2), Eigen::Vector3d(1.0, 0.9, 0.1).asDiagonal(),
                   Eigen::Vector3d::Zero()),
       Eigen::Vector3d(0.2, 0.1, 0.0)},
      {"cigar, origin near its end",
       transformed(make_geodesic_sphere(2), Eigen::Vector3d(1.5, 0.5, 0.4).asDiagonal(),
                   Eigen::Vector3d::Zero()),
       Eigen::Vector3d(1.0, 0.1, 0.05)},
  };
  const int reference_degree = std::min(max_degree, 150);
  std::printf(
      "\naccuracy: max over orders |fast - other| / max over orders |other|, per degree (worst in each "
      "band)\n");
  std::printf("%-28s %6s %8s %14s %16s\n", "body", "faces", "degrees", "vs reference", "vs long double");
  for (const Body& body : bodies) {
    const std::vector<DensityRegion> regions{{body.mesh, 1.0}};
    HarmonicFrame frame;
    frame.origin = body.origin;
    frame.scale_radius = brillouin_radius(regions, body.origin);
    const HarmonicMoments fast = harmonic_moments(regions, frame, max_degree);
    const HarmonicMoments reference = harmonic_moments_reference(regions, frame, reference_degree);
    std::vector<long double> ext_re, ext_im;
    extended_precision_sums(body.mesh, frame, max_degree, ext_re, ext_im);
    // Bands 0-9, 10-49, 50-99, 100-150, then 50 degrees each.
    for (int low = 0; low <= max_degree;) {
      const int high = std::min(max_degree, low == 0     ? 9
                                            : low == 10  ? 49
                                            : low == 50  ? 99
                                            : low == 100 ? 150
                                                         : low + 49);
      double vs_reference = 0, vs_extended = 0;
      for (int n = low; n <= high; ++n) {
        double worst_r = 0, scale_r = 0, worst_e = 0, scale_e = 0;
        for (int m = 0; m <= n; ++m) {
          const size_t i = size_t(n) * size_t(n + 1) / 2 + size_t(m);
          const double er = double(ext_re[i]), ei = double(ext_im[i]);
          worst_e = std::max({worst_e, std::abs(double(fast.re(n, m) - ext_re[i])),
                              std::abs(double(fast.im(n, m) - ext_im[i]))});
          scale_e = std::max({scale_e, std::abs(er), std::abs(ei)});
          if (n <= reference_degree) {
            worst_r = std::max({worst_r, std::abs(fast.re(n, m) - reference.re(n, m)),
                                std::abs(fast.im(n, m) - reference.im(n, m))});
            scale_r = std::max({scale_r, std::abs(reference.re(n, m)), std::abs(reference.im(n, m))});
          }
        }
        vs_extended = std::max(vs_extended, worst_e / scale_e);
        if (n <= reference_degree) vs_reference = std::max(vs_reference, worst_r / scale_r);
      }
      char range[32];
      std::snprintf(range, sizeof range, "%d-%d", low, high);
      std::printf("%-28s %6ld %8s %14s %16.1e\n", body.name, long(body.mesh.faces.rows()), range,
                  low <= reference_degree ? fmt_e(vs_reference).c_str() : "-", vs_extended);
      low = high + 1;
    }
  }
}

// --- End to end: the `compute` command on an OBJ file against the parse floor, the cost of reading the
// file's bytes into memory and converting every number in it with std::from_chars on one thread, nothing
// else (no mesh is built). Any reader must do at least this much.

// The parse floor over `path`: the file read whole, then each "v" line's numbers as doubles and each "f"
// line's as integers; returns the sum of all numbers so that the conversions cannot be removed.
double parse_floor(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  double sum = 0;
  const char* p = text.data();
  const char* const end = p + text.size();
  while (p < end) {
    const char* line_end = static_cast<const char*>(std::memchr(p, '\n', size_t(end - p)));
    if (line_end == nullptr) line_end = end;
    const bool vertex = *p == 'v', face = *p == 'f';
    for (++p; (vertex || face) && p < line_end;) {
      while (p < line_end && *p == ' ') ++p;
      if (p == line_end) break;
      if (vertex) {
        double value = 0;
        p = std::from_chars(p, line_end, value).ptr;
        sum += value;
      } else {
        long value = 0;
        p = std::from_chars(p, line_end, value).ptr;
        sum += double(value);
      }
      while (p < line_end && *p != ' ') ++p;  // the rest of a "i/j/k" face corner
    }
    p = line_end + 1;
  }
  return sum;
}

struct ChildRun {
  double seconds = 0;
  double cpu = 0;         // processor time of the child, user + system
  double peak_bytes = 0;  // peak resident set of the child (ru_maxrss)
  int status = -1;
};

// Runs a program with its arguments, output to /dev/null, and waits for it.
ChildRun run_child(const std::vector<std::string>& command) {
  std::vector<char*> argv;
  for (const std::string& word : command) argv.push_back(const_cast<char*>(word.c_str()));
  argv.push_back(nullptr);
  const auto start = std::chrono::steady_clock::now();
  const pid_t child = fork();
  if (child == 0) {
    std::freopen("/dev/null", "w", stdout);
    execv(argv[0], argv.data());
    _exit(127);
  }
  ChildRun out;
  rusage usage{};
  if (child > 0 && wait4(child, &out.status, 0, &usage) == child) {
    out.seconds = seconds_since(start);
    out.peak_bytes = 1024.0 * double(usage.ru_maxrss);
    out.cpu = double(usage.ru_utime.tv_sec + usage.ru_stime.tv_sec) +
              1e-6 * double(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
  }
  return out;
}

// Best wall-clock and best processor time (all threads) of `repeat` runs.
struct Timing {
  double wall = 1e300, cpu = 1e300;
};

template <class Work>
Timing best_of(int repeat, Work&& work) {
  Timing best;
  for (int r = 0; r < repeat; ++r) {
    const auto start = std::chrono::steady_clock::now();
    const double processor = process_seconds();
    work();
    best.wall = std::min(best.wall, seconds_since(start));
    best.cpu = std::min(best.cpu, process_seconds() - processor);
  }
  return best;
}

void print_end_to_end(int frequency, int repeat, int samples, const std::string& executable) {
  char directory[] = "/tmp/polystokes_bench_XXXXXX";
  if (mkdtemp(directory) == nullptr) {
    std::printf("\nend to end: no temporary directory\n");
    return;
  }
  const std::string path = std::string(directory) + "/lumpy.obj",
                    output = std::string(directory) + "/set.txt";
  Mesh generated = lumpy_body(frequency);
  write_obj(generated, path, LengthUnit::kilometer);
  const double bytes = mesh_bytes(generated);
  const long faces = long(generated.faces.rows());
  generated = Mesh();
  std::ifstream probe(path, std::ios::binary | std::ios::ate);
  const double file_bytes = double(probe.tellg());

  double checksum = 0;
  const Timing floor = best_of(repeat, [&] { checksum += parse_floor(path); });
  MeshReadOptions read_options;
  read_options.unit = LengthUnit::kilometer;
  Mesh mesh;
  const Timing read = best_of(repeat, [&] { mesh = read_mesh(path, read_options); });
  // Peak resident increase of each in-process stage: reading (file to Mesh), then checks and coefficients
  // on the mesh in memory (the mesh itself not counted).
  auto peak_increase = [&](auto&& work) {
    malloc_trim(0);
    const double before = status_bytes("VmRSS");
    if (!reset_peak()) return 0.0;
    work();
    return status_bytes("VmHWM") - before;
  };
  mesh = Mesh();
  const double read_peak = peak_increase([&] { mesh = read_mesh(path, read_options); });
  const double work_peak = peak_increase([&] {
                             Mesh copy = mesh;
                             checksum += double(validate_mesh(copy).checks.size());
                             ComputeOptions options;
                             options.degree = 20;
                             options.execution.threads = 2;
                             checksum += compute_coefficients({{copy, 2000.0}}, options).C(2, 0);
                           }) -
                           bytes;
  Timing checks, self_one, self_two;
  {
    tbb::global_control one(tbb::global_control::max_allowed_parallelism, 1);
    checks = best_of(repeat, [&] { checksum += double(inspect_mesh(mesh).checks.size()); });
    self_one = best_of(repeat, [&] { checksum += double(self_intersecting_pairs(mesh).count); });
  }
  {
    tbb::global_control two(tbb::global_control::max_allowed_parallelism, 2);
    self_two = best_of(repeat, [&] { checksum += double(self_intersecting_pairs(mesh).count); });
  }
  ChildRun command;
  command.seconds = 1e300;
  for (int r = 0; r < repeat; ++r) {
    const ChildRun run = run_child({executable, "compute", path, "--unit", "km", "--density", "2000",
                                    "--degree", "20", "--threads", "2", "-o", output});
    if (run.status != 0) {
      command = run;
      break;
    }
    if (run.seconds < command.seconds) command.seconds = run.seconds;
    command.cpu = r == 0 ? run.cpu : std::min(command.cpu, run.cpu);
    command.peak_bytes = std::max(command.peak_bytes, run.peak_bytes);
    command.status = 0;
  }

  // Monte Carlo: one shape-noise sample against one coefficient computation, both at degree 20 on one thread.
  // A sample computes its moments on one thread (a run spreads its samples over the threads), so one thread
  // on each side compares the work, not the parallelism.
  const std::vector<DensityRegion> regions{{mesh, 2000.0}};
  ComputeOptions compute;
  compute.degree = 20;
  compute.execution.threads = 1;
  const double coefficients =
      best_of(repeat, [&] { checksum += compute_coefficients(regions, compute).C(2, 0); }).wall;
  UncertaintySettings noise;
  noise.samples = samples;
  noise.shape.sigma = 1e-4 * mean_edge_length(mesh);
  const UncertaintyPlan plan = plan_uncertainty(regions, compute, noise);
  const auto start = std::chrono::steady_clock::now();
  for (long i = 0; i < samples; ++i) checksum += run_sample(plan, i).gm_delta;
  const double per_sample = seconds_since(start) / double(samples);

  std::printf(
      "\nend to end on a lumpy OBJ in km: %ld facets, %.1f MB file, mesh %.1f MB (24 B per vertex, 12 B "
      "per face)\n",
      faces, file_bytes / 1e6, bytes / 1e6);
  std::printf("%-44s %9s %9s %9s %9s %9s\n", "stage", "seconds", "x floor", "cpu s", "cpu ratio", "target");
  auto row = [&](const char* stage, const Timing& time, const char* target) {
    std::printf("%-44s %9.3f %9.2f %9.3f %9.2f %9s\n", stage, time.wall, time.wall / floor.wall, time.cpu,
                time.cpu / floor.cpu, target);
  };
  row("parse floor (read + from_chars, 1 thread)", floor, "");
  row("read_mesh (library reader, welding)", read, "");
  row("inspect_mesh (all checks, 1 thread)", checks, "");
  row("self-intersections alone, 1 thread", self_one, "<= 2.5");
  row("self-intersections alone, 2 threads", self_two, "<= 2.5");
  if (command.status == 0) {
    std::printf("%-44s %9.3f %9.2f %9.3f %9.2f %9s\n", "polystokes compute --degree 20 --threads 2",
                command.seconds, command.seconds / floor.wall, command.cpu, command.cpu / floor.cpu, "<= 5");
    std::printf("%-44s %7.1f MB %9.2f %9s\n", "peak resident of compute (x mesh size)",
                command.peak_bytes / 1e6, command.peak_bytes / bytes, "<= 6");
  } else {
    std::printf("%-44s failed (status %d): %s\n", "polystokes compute", command.status, executable.c_str());
  }
  std::printf("%-44s %7.1f MB %9.2f\n", "in process: peak increase of read_mesh", read_peak / 1e6,
              read_peak / bytes);
  std::printf("%-44s %7.1f MB %9.2f\n", "  of checks + coefficients (mesh copy excl.)", work_peak / 1e6,
              work_peak / bytes);
  std::printf("%-44s %9.3f\n", "compute_coefficients, degree 20, 1 thread", coefficients);
  std::printf("%-44s %9.3f %9.2f %9s\n", "Monte Carlo sample (x coefficient time)", per_sample,
              per_sample / coefficients, "<= 2");
  std::printf("(checksum %.6g)\n", checksum);
  std::remove(output.c_str());
  std::remove(path.c_str());
  rmdir(directory);
}

struct Settings {
  std::vector<int> frequencies, degrees, threads;
  int repeat = 2;
  bool shuffled_row = true;
  int gravity_frequency = 71, gravity_points = 64;
  int accuracy_degree = 0;         // 0: no accuracy section
  int end_to_end_frequency = 224;  // 0: no end-to-end section
  int samples = 4;                 // Monte Carlo samples timed
  std::string executable;          // the polystokes program; default: beside this one
  std::vector<int> fast_frequencies = {22};  // fast field on 20 K^2 facets, at every facet centroid; none: skip
  std::vector<double> fast_accuracies = {1e-8, 1e-10};
  int fast_direct_points = 256;  // the direct sum is timed on this many of the points and scaled
};

std::vector<int> parse_list(const char* text) {
  std::vector<int> values;
  for (const char* p = text; *p;) {
    char* end = nullptr;
    values.push_back(int(std::strtol(p, &end, 10)));
    if (end == p) break;
    p = *end == ',' ? end + 1 : end;
  }
  return values;
}

std::vector<double> parse_doubles(const char* text) {
  std::vector<double> values;
  for (const char* p = text; *p;) {
    char* end = nullptr;
    values.push_back(std::strtod(p, &end));
    if (end == p) break;
    p = *end == ',' ? end + 1 : end;
  }
  return values;
}

void usage() {
  std::printf(
      "usage: polystokes_bench [--quick] [--frequencies K,..] [--degrees N,..] [--threads T,..] [--repeat "
      "R]\n"
      "                        [--gravity-frequency K] [--gravity-points P] [--no-shuffled] [--accuracy N]\n"
      "                        [--end-to-end K] [--polystokes PATH] [--fast-field K,..] [--fast-accuracy A,..]\n"
      "Meshes are lumpy geodesic spheres with 20 K^2 facets (default K = 71, 100, 224: 1.0e5, 2.0e5, 1.0e6\n"
      "facets); --quick uses K = 23, 32 and degrees 20, 50 for a run of a few seconds. --accuracy N adds "
      "the\n"
      "error of the fast path against the quadrature reference (to degree 150) and against the same "
      "recursion\n"
      "in extended precision (to degree N) on three small bodies. --gravity-frequency 0 skips the gravity\n"
      "and series figures. --end-to-end K (default 224, --quick 50, 0 skips): the compute command on a lumpy "
      "OBJ file of 20 K^2\n"
      "facets against the parse floor, the self-intersection test alone, peak memory and the Monte Carlo\n"
      "per-sample cost; PATH is the polystokes program (default: beside this benchmark).\n"
      "--fast-field K,.. (default 22; 0 skips): the fast polyhedron field at every facet centroid of lumpy\n"
      "bodies of 20 K^2 facets (K = 22, 71, 224: 1e4, 1e5, 1e6) at each --fast-accuracy A,.. (default\n"
      "1e-8,1e-10), against the direct sum timed on 256 of the points and scaled.\n");
}

// Exact polyhedron gravity (used by `field` and `validate`): cost per facet and point, near and far; then
// series evaluation (the other half of `validate`) per point at the largest degree benchmarked.
void print_gravity(const Settings& settings, double& checksum) {
  const Mesh body = lumpy_body(settings.gravity_frequency);
  const std::vector<DensityRegion> regions{{body, 2000.0}};
  const PolyhedronGravity gravity(regions);
  std::mt19937_64 random(7);
  std::normal_distribution<double> normal;
  std::printf("\npolyhedron gravity on %s (%ld facets), %d points per set: ns per facet-point\n",
              body.source.c_str(), long(body.faces.rows()), settings.gravity_points);
  std::printf("%-22s %7s %9s %12s %9s\n", "points", "threads", "seconds", "ns/facet-pt", "speedup");
  for (double radius : {1.3e3, 3.0e3, 1.0e5}) {
    Points points(settings.gravity_points, 3);
    for (int i = 0; i < settings.gravity_points; ++i) {
      Eigen::Vector3d d(normal(random), normal(random), normal(random));
      points.row(i) = (radius * d.normalized()).transpose();
    }
    double one = 0;
    for (int threads : settings.threads) {
      double best = 1e300;
      for (int r = 0; r < settings.repeat; ++r) {
        const auto start = std::chrono::steady_clock::now();
        const auto values = gravity.evaluate(points, threads);
        best = std::min(best, seconds_since(start));
        checksum += values.front().potential;
      }
      if (threads == 1) one = best;
      const double per = best / (double(body.faces.rows()) * double(settings.gravity_points)) * 1e9;
      std::printf("at r = %-15.0f %7d %9.3f %12.2f %9s\n", radius, threads, best, per,
                  one > 0 ? std::to_string(one / best).substr(0, 4).c_str() : "-");
    }
  }

  if (!settings.degrees.empty()) {
    ComputeOptions options;
    options.degree = *std::max_element(settings.degrees.begin(), settings.degrees.end());
    const CoefficientSet set = compute_coefficients(regions, options);
    const SeriesModel series(set);
    Points points(1000, 3);
    for (int i = 0; i < 1000; ++i) {
      Eigen::Vector3d d(normal(random), normal(random), normal(random));
      points.row(i) = (2.0 * set.reference_radius * d.normalized()).transpose();
    }
    const auto start = std::chrono::steady_clock::now();
    const auto values = series.evaluate(points, 1);
    const double seconds = seconds_since(start);
    checksum += values.front().potential;
    std::printf("\nseries to degree %d: %.2f us per point (potential, acceleration, gradient; 1 thread)\n",
                options.degree, seconds / 1000 * 1e6);
  }
}

// The fast polyhedron field (fast multipole method) with P = F: every facet centroid of a lumpy body, all
// threads; the direct sum timed in the same run on a subset of the points and scaled to all of them; the
// accuracy is the run's own check against the direct sum (64 points) and its a-priori bound.
void print_fast_field(const Settings& settings, double& checksum) {
  const int cores = int(std::max(1u, std::thread::hardware_concurrency()));
  std::printf("\nfast polyhedron field, P = F (every facet centroid), %d threads; direct = the direct sum timed on "
              "%d points, scaled to P\n",
              cores, settings.fast_direct_points);
  std::printf("%9s %10s %6s %9s %9s %9s %8s %10s %10s %9s %9s %10s\n", "facets", "accuracy", "order", "setup s",
              "total s", "direct s", "ratio", "checked", "bound", "near/pt", "M2P/pt", "memory");
  for (const int frequency : settings.fast_frequencies) {
    const Mesh body = lumpy_body(frequency);
    const std::vector<DensityRegion> regions{{body, 2000.0}};
    const long faces = long(body.faces.rows());
    Points points(faces, 3);
    for (long f = 0; f < faces; ++f)
      points.row(f) = (body.vertices.row(body.faces(f, 0)) + body.vertices.row(body.faces(f, 1)) +
                       body.vertices.row(body.faces(f, 2))) /
                      3.0;
    const long subset = std::min<long>(faces, settings.fast_direct_points);
    Points some(subset, 3);
    for (long i = 0; i < subset; ++i) some.row(i) = points.row(i * faces / subset);
    const PolyhedronGravity direct(regions);
    auto start = std::chrono::steady_clock::now();
    checksum += direct.evaluate(some, 0).front().potential;
    const double direct_seconds = seconds_since(start) * double(faces) / double(subset);
    for (const double accuracy : settings.fast_accuracies) {
      malloc_trim(0);
      const double before = status_bytes("VmRSS");
      const bool peak_reset = reset_peak();
      start = std::chrono::steady_clock::now();
      FastFieldOptions options;
      options.accuracy = accuracy;
      const FastPolyhedronField fast(regions, options);
      const double setup = seconds_since(start);
      const FastFieldResult result = fast.evaluate(points);
      const double total = seconds_since(start);
      const double memory = peak_reset ? status_bytes("VmHWM") - before : 0;
      checksum += result.values.front().potential;
      const FastFieldReport& r = result.report;
      std::printf("%9ld %10.0e %6d %9.2f %9.2f %9.1f %8.1f %10.2e %10.2e %9.0f %9.1f %7.0f MB\n", faces, accuracy,
                  r.order, setup, total, direct_seconds, direct_seconds / total,
                  std::max(r.checked_potential, r.checked_acceleration),
                  std::max(r.bound_potential, r.bound_acceleration), double(r.near_pairs) / double(faces),
                  double(r.multipole_to_point) / double(faces), memory / 1e6);
      std::fflush(stdout);
    }
  }
}

}  // namespace

int main(int argc, char** argv) {
  Settings settings;
  settings.frequencies = {71, 100, 224};
  settings.degrees = {20, 50, 100, 150};
  const int cores = int(std::max(1u, std::thread::hardware_concurrency()));
  settings.threads = cores > 1 ? std::vector<int>{1, cores} : std::vector<int>{1};
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    auto value = [&]() -> const char* {
      if (i + 1 >= argc) {
        std::fprintf(stderr, "polystokes_bench: %s needs a value\n", arg.c_str());
        std::exit(1);
      }
      return argv[++i];
    };
    if (arg == "--quick") {
      settings.frequencies = {23, 32};
      settings.degrees = {20, 50};
      settings.repeat = 1;
      settings.gravity_frequency = 16;
      settings.gravity_points = 16;
      settings.end_to_end_frequency = 50;
      settings.samples = 2;
    } else if (arg == "--frequencies") {
      settings.frequencies = parse_list(value());
    } else if (arg == "--degrees") {
      settings.degrees = parse_list(value());
    } else if (arg == "--threads") {
      settings.threads = parse_list(value());
    } else if (arg == "--repeat") {
      settings.repeat = std::max(1, std::atoi(value()));
    } else if (arg == "--gravity-frequency") {
      settings.gravity_frequency = std::atoi(value());
    } else if (arg == "--gravity-points") {
      settings.gravity_points = std::max(1, std::atoi(value()));
    } else if (arg == "--accuracy") {
      settings.accuracy_degree = std::atoi(value());
    } else if (arg == "--end-to-end") {
      settings.end_to_end_frequency = std::atoi(value());
    } else if (arg == "--fast-field") {
      settings.fast_frequencies = parse_list(value());
      settings.fast_frequencies.erase(
          std::remove(settings.fast_frequencies.begin(), settings.fast_frequencies.end(), 0),
          settings.fast_frequencies.end());
    } else if (arg == "--fast-accuracy") {
      settings.fast_accuracies = parse_doubles(value());
    } else if (arg == "--polystokes") {
      settings.executable = value();
    } else if (arg == "--no-shuffled") {
      settings.shuffled_row = false;
    } else if (arg == "--help" || arg == "-h") {
      usage();
      return 0;
    } else {
      std::fprintf(stderr, "polystokes_bench: unknown option %s\n", arg.c_str());
      usage();
      return 1;
    }
  }

  std::printf("polystokes benchmark: kernel instruction set %s, %d hardware threads, best of %d run(s)\n",
              moment_kernel_isa(), cores, settings.repeat);
  // The coefficient table and its legend only when it has rows (--frequencies "" leaves it out).
  if (!settings.frequencies.empty()) {
    std::printf(
        "seconds = wall time of compute_coefficients (mass properties + moments + coefficients); floor =\n"
        "F (N+1)^2 multiply-adds on the same threads; ratio = seconds / floor s; cpu s and cpu ratio: the "
        "same\n"
        "with processor time of all threads (steadier when other programs share the cores); products = "
        "operator\n"
        "products per facet and degree; memory = peak resident increase during the call, and / mesh "
        "bytes\n\n");
    std::printf("%-16s %9s %6s %7s %9s %9s %7s %9s %9s %9s %10s %8s\n", "mesh", "facets", "degree", "threads",
                "seconds", "floor s", "ratio", "cpu s", "cpu ratio", "products", "memory", "x mesh");
  }
  double checksum = 0;
  std::vector<Mesh> meshes;
  for (int k : settings.frequencies) meshes.push_back(lumpy_body(k));
  if (settings.shuffled_row && !meshes.empty()) meshes.push_back(shuffled(meshes.front()));
  for (const Mesh& mesh : meshes) {
    const std::vector<DensityRegion> regions{{mesh, 2000.0}};
    const long faces = long(mesh.faces.rows());
    std::vector<double> weight(static_cast<size_t>(faces));
    for (long f = 0; f < faces; ++f) weight[size_t(f)] = 1.0 + 1e-9 * double(f % 1000);
    const bool is_shuffled = mesh.source.find("shuffled") != std::string::npos;
    for (int degree : settings.degrees) {
      if (is_shuffled && degree != settings.degrees.front()) continue;
      const long count = long(degree + 1) * long(degree + 1);
      std::vector<double> table(size_t(std::min(count, 1024L)));
      for (size_t j = 0; j < table.size(); ++j) table[j] = 1.0 / double(j + 1);
      const double products = moment_products_per_face(mesh, degree);
      for (int threads : settings.threads) {
        ComputeOptions options;
        options.degree = degree;
        options.execution.threads = threads;
        double best = 1e300, best_floor = 1e300, cpu = 1e300, cpu_floor = 1e300, memory = 0;
        for (int r = 0; r < settings.repeat; ++r) {
          auto start = std::chrono::steady_clock::now();
          double processor = process_seconds();
          checksum += floor_run(weight, table, count, threads);
          best_floor = std::min(best_floor, seconds_since(start));
          cpu_floor = std::min(cpu_floor, process_seconds() - processor);
          malloc_trim(0);
          const double before = status_bytes("VmRSS");
          const bool peak_reset = reset_peak();
          start = std::chrono::steady_clock::now();
          processor = process_seconds();
          const CoefficientSet set = compute_coefficients(regions, options);
          best = std::min(best, seconds_since(start));
          cpu = std::min(cpu, process_seconds() - processor);
          if (r == 0) memory = peak_reset ? status_bytes("VmHWM") - before : 0;
          checksum += set.C(degree, 0);
        }
        std::printf("%-16s %9ld %6d %7d %9.3f %9.4f %7.1f %9.3f %9.1f %9.3f %7.1f MB %8.2f\n",
                    mesh.source.c_str(), faces, degree, threads, best, best_floor, best / best_floor, cpu,
                    cpu / cpu_floor, products, memory / 1e6, memory / mesh_bytes(mesh));
        std::fflush(stdout);
      }
    }
  }

  if (settings.gravity_frequency > 0) print_gravity(settings, checksum);
  if (!settings.fast_frequencies.empty()) print_fast_field(settings, checksum);
  if (settings.accuracy_degree > 0) print_accuracy(settings.accuracy_degree);
  if (settings.end_to_end_frequency > 0) {
    std::string executable = settings.executable;
    if (executable.empty()) {
      char self[4096] = {};
      const ssize_t length = readlink("/proc/self/exe", self, sizeof self - 1);
      const std::string here(self, size_t(std::max<ssize_t>(0, length)));
      executable = here.substr(0, here.rfind('/') + 1) + "polystokes";
    }
    print_end_to_end(settings.end_to_end_frequency, settings.repeat, settings.samples, executable);
  }
  std::printf("\n(checksum %.6g)\n", checksum);
  return 0;
}
