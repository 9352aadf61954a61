// Error families of polystokes: every failure the library reports is one of these.
// The CLI catches them once and maps each family to an exit code (usage 1, input 2, internal 3).
#pragma once

#include <stdexcept>
#include <string>

namespace polystokes {

/// Base of all polystokes errors; what() is a complete one-line message.
class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A mesh that cannot be used: unreadable, not a closed, manifold, outward-oriented solid.
class MeshError : public Error {
 public:
  using Error::Error;
};

/// A text file (coefficient set, table, point list) that does not parse; message names file and line.
class FormatError : public Error {
 public:
  using Error::Error;
};

/// Conventions or parameters that are inconsistent or missing (normalization, radius, GM, degree).
class ConventionError : public Error {
 public:
  using Error::Error;
};

/// A request that would exceed resources (memory, degree) and is refused before any work.
class ResourceError : public Error {
 public:
  using Error::Error;
};

/// Output cannot be written (directory missing, rename failed).
class OutputError : public Error {
 public:
  using Error::Error;
};

/// "FILE:LINE: problem" formatted parse error.
FormatError format_error(const std::string& file, long line, const std::string& problem);

/// "FILE: check failed: problem" formatted mesh error.
MeshError mesh_error(const std::string& file, const std::string& problem);

}  // namespace polystokes
