// The bare vertex-facet text layout in which shape models are often delivered: a line "V F" with the vertex
// and facet counts, then V vertex lines "x y z", then F facet lines "i j k" of 1-based vertex numbers
// (counter-clockwise seen from outside). Either block may carry a leading index column ("n x y z",
// "n i j k"), decided by its first line and then required on every line of the block, numbering 1..V and
// 1..F. Blank lines are skipped; nothing may follow the last facet. Chosen with --format only (no extension
// is unambiguous for it).
#include <fmt/format.h>

#include "io/mesh_format_registry.h"
#include "io/text_scanner.h"

namespace polystokes {
namespace {

bool next_record(TextScanner& in) {
  while (in.next_line())
    if (!in.at_line_end()) return true;
  return false;
}

/// Whether a block's lines have the index column: its first line has `fields` + 1 fields.
bool indexed_block(TextScanner& in, long fields, const char* what) {
  const long count = in.tokens_left();
  if (count == fields) return false;
  if (count == fields + 1) return true;
  in.fail(fmt::format("the first {} line has {} fields; expected {} (or {} with a leading index)", what,
                      count, fields, fields + 1));
}

void check_fields(TextScanner& in, long fields, bool indexed, const char* what, std::int64_t n) {
  const long count = in.tokens_left();
  if (count != fields + (indexed ? 1 : 0))
    in.fail(fmt::format("{} {} has {} fields, but the block's first line has {}", what, n, count,
                        fields + (indexed ? 1 : 0)));
}

void check_index_column(TextScanner& in, const char* what, std::int64_t n) {
  const std::string_view token = in.token();
  std::int64_t index = 0;
  if (!parse_integer_token(token, index) || index != n)
    in.fail(fmt::format("{} line {} starts with index '{}'; the index column must count 1, 2, 3, ...", what,
                        n, token));
}

}  // namespace

void read_vertex_facet(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  TextScanner in(bytes, path);
  if (!next_record(in)) throw format_error(path, 0, "no line with the vertex and facet counts");
  const std::int64_t vertices = in.integer("vertex count", 0, max_mesh_vertices);
  const std::int64_t facets = in.integer("facet count", 0, INT64_MAX / 4);
  in.expect_line_end("the vertex and facet counts");
  // "0 0 0" and "1 1 1" lines: at least 6 bytes per vertex and per facet.
  soup.reserve(vertices, facets, in.remaining_bytes(), 6.0, 6.0);

  bool indexed = false;
  for (std::int64_t v = 1; v <= vertices; ++v) {
    if (!next_record(in))
      in.fail(fmt::format("the file ends after {} of the {} vertex lines the counts line declares", v - 1,
                          vertices));
    if (v == 1) indexed = indexed_block(in, 3, "vertex");
    check_fields(in, 3, indexed, "vertex", v);
    if (indexed) check_index_column(in, "vertex", v);
    double p[3];
    for (double& x : p) x = in.number("vertex coordinate");
    soup.add_vertex(p[0], p[1], p[2]);
  }
  for (std::int64_t f = 1; f <= facets; ++f) {
    if (!next_record(in))
      in.fail(fmt::format("the file ends after {} of the {} facet lines the counts line declares", f - 1,
                          facets));
    if (f == 1) indexed = indexed_block(in, 3, "facet");
    check_fields(in, 3, indexed, "facet", f);
    if (indexed) check_index_column(in, "facet", f);
    for (int k = 0; k < 3; ++k) {
      const std::string_view token = in.token();
      std::int64_t index = 0;
      if (!parse_integer_token(token, index))
        in.fail(fmt::format("facet {}: vertex number '{}' is not a whole number", f, token));
      if (index == 0) in.fail(fmt::format("facet {}: vertex number 0, but vertices are numbered from 1", f));
      if (index < 0 || index > vertices)
        in.fail(fmt::format("facet {} refers to vertex {}, but the file has {} vertices (numbered from 1)", f,
                            index, vertices));
      soup.corners.push_back(static_cast<int>(index - 1));
    }
    soup.end_polygon();
  }
  if (next_record(in))
    in.fail(fmt::format("extra text after the {} facets the counts line declares: '{}'", facets, in.token()));
}

}  // namespace polystokes
