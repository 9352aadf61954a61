// Benchmark of the exact coefficient computation against its cost floor, and of the exact polyhedron gravity.
// Prints one table: facets, degree, threads, seconds, floor seconds, ratio, peak memory; then gravity figures.
//
// The floor: every facet must touch each of the (N+1)^2 coefficients, so a computation needs at least
// F (N+1)^2 multiply-adds. The floor loop does exactly that many over data read from memory (a per-facet
// weight times (N+1)^2 table values, the table cycled so it stays in the first-level cache; eight independent
// vector accumulators), split over the same threads and built with the same instruction-set clones as the
// kernel; its result is printed so it cannot be removed.
#include <malloc.h>
#include <sys/resource.h>

#include <algorithm>
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

#include "fan_decomposition.h"
#include "harmonics.h"
#include "moment_kernel.h"
#include "polyhedron_gravity.h"
#include "series.h"
#include "shapes.h"

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
double floor_kernel(const double* weight, long begin, long end, const double* table, long table_size, long count) {
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

double floor_run(const std::vector<double>& weight, const std::vector<double>& table, long count, int threads) {
  const long faces = long(weight.size());
  std::vector<double> result(size_t(threads), 0.0);
  std::vector<std::thread> pool;
  for (int t = 0; t < threads; ++t)
    pool.emplace_back([&, t] {
      result[size_t(t)] = floor_kernel(weight.data(), faces * t / threads, faces * (t + 1) / threads, table.data(),
                                       long(table.size()), count);
    });
  for (auto& thread : pool) thread.join();
  return std::accumulate(result.begin(), result.end(), 0.0);
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
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

// Operator products per face of the fan decomposition with the kernel's block size at `degree`.
double products_per_face(const Mesh& mesh, int degree) {
  FanDecomposer decomposer;
  const Eigen::Index size = moment_block_faces(degree), faces = mesh.faces.rows();
  double products = 0;
  for (Eigen::Index begin = 0; begin < faces; begin += size)
    products += double(decomposer.decompose(mesh.faces, mesh.vertices.rows(), begin, std::min(faces, begin + size)).products());
  return products / double(faces);
}

struct Settings {
  std::vector<int> frequencies, degrees, threads;
  int repeat = 2;
  bool shuffled_row = true;
  int gravity_frequency = 71, gravity_points = 64;
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

void usage() {
  std::printf(
      "usage: polystokes_bench [--quick] [--frequencies K,..] [--degrees N,..] [--threads T,..] [--repeat R]\n"
      "                        [--gravity-frequency K] [--gravity-points P] [--no-shuffled]\n"
      "Meshes are lumpy geodesic spheres with 20 K^2 facets (default K = 71, 100, 224: 1.0e5, 2.0e5, 1.0e6\n"
      "facets); --quick uses K = 23, 32 and degrees 20, 50 for a run of a few seconds.\n");
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
  std::printf("seconds = compute_coefficients (mass properties + moments + coefficients); floor = F (N+1)^2\n"
              "multiply-adds on the same threads; memory = peak resident increase during the call / mesh bytes\n\n");
  std::printf("%-16s %9s %6s %7s %9s %9s %7s %9s %9s %8s\n", "mesh", "facets", "degree", "threads", "seconds",
              "floor s", "ratio", "products", "memory", "x mesh");
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
      const double products = products_per_face(mesh, degree);
      for (int threads : settings.threads) {
        ComputeOptions options;
        options.degree = degree;
        options.execution.threads = threads;
        double best = 1e300, best_floor = 1e300, memory = 0;
        for (int r = 0; r < settings.repeat; ++r) {
          auto start = std::chrono::steady_clock::now();
          checksum += floor_run(weight, table, count, threads);
          best_floor = std::min(best_floor, seconds_since(start));
          malloc_trim(0);
          const double before = status_bytes("VmRSS");
          const bool peak_reset = reset_peak();
          start = std::chrono::steady_clock::now();
          const CoefficientSet set = compute_coefficients(regions, options);
          best = std::min(best, seconds_since(start));
          if (r == 0) memory = peak_reset ? status_bytes("VmHWM") - before : 0;
          checksum += set.C(degree, 0);
        }
        std::printf("%-16s %9ld %6d %7d %9.3f %9.4f %7.1f %9.3f %7.1f MB %8.2f\n", mesh.source.c_str(), faces, degree,
                    threads, best, best_floor, best / best_floor, products, memory / 1e6, memory / mesh_bytes(mesh));
        std::fflush(stdout);
      }
    }
  }

  // Exact polyhedron gravity (used by `field` and `validate`): cost per facet and point, near and far.
  const Mesh body = lumpy_body(settings.gravity_frequency);
  const std::vector<DensityRegion> regions{{body, 2000.0}};
  const PolyhedronGravity gravity(regions);
  std::mt19937_64 random(7);
  std::normal_distribution<double> normal;
  std::printf("\npolyhedron gravity on %s (%ld facets), %d points per set: ns per facet-point\n", body.source.c_str(),
              long(body.faces.rows()), settings.gravity_points);
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

  // Series evaluation (the other half of `validate`): per point at the largest degree benchmarked.
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
  std::printf("\n(checksum %.6g)\n", checksum);
  return 0;
}
