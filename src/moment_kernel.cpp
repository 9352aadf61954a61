#include "moment_kernel.h"

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <utility>

// The kernel is compiled twice on x86-64 with GCC: for the baseline instruction set and for x86-64-v3
// (AVX2 + FMA, chosen at load time when the processor has it). The clone contracts a*b+c into fused
// multiply-adds, so its results differ from the baseline's by rounding; every thread runs the same clone, so
// results stay identical for any thread count on a given machine.
#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__)
#define POLYSTOKES_KERNEL_CLONES __attribute__((target_clones("arch=x86-64-v3", "default")))
#define POLYSTOKES_HAVE_CLONES 1
#else
#define POLYSTOKES_KERNEL_CLONES
#define POLYSTOKES_HAVE_CLONES 0
#endif

#if defined(__GNUC__) && !defined(__clang__)
// The 4-double vector type never crosses a call boundary (all helpers are always inlined), so the ABI note
// GCC gives for it in the baseline compilation does not apply.
#pragma GCC diagnostic ignored "-Wpsabi"
#endif

namespace polystokes {
namespace {

typedef double v4 __attribute__((vector_size(32)));

#define POLYSTOKES_INLINE inline __attribute__((always_inline))

POLYSTOKES_INLINE v4 load(const double* p) {
  v4 v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
POLYSTOKES_INLINE void store(double* p, v4 v) { std::memcpy(p, &v, sizeof v); }

// Row layout: order k at index k, rows on cache-line boundaries, so blocks of 4 orders are 32-byte aligned.
// Entries past the current degree are exact zeros (zeroed once, and every step computes exact zeros there
// from zeros), so the steps need no bounds.
int row_stride(int degree) {
  const int blocks = (degree + 4) / 4;
  return (4 * blocks + 5 + 7) / 8 * 8;  // after the last block the step loads up to index 4 blocks + 4
}

// One step of a row, in place: the product by l(v) plus `add`, in the scaled H basis H_k = (-i)^k 2^k G_k:
//   H'_k = add_k + z H_k + w H_{k-1} - (conj(w)/4) H_{k+1},   w = x + i y,
// on real and imaginary parts C, S:
//   C'_k = add + z C_k + x (C_{k-1} - C_{k+1}/4) - y (S_{k-1} + S_{k+1}/4)
//   S'_k = add + z S_k + x (S_{k-1} - S_{k+1}/4) + y (C_{k-1} + C_{k+1}/4).
// Each block's inputs (orders k-1..k+4) are loaded before the previous block is stored over them. Order -1,
// needed by order 0, follows from the symmetry f(u + pi) = conj f(u) of every product of l_u's:
// H_{-1} = -conj(H_1)/4, which keeps S_0 exactly zero.
// add_block(b, cre, cim) sets the added term of block b (orders 4b..4b+3); after(b, cre, cim) sees each
// result.
template <class Add, class After>
POLYSTOKES_INLINE void step_row(double* re, double* im, const double* coefficients, int blocks,
                                Add&& add_block, After&& after) {
  const v4 x = load(coefficients), y = load(coefficients + 4), z = load(coefficients + 8);
  const v4 quarter = {0.25, 0.25, 0.25, 0.25};
  double* r = re;
  double* s = im;
  // Orders -1, 0, 1, 2 of the first block from orders 0..3.
  typedef long long v4i __attribute__((vector_size(32)));
  const v4i previous = {1, 0, 1, 2};
  const v4 mirror_re = {-0.25, 1, 1, 1}, mirror_im = {0.25, 1, 1, 1};
  v4 c0 = load(r), cp = load(r + 1), s0 = load(s), sp = load(s + 1);
  v4 cm = __builtin_shuffle(c0, previous) * mirror_re, sm = __builtin_shuffle(s0, previous) * mirror_im;
  auto block = [&](int b) {
    v4 cre, cim;
    add_block(b, cre, cim);
    const v4 p = cm - quarter * cp, t = cm + quarter * cp;
    const v4 q = sm + quarter * sp, u = sm - quarter * sp;
    cre = cre + z * c0;
    cre = cre + x * p;
    cre = cre - y * q;
    cim = cim + z * s0;
    cim = cim + x * u;
    cim = cim + y * t;
    cm = load(r + 3);
    c0 = load(r + 4);
    cp = load(r + 5);
    sm = load(s + 3);
    s0 = load(s + 4);
    sp = load(s + 5);
    store(r, cre);
    store(s, cim);
    after(b, cre, cim);
    r += 4;
    s += 4;
  };
  for (int b = 0; b < blocks; ++b) block(b);
}

// The centre steps of one degree when rows have `Blocks` blocks: the fan sums are gathered face by face into
// accumulators that stay in registers, so each rim row pointer and weight is read once per degree.
template <int Blocks, class After>
POLYSTOKES_INLINE void centre_steps(const FanDecomposition& fans, double* rows, size_t stride,
                                    const double* coefficients, const double* weights,
                                    const double* const* face_edge, int first_centre, After&& after) {
  const int centres = int(fans.centres.size());
  for (int c = 0; c < centres; ++c) {
    v4 acc_re[Blocks], acc_im[Blocks];
#pragma GCC unroll 8
    for (int b = 0; b < Blocks; ++b) acc_re[b] = acc_im[b] = v4{0, 0, 0, 0};
    for (int f = fans.fan_begin[size_t(c)]; f < fans.fan_begin[size_t(c) + 1]; ++f) {
      const v4 w = load(weights + 4 * size_t(f));
      const double* rim = face_edge[f];
#pragma GCC unroll 8
      for (int b = 0; b < Blocks; ++b) {
        acc_re[b] = acc_re[b] + w * load(rim + 4 * b);
        acc_im[b] = acc_im[b] + w * load(rim + stride + 4 * b);
      }
    }
    const size_t e = size_t(first_centre + c);
    double* r = rows + e * 2 * stride;
    step_row(
        r, r + stride, coefficients + 12 * e, Blocks,
        [&](int b, v4& cre, v4& cim) {
          cre = acc_re[b];
          cim = acc_im[b];
        },
        after);
  }
}

// Aligns the workspace to a cache line and returns its start.
double* aligned_memory(std::vector<double>& memory, size_t doubles) {
  if (memory.size() < doubles + 8) memory.resize(doubles + 8);
  const uintptr_t address = reinterpret_cast<uintptr_t>(memory.data());
  return memory.data() + ((64 - address % 64) % 64) / sizeof(double);
}

size_t workspace_doubles(int degree, size_t entities, size_t faces) {
  const size_t stride = size_t(row_stride(degree));
  return entities * 2 * stride + 12 * entities + 4 * faces;
}

}  // namespace

size_t fan_workspace_bytes(int degree, size_t entities, size_t faces) {
  return sizeof(double) * (workspace_doubles(degree, entities, faces) + 8) + sizeof(double*) * 2 * faces;
}

POLYSTOKES_KERNEL_CLONES
void accumulate_fan_block(const FanDecomposition& fans, const Eigen::Vector3d* local,
                          const double* fan_weights, int degree, FanWorkspace& workspace, double* out_re,
                          double* out_im) {
  const size_t stride = size_t(row_stride(degree));
  const int sources = int(fans.sources.size()), edges = int(fans.edge_source.size());
  const int centres = int(fans.centres.size());
  const size_t entities = size_t(sources + edges + centres), faces = fans.fan_faces.size();
  double* const rows = aligned_memory(workspace.memory, workspace_doubles(degree, entities, faces));
  double* const coefficients = rows + entities * 2 * stride;  // per entity: x, y, z splatted
  double* const weights = coefficients + 12 * entities;       // per fan face: weight splatted
  auto row = [rows, stride](size_t e) { return rows + e * 2 * stride; };

  std::fill(rows, rows + entities * 2 * stride, 0.0);
  // Each entity's multiplying vertex: the source itself, the rim edge's other endpoint, the fan centre.
  auto splat = [&](size_t e, int vertex) {
    const Eigen::Vector3d& p = local[vertex];
    for (int c = 0; c < 3; ++c)
      std::fill(coefficients + 12 * e + 4 * size_t(c), coefficients + 12 * e + 4 * size_t(c) + 4, p[c]);
  };
  for (int j = 0; j < sources; ++j) splat(size_t(j), fans.sources[size_t(j)]);
  for (int j = 0; j < edges; ++j) splat(size_t(sources + j), fans.edge_other[size_t(j)]);
  for (int j = 0; j < centres; ++j) splat(size_t(sources + edges + j), fans.centres[size_t(j)]);
  for (size_t f = 0; f < faces; ++f) std::fill(weights + 4 * f, weights + 4 * f + 4, fan_weights[f]);
  // Rows never move, so each rim edge's source and each fan face's rim edge are fixed pointers.
  workspace.pointers.resize(size_t(edges) + faces);
  const double** const edge_source = workspace.pointers.data();
  const double** const face_edge = edge_source + edges;
  for (int j = 0; j < edges; ++j) edge_source[j] = row(size_t(fans.edge_source[size_t(j)]));
  for (size_t f = 0; f < faces; ++f) face_edge[f] = row(size_t(sources + fans.fan_edges[f]));

  // Degree 0: h_0 = 1 for sources and rim edges, the sum of the fan weights for centres.
  for (size_t e = 0; e < size_t(sources + edges); ++e) row(e)[0] = 1.0;
  for (int c = 0; c < centres; ++c) {
    double weight = 0;
    for (int f = fans.fan_begin[size_t(c)]; f < fans.fan_begin[size_t(c) + 1]; ++f) weight += fan_weights[f];
    row(size_t(sources + edges + c))[0] = weight;
    out_re[0] += weight;
  }

  const v4 zero = {0, 0, 0, 0};
  auto nothing = [](int, v4, v4) {};
  for (int n = 1; n <= degree; ++n) {
    const int blocks = (n + 4) / 4;
    // Sources: s^n = s * s^{n-1}.
    for (int e = 0; e < sources; ++e) {
      double* r = row(size_t(e));
      step_row(
          r, r + stride, coefficients + 12 * size_t(e), blocks,
          [&](int, v4& cre, v4& cim) { cre = cim = zero; }, nothing);
    }
    // Rim edges: h_n(s, t) = s^n + t h_{n-1}(s, t).
    for (int j = 0; j < edges; ++j) {
      const size_t e = size_t(sources + j);
      double* r = row(e);
      const double* add = edge_source[j];
      step_row(
          r, r + stride, coefficients + 12 * e, blocks,
          [&](int b, v4& cre, v4& cim) {
            cre = load(add + 4 * b);
            cim = load(add + stride + 4 * b);
          },
          nothing);
    }
    // Centres: sum over the fan of weight * h_n(a, b, c) = sum weight * h_n(a, b) + c * (the same at n - 1).
    // Each centre's row is added to the degree-n row of the output; the lanes past order n add exact zeros
    // to the next row (or the slack after the last).
    double* const t_re = out_re + size_t(n) * size_t(n + 1) / 2;
    double* const t_im = out_im + size_t(n) * size_t(n + 1) / 2;
    auto after = [&](int b, v4 cre, v4 cim) {
      store(t_re + 4 * b, load(t_re + 4 * b) + cre);
      store(t_im + 4 * b, load(t_im + 4 * b) + cim);
    };
    switch (blocks) {
      case 1:
        centre_steps<1>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      case 2:
        centre_steps<2>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      case 3:
        centre_steps<3>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      case 4:
        centre_steps<4>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      case 5:
        centre_steps<5>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      case 6:
        centre_steps<6>(fans, rows, stride, coefficients, weights, face_edge, sources + edges, after);
        break;
      default:
        for (int c = 0; c < centres; ++c) {
          const size_t e = size_t(sources + edges + c);
          double* r = row(e);
          const int begin = fans.fan_begin[size_t(c)], end = fans.fan_begin[size_t(c) + 1];
          step_row(
              r, r + stride, coefficients + 12 * e, blocks,
              [&](int b, v4& cre, v4& cim) {
                // Two partial sums halve the dependency chain through the fan.
                v4 re0 = zero, im0 = zero, re1 = zero, im1 = zero;
                const size_t offset = size_t(4 * b);
                int f = begin;
                for (; f + 1 < end; f += 2) {
                  const v4 w0 = load(weights + 4 * size_t(f)), w1 = load(weights + 4 * size_t(f) + 4);
                  re0 = re0 + w0 * load(face_edge[f] + offset);
                  im0 = im0 + w0 * load(face_edge[f] + stride + offset);
                  re1 = re1 + w1 * load(face_edge[f + 1] + offset);
                  im1 = im1 + w1 * load(face_edge[f + 1] + stride + offset);
                }
                if (f < end) {
                  const v4 w0 = load(weights + 4 * size_t(f));
                  re0 = re0 + w0 * load(face_edge[f] + offset);
                  im0 = im0 + w0 * load(face_edge[f] + stride + offset);
                }
                cre = re0 + re1;
                cim = im0 + im1;
              },
              after);
        }
    }
  }
}

const char* moment_kernel_isa() {
#if POLYSTOKES_HAVE_CLONES
  __builtin_cpu_init();
  if (__builtin_cpu_supports("x86-64-v3")) return "x86-64-v3 (AVX2+FMA)";
#endif
  return "baseline";
}

}  // namespace polystokes
