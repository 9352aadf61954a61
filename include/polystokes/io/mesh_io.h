// Reading shape meshes (OBJ, OFF, PLY, STL and the bare vertex-facet layout) into a welded triangle Mesh in
// metres, and writing OBJ. Import repairs only what is unambiguous (duplicate vertices, unused vertices,
// polygon faces); mesh_check judges the rest.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

struct MeshReadOptions {
  /// Unit of the file's coordinates; vertices are converted to metres.
  LengthUnit unit = LengthUnit::meter;
  /// In the file's unit. Each vertex is merged into the first earlier kept vertex within this distance
  /// (|p - q| <= tolerance, no chaining). 0 merges exact duplicates only, which is always done.
  double merge_tolerance = 0.0;
  /// A name of mesh_format_names(); empty: chosen by the file's extension where that is unambiguous.
  std::string format;
};

/// The mesh formats read_mesh knows, by name: "obj", "off", "ply", "stl", "vertex-facet".
std::vector<std::string> mesh_format_names();

/// The format read_mesh uses for `path`: `requested` if given (throws ConventionError if unknown), else by
/// extension (.obj, .off, .ply, .stl, case-insensitive); throws MeshError "unknown mesh format '.EXT': give
/// the format with --format (NAMES)" for any other extension.
std::string mesh_format_of(const std::string& path, const std::string& requested = {});

/// Reads a mesh in the format mesh_format_of(path, options.format) names. Readers of our own, one per format
/// (src/io/mesh_formats/*.cpp), streaming over the file's bytes and checking counts and sizes as they read
/// (no allocation is sized by a header's count beyond what the rest of the file can hold):
///  - OBJ: v and f records (index forms i, i/t, i//n, i/t/n, negative indices relative); a statement the
///    format does not know is refused when it reads like a vertex or face record (a keyword in the wrong
///    case, "V 1 2 3", or an unknown word followed by numbers), other statements are read past;
///  - OFF: [N][4][n]OFF ascii, OFF BINARY (big-endian); colour and texture variants are refused;
///  - PLY: ascii, binary little and big endian; element vertex (float or double x, y, z) and face (list
///    vertex_indices);
///  - STL: ascii or binary (recognised by its exact size 84 + 50 per facet);
///  - vertex-facet: "V F", V lines "x y z", F lines "i j k" (1-based), each block optionally with a leading
///    index column 1..n.
/// Text numbers follow the strict number rule (read_strict_number in quantity.h), correctly rounded.
/// Polygons with more than three vertices are split by ear clipping in the plane of their Newell normal,
/// keeping their orientation (any simple, roughly planar polygon, convex or not). Then: duplicate vertices
/// are merged (notice), faces collapsed by a positive merge tolerance are dropped (notice), vertices used by
/// no face are dropped (notice). Kept vertices stay in file order, but their numbers refer to the welded
/// mesh, not to the file. Sets source = path, unit, format, checksum = SHA-256 of the file bytes. Throws
/// MeshError (empty file, unknown extension, no faces, polygon that cannot be split), ConventionError
/// (unknown format name, bad tolerance), FormatError (missing or unreadable file, unparsable content,
/// non-finite coordinate, face with < 3 vertices, vertex index out of range, counts the file cannot hold) or
/// ResourceError (the file or the mesh would not fit in memory); the message is one line naming the file and,
/// for text, the line. Time and memory linear in the file size.
Mesh read_mesh(const std::string& path, const MeshReadOptions& options = {});

/// Writes `mesh` as OBJ ("v x y z" in `unit`, one-based "f i j k"), coordinates in the shortest form
/// that reads back to the same double. Written through write_file_atomically (temporary file in the same
/// directory, renamed over `path`), so a failure leaves no partial file. Throws OutputError.
void write_obj(const Mesh& mesh, const std::string& path, LengthUnit unit);

/// SHA-256 of the file's bytes as 64 lower-case hex digits (OpenSSL EVP). Throws FormatError if unreadable.
std::string sha256_file_hex(const std::string& path);
/// SHA-256 of the bytes as 64 lower-case hex digits (OpenSSL EVP).
std::string sha256_hex(std::string_view bytes);

}  // namespace polystokes
