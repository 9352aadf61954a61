// The limits of the moment computation, checked before any pass over the meshes: degree range and memory.
#pragma once

namespace polystokes {

/// Throws ConventionError for a negative degree and ResourceError beyond max_moment_degree or when the
/// tables, partial sums and per-thread rows at `degree` on `threads` threads would exceed 8 GB.
void check_moment_degree(int degree, int threads);

}  // namespace polystokes
