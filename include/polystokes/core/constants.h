// Physical constants every module shares, and the caution every shape-derived coefficient set carries.
// One definition each, so a result and its provenance text can never quote different values.
#pragma once

namespace polystokes {

/// Newtonian constant of gravitation, CODATA 2018 recommended value (m^3 kg^-1 s^-2).
constexpr double gravitational_constant = 6.67430e-11;

/// The caution every shape-derived set carries in its notes (and the CLI prints after a computation).
const char* operational_caution();

}  // namespace polystokes
