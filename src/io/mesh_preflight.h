// Cheap checks of a mesh file's bytes before a format parser sees them: declared counts against the file
// size and available memory, and the record sizes the CGAL readers would trust blindly (a face or list
// length they would allocate before reading it). Refusing here keeps a lying file from crashing a reader.
#pragma once

#include <string>

namespace polystokes {

/// Element counts a mesh file states or implies, for estimates before parsing.
struct MeshFileCounts {
  long long vertices = -1;  ///< -1 where unknown
  long long faces = -1;     ///< -1 where unknown
  /// Fewest bytes a file holding the declared elements can have (every number takes at least one byte and
  /// every text number a separator); 0 where unknown.
  double minimum_bytes = 0;
};

/// Counts of `bytes` read as a mesh with the given lower-case extension (".obj", ".off", ".ply", ".stl").
/// OFF and PLY: the header's counts; binary STL: the facet count (three vertex records each); OBJ and
/// ASCII STL: the number of vertex and face records, counted in one pass. Never throws; a header it
/// cannot read gives unknown counts.
MeshFileCounts mesh_file_counts(const std::string& bytes, const std::string& extension);

/// Peak bytes of reading and checking a mesh with these counts from a file of this size: the bytes held
/// three times (read, copied into a stream), the parsed soup, welding tables, the mesh and the checks'
/// search structures, taken as 200 bytes per vertex and 250 per face (measured: a one-million-face OBJ
/// read and checked peaks at about 330 bytes per face in all).
double mesh_read_bytes(double file_size, const MeshFileCounts& counts);

/// Throws FormatError "path: problem" when the file declares more than it can hold or a record the CGAL
/// readers would mishandle:
///  - OFF: negative vertex counts, edge counts beyond 2^30; counts needing more bytes than the file has;
///    an ASCII face line whose vertex count is not a whole number between 0 and the number of indices on the
///    line, or with a negative or fractional index; a binary face whose vertex count is negative or runs
///    past the end, or a binary file ending before a face; colour and texture-coordinate variants, and
///    binary variants other than plain OFF (not supported);
///  - PLY: a property before any element, an element count that is not a non-negative integer or exceeds
///    the file size, a list whose length is not a non-negative integer or runs past the end of the file
///    (checked for every list of every element, ASCII and binary), a file ending where a list length should
///    be, a header without end_header, coordinates, colours, half-edge ends or texture coordinates of a
///    type the reader does not expect.
/// Then throws ResourceError when an OFF file declares more than 10^9 vertices and faces together, or when
/// reading and checking the mesh would not fit in memory (require_memory).
/// Linear in the file size; never allocates in proportion to a declared count.
void check_mesh_file(const std::string& path, const std::string& bytes, const std::string& extension);

}  // namespace polystokes
