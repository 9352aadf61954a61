// Reading shape meshes (OBJ, OFF, PLY, STL) into a welded triangle Mesh in metres, and writing OBJ.
// Import repairs only what is unambiguous (duplicate vertices, unused vertices, polygon faces); mesh_check
// judges the rest.
#pragma once

#include <string>

#include "polystokes/core/mesh.h"

namespace polystokes {

struct MeshReadOptions {
  /// Unit of the file's coordinates; vertices are converted to metres.
  LengthUnit unit = LengthUnit::meter;
  /// In the file's unit. Each vertex is merged into the first earlier kept vertex within this distance
  /// (|p - q| <= tolerance, no chaining). 0 merges exact duplicates only, which is always done.
  double merge_tolerance = 0.0;
};

/// Reads a mesh, choosing the format by extension (.obj, .off, .ply, .stl, case-insensitive).
/// OBJ: faces via tinyobjloader, coordinates re-read with correctly rounded std::from_chars so that they
/// arrive exactly as written; a statement the OBJ format does not know is refused when it reads like a
/// vertex or face record (a keyword in the wrong case, "V 1 2 3", or an unknown word followed by numbers),
/// other unknown statements are skipped. OFF, PLY (ascii/binary), STL (ascii/binary): CGAL 5.5 polygon-soup
/// readers. Polygons with more than three vertices are split by ear clipping in the plane of their Newell
/// normal, keeping their orientation (any simple, roughly planar polygon, convex or not). Then: duplicate
/// vertices are merged (notice), faces collapsed by a positive merge tolerance are dropped (notice), vertices
/// used by no face are dropped (notice). Kept vertices stay in file order, but their numbers refer to the
/// welded mesh, not to the file. Sets source = path, unit, checksum = SHA-256 of the file bytes. Throws
/// MeshError (empty file, unknown extension, no faces, polygon that cannot be split) or FormatError (missing
/// or unreadable file, unparsable content, non-finite coordinate, face with < 3 vertices, vertex index out of
/// range, or a record the format parsers would mishandle, which check_mesh_file in mesh_preflight.h refuses
/// before parsing) or ResourceError (the file or the mesh would not fit in memory); the message is one line
/// naming the file and, where the format allows, the line and face.
Mesh read_mesh(const std::string& path, const MeshReadOptions& options = {});

/// Writes `mesh` as OBJ ("v x y z" in `unit`, one-based "f i j k"), coordinates in the shortest form
/// that reads back to the same double. Written through write_file_atomically (temporary file in the same
/// directory, renamed over `path`), so a failure leaves no partial file. Throws OutputError.
void write_obj(const Mesh& mesh, const std::string& path, LengthUnit unit);

/// SHA-256 of the file's bytes as 64 lower-case hex digits (OpenSSL EVP). Throws FormatError if unreadable.
std::string sha256_file_hex(const std::string& path);

}  // namespace polystokes
