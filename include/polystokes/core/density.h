// The density of a region: the one seam through which mass properties, harmonic moments and polyhedron
// gravity see what fills a mesh. Today a constant; a spatially varying model is a new case of this type.
#pragma once

namespace polystokes {

/// What fills a region's mesh. Today one case: a constant density in kg m^-3 (negative: a contrast, a void
/// or lighter inclusion nested in another region). A spatially varying model (for example a polynomial in
/// the mesh frame) becomes a new case here, handled by the three consumers that integrate it
/// (mass_properties, the harmonic moments, PolyhedronGravity); every other module only checks, scales and
/// echoes it.
class Density {
 public:
  /// A constant density, kg m^-3. Implicit, so a bare number is a constant density in SI (the unit rule).
  constexpr Density(double kg_per_m3 = 0) : constant_(kg_per_m3) {}

  /// The constant density, kg m^-3.
  constexpr double constant() const { return constant_; }

  /// The density times `factor` everywhere (a sampled density scale, a mass-preserving rescale).
  constexpr Density scaled(double factor) const { return Density(constant_ * factor); }
  Density& operator*=(double factor) { return *this = scaled(factor); }

 private:
  double constant_;
};

}  // namespace polystokes
