#include "harmonics/moment_kernel.h"

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

#if defined(__GNUC__)
// The 4-double vector type never crosses a call boundary (all helpers are always inlined), so the ABI note
// GCC and clang give for it in the baseline compilation does not apply.
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
// Balanced: the same step in the basis K_k = H_k / 2^k, where the neighbours enter with equal weights,
//   C'_k = add + z C_k + (x/2) (C_{k-1} - C_{k+1}) - (y/2) (S_{k-1} + S_{k+1})   (S' likewise),
// so four of the ten vector operations are plain additions (which some processors issue on a port of their
// own) instead of multiply-adds. Every intermediate is the H-basis one times an exact power of two, so the
// results are bit for bit those of the H basis, as long as nothing leaves the normal floating-point range
// (accumulate_fan_block uses it only at moderate degree).
// Each block's inputs (orders k-1..k+4) are loaded before the previous block is stored over them. Order -1,
// needed by order 0, follows from the symmetry f(u + pi) = conj f(u) of every product of l_u's:
// H_{-1} = -conj(H_1)/4 (K_{-1} = -conj(K_1)), which keeps S_0 exactly zero. The row's vertex comes in
// `coefficients` as x, y, z splatted (x/2, y/2, z when balanced).
// add_block(b, cre, cim) sets the added term of block b (orders 4b..4b+3); after(b, cre, cim) sees each
// result.
// With Blocks > 0, `blocks` equals Blocks and the block loop unrolls completely.
template <int Blocks, bool Balanced, class Add, class After>
POLYSTOKES_INLINE void step_row(double* re, double* im, const double* coefficients, int blocks,
                                Add&& add_block, After&& after) {
  const v4 x = load(coefficients), y = load(coefficients + 4), z = load(coefficients + 8);
  const double weight = Balanced ? 1.0 : 0.25;  // of order k+1 against order k-1
  const v4 quarter = {0.25, 0.25, 0.25, 0.25};
  double* r = re;
  double* s = im;
  // Orders -1, 0, 1, 2 of the first block from orders 0..3.
  const v4 mirror_re = {-weight, 1, 1, 1}, mirror_im = {weight, 1, 1, 1};
  v4 c0 = load(r), cp = load(r + 1), s0 = load(s), sp = load(s + 1);
  // Lanes 1, 0, 1, 2 (__builtin_shufflevector: GCC 12 and clang).
  v4 cm = __builtin_shufflevector(c0, c0, 1, 0, 1, 2) * mirror_re,
     sm = __builtin_shufflevector(s0, s0, 1, 0, 1, 2) * mirror_im;
  auto block = [&](int b) {
    v4 cre, cim;
    add_block(b, cre, cim);
    v4 p, t, q, u;
    if constexpr (Balanced) {
      p = cm - cp, t = cm + cp, q = sm + sp, u = sm - sp;
    } else {
      p = cm - quarter * cp, t = cm + quarter * cp, q = sm + quarter * sp, u = sm - quarter * sp;
    }
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
  if constexpr (Blocks > 0) {
#pragma GCC unroll 8
    for (int b = 0; b < Blocks; ++b) block(b);
  } else {
    for (int b = 0; b < blocks; ++b) block(b);
  }
}

// The rows of one accumulate_fan_block call, laid out in schedule order: fan by fan, the sources and rim
// edges that fan is the first to need, then its centre. Each row is then read (as a rim edge's source, or in
// a centre's fan sum) soon after it is written, while it is still in the first-level cache.
struct FanRows {
  const FanDecomposition& fans;
  double* rows;                    // per slot: real row, then imaginary row, `stride` apart
  size_t stride;                   // doubles per row
  const double* coefficients;      // per slot: x, y, z of its multiplying vertex, splatted
  const double* weights;           // per fan face: weight splatted
  const double* const* edge_add;   // per rim edge in schedule order: its source's row
  const double* const* face_edge;  // per fan face: its rim edge's row
  const int* group;                // per centre: number of new sources, number of new rim edges
};

// All products of degree n: sources, then rim edges, then centres, each centre's row added to the degree-n
// output row (`t_re`, `t_im`); the lanes past order n add exact zeros to the next row (or the slack after the
// last). With Blocks > 0 the rows have exactly that many blocks, known at compile time, so every block loop
// unrolls and a centre's fan sums stay in registers; Blocks == 0 takes the count from n.
template <int Blocks, bool Balanced>
POLYSTOKES_INLINE void degree_step(const FanRows& g, int n, double* t_re, double* t_im) {
  const int blocks = Blocks > 0 ? Blocks : (n + 4) / 4;
  const size_t stride = g.stride;
  const v4 zero = {0, 0, 0, 0};
  auto nothing = [](int, v4, v4) {};
  auto after = [&](int b, v4 cre, v4 cim) {
    store(t_re + 4 * b, load(t_re + 4 * b) + cre);
    store(t_im + 4 * b, load(t_im + 4 * b) + cim);
  };
  double* r = g.rows;
  const double* coefficients = g.coefficients;
  const double* const* add = g.edge_add;
  const int centres = int(g.fans.centres.size());
  for (int c = 0; c < centres; ++c) {
    // Sources: s^n = s * s^{n-1}.
    for (int j = 0; j < g.group[2 * c]; ++j, r += 2 * stride, coefficients += 12)
      step_row<Blocks, Balanced>(
          r, r + stride, coefficients, blocks, [&](int, v4& cre, v4& cim) { cre = cim = zero; }, nothing);
    // Rim edges: h_n(s, t) = s^n + t h_{n-1}(s, t).
    for (int j = 0; j < g.group[2 * c + 1]; ++j, r += 2 * stride, coefficients += 12, ++add) {
      const double* source = *add;
      step_row<Blocks, Balanced>(
          r, r + stride, coefficients, blocks,
          [&](int b, v4& cre, v4& cim) {
            cre = load(source + 4 * b);
            cim = load(source + stride + 4 * b);
          },
          nothing);
    }
    // The centre: sum over the fan of weight * h_n(a, b, c) = sum weight * h_n(a, b) + c * (the same at
    // n - 1), added to the degree-n output row; the lanes past order n add exact zeros to the next row (or
    // the slack after the last).
    const int begin = g.fans.fan_begin[size_t(c)], end = g.fans.fan_begin[size_t(c) + 1];
    if constexpr (Blocks > 0) {
      // The fan sums are gathered face by face into accumulators that stay in registers, so each rim row
      // pointer and weight is read once per degree.
      v4 acc_re[Blocks], acc_im[Blocks];
#pragma GCC unroll 8
      for (int b = 0; b < Blocks; ++b) acc_re[b] = acc_im[b] = zero;
      for (int f = begin; f < end; ++f) {
        const v4 w = load(g.weights + 4 * size_t(f));
        const double* rim = g.face_edge[f];
#pragma GCC unroll 8
        for (int b = 0; b < Blocks; ++b) {
          acc_re[b] = acc_re[b] + w * load(rim + 4 * b);
          acc_im[b] = acc_im[b] + w * load(rim + stride + 4 * b);
        }
      }
      step_row<Blocks, Balanced>(
          r, r + stride, coefficients, blocks,
          [&](int b, v4& cre, v4& cim) {
            cre = acc_re[b];
            cim = acc_im[b];
          },
          after);
    } else {
      step_row<Blocks, Balanced>(
          r, r + stride, coefficients, blocks,
          [&](int b, v4& cre, v4& cim) {
            // Two partial sums halve the dependency chain through the fan.
            v4 re0 = zero, im0 = zero, re1 = zero, im1 = zero;
            const size_t offset = size_t(4 * b);
            int f = begin;
            for (; f + 1 < end; f += 2) {
              const v4 w0 = load(g.weights + 4 * size_t(f)), w1 = load(g.weights + 4 * size_t(f) + 4);
              re0 = re0 + w0 * load(g.face_edge[f] + offset);
              im0 = im0 + w0 * load(g.face_edge[f] + stride + offset);
              re1 = re1 + w1 * load(g.face_edge[f + 1] + offset);
              im1 = im1 + w1 * load(g.face_edge[f + 1] + stride + offset);
            }
            if (f < end) {
              const v4 w0 = load(g.weights + 4 * size_t(f));
              re0 = re0 + w0 * load(g.face_edge[f] + offset);
              im0 = im0 + w0 * load(g.face_edge[f] + stride + offset);
            }
            cre = re0 + re1;
            cim = im0 + im1;
          },
          after);
    }
    r += 2 * stride;
    coefficients += 12;
  }
}

// degree_step with the block count fixed at compile time where it is at most 6 (Blocks tries 1, 2, ...).
template <bool Balanced, int Blocks = 1>
POLYSTOKES_INLINE void dispatch_degree_step(const FanRows& g, int n, double* t_re, double* t_im) {
  if constexpr (Blocks > 6) {
    degree_step<0, Balanced>(g, n, t_re, t_im);
  } else if ((n + 4) / 4 == Blocks) {
    degree_step<Blocks, Balanced>(g, n, t_re, t_im);
  } else {
    dispatch_degree_step<Balanced, Blocks + 1>(g, n, t_re, t_im);
  }
}

// Degrees 1..degree, each row of sums added to the degree's row of out_re/out_im (triangle layout).
template <bool Balanced>
POLYSTOKES_INLINE void degree_loop(const FanRows& g, int degree, double* out_re, double* out_im) {
  for (int n = 1; n <= degree; ++n)
    dispatch_degree_step<Balanced>(g, n, out_re + size_t(n) * size_t(n + 1) / 2,
                                   out_im + size_t(n) * size_t(n + 1) / 2);
}

// Aligns the workspace to a cache line and returns its start.
double* aligned_memory(std::vector<double>& memory, size_t doubles) {
  if (memory.size() < doubles + 8) memory.resize(doubles + 8);
  const uintptr_t address = reinterpret_cast<uintptr_t>(memory.data());
  return memory.data() + ((64 - address % 64) % 64) / sizeof(double);
}

// Up to this degree the rows use the balanced basis (step_row): its smallest entries, about 2^-n times the
// H-basis ones, stay far inside the normal floating-point range.
constexpr int balanced_max_degree = 256;

size_t triangle_doubles(int degree) { return size_t(degree + 1) * size_t(degree + 2) / 2 + 8; }

size_t workspace_doubles(int degree, size_t entities, size_t faces) {
  const size_t stride = size_t(row_stride(degree));
  return entities * 2 * stride + 12 * entities + 4 * faces + 2 * triangle_doubles(degree);
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
  double* const coefficients = rows + entities * 2 * stride;  // per slot: x, y, z splatted
  double* const weights = coefficients + 12 * entities;       // per fan face: weight splatted
  auto row = [rows, stride](size_t e) { return rows + e * 2 * stride; };
  const bool balanced = degree <= balanced_max_degree;
  // Sums of the centre rows in the balanced basis (unused otherwise).
  double* const sum_re = weights + 4 * faces;
  double* const sum_im = sum_re + triangle_doubles(degree);
  if (balanced) std::fill(sum_re, sum_im + triangle_doubles(degree), 0.0);

  std::fill(rows, rows + entities * 2 * stride, 0.0);
  // The schedule (FanRows): the slot of each source and rim edge, and per centre how many of each it adds.
  std::vector<int>& slots = workspace.schedule;
  slots.assign(size_t(sources + edges) + 2 * size_t(centres), -1);
  int* const source_slot = slots.data();
  int* const edge_slot = source_slot + sources;
  int* const group = edge_slot + edges;
  workspace.pointers.resize(size_t(edges) + faces);
  const double** const edge_add = workspace.pointers.data();
  const double** const face_edge = edge_add + edges;
  // Each slot's multiplying vertex: the source itself, the rim edge's other endpoint, the fan centre.
  const double half = balanced ? 0.5 : 1.0;
  auto splat = [&](int slot, int vertex) {
    const Eigen::Vector3d& p = local[vertex];
    const double xyz[3] = {half * p.x(), half * p.y(), p.z()};
    for (int c = 0; c < 3; ++c) std::fill_n(coefficients + 12 * size_t(slot) + 4 * size_t(c), 4, xyz[c]);
  };
  int next = 0, scheduled_edges = 0;
  for (int c = 0; c < centres; ++c) {
    const int begin = fans.fan_begin[size_t(c)], end = fans.fan_begin[size_t(c) + 1];
    int new_sources = 0, new_edges = 0;
    for (int f = begin; f < end; ++f) {
      const int e = fans.fan_edges[size_t(f)], s = fans.edge_source[size_t(e)];
      if (edge_slot[e] < 0 && source_slot[s] < 0) {
        source_slot[s] = next;
        splat(next++, fans.sources[size_t(s)]);
        ++new_sources;
      }
    }
    for (int f = begin; f < end; ++f) {
      const int e = fans.fan_edges[size_t(f)];
      if (edge_slot[e] >= 0) continue;
      edge_slot[e] = next;
      splat(next++, fans.edge_other[size_t(e)]);
      edge_add[scheduled_edges++] = row(size_t(source_slot[fans.edge_source[size_t(e)]]));
      ++new_edges;
    }
    group[2 * c] = new_sources;
    group[2 * c + 1] = new_edges;
    // Degree 0: h_0 = 1 for sources and rim edges, the sum of the fan weights for the centre.
    for (int j = next - new_sources - new_edges; j < next; ++j) row(size_t(j))[0] = 1.0;
    double weight = 0;
    for (int f = begin; f < end; ++f) {
      weight += fan_weights[f];
      face_edge[f] = row(size_t(edge_slot[fans.fan_edges[size_t(f)]]));
    }
    row(size_t(next))[0] = weight;
    (balanced ? sum_re : out_re)[0] += weight;
    splat(next++, fans.centres[size_t(c)]);
  }
  for (size_t f = 0; f < faces; ++f) std::fill_n(weights + 4 * f, 4, fan_weights[f]);

  const FanRows g{fans, rows, stride, coefficients, weights, edge_add, face_edge, group};
  if (!balanced) {
    degree_loop<false>(g, degree, out_re, out_im);
    return;
  }
  degree_loop<true>(g, degree, sum_re, sum_im);
  // Back to the H basis: exact scaling by 2^k.
  for (int n = 0; n <= degree; ++n) {
    const size_t offset = size_t(n) * size_t(n + 1) / 2;
    double scale = 1;
    for (int k = 0; k <= n; ++k, scale *= 2) {
      out_re[offset + size_t(k)] += scale * sum_re[offset + size_t(k)];
      out_im[offset + size_t(k)] += scale * sum_im[offset + size_t(k)];
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
