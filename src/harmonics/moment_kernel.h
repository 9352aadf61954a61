// Inner loop of the exact solid-harmonic moments: the scaled spectral recursion over one block of faces
// grouped into fans (fan_decomposition.h), vectorized over orders, with an AVX2+FMA clone on x86-64.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <vector>

#include "harmonics/fan_decomposition.h"

namespace polystokes {

/// Scratch memory of accumulate_fan_block; reuse one per thread to avoid reallocation.
struct FanWorkspace {
  std::vector<double> memory;
  std::vector<const double*> pointers;
  std::vector<int> schedule;
};

/// Bytes of scratch memory accumulate_fan_block needs at `degree` for `entities` entities (sources, rim edges
/// and centres) and `faces` faces.
size_t fan_workspace_bytes(int degree, size_t entities, size_t faces);

/// Adds, for n = 0..degree and k = 0..n, sum over the faces of `fans` of weight * H_nk(a, b, c) to
/// re/im[n (n+1)/2 + k], where H_nk = (-i)^k 2^k [coefficient of e^{-iku} in h_n(l_u(a), l_u(b), l_u(c))],
/// l_u(v) = v_z + i (v_x cos u + v_y sin u) and h_n the complete homogeneous symmetric polynomial.
/// `local` holds the coordinates of the decomposition's vertices in expansion coordinates (origin removed,
/// rotated, divided by the scale radius: inside the unit ball); `weights` one number per fan face, in
/// fan_faces order (density * v0 . (v1 x v2), six signed tetrahedron volumes).
/// re/im need 8 doubles of slack after the last row (lanes past order n add exact zeros there).
/// Cost per degree n: about 10 (n+1) operations per product (FanDecomposition::products; up to degree 256, 4 of
/// the 10 are additions rather than multiply-adds) plus 2 (n+1) multiply-adds per face, vectorized over orders.
void accumulate_fan_block(const FanDecomposition& fans, const Eigen::Vector3d* local, const double* weights,
                          int degree, FanWorkspace& workspace, double* re, double* im);

/// Instruction set the kernel runs with on this machine: "x86-64-v3 (AVX2+FMA)" or "baseline".
const char* moment_kernel_isa();

}  // namespace polystokes
