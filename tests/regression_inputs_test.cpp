// Inputs that once crashed, hung or over-allocated a mesh reader (tests/data/fuzz-regressions/, listed in its
// README): each must now be refused with a clean polystokes::Error that names the file and the problem.
// Under the sanitizer build (scripts/sanitize.sh) a relapse shows up as an AddressSanitizer or
// UndefinedBehaviorSanitizer report; in the normal build as a missing or different message.
#include <catch2/catch.hpp>
#include <chrono>
#include <filesystem>
#include <map>
#include <set>

#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

// What the refusal must say. The record layouts behind each expectation: OFF as described by the Geomview
// manual ("OFF files", Geomview 1.9 documentation, from memory), PLY by G. Turk, "The PLY Polygon File
// Format" (1994); the failure each input provoked is in the directory's README.
const std::map<std::string, std::string> expected_messages = {
    {"off_binary_counts_beyond_file.off", "which need at least"},
    {"off_binary_face_count_huge.off", "declares 758185984 vertices"},
    {"off_edge_count_overflow.off", "edge count 1330005504 is out of range"},
    {"off_binary_truncated_before_face.off", "the file ends before binary face 2 of 2"},
    {"off_header_claims_1e9_faces.off", "1000000000 faces"},
    {"off_face_count_huge.off", "declares 1000000000 vertices but holds 3 indices"},
    {"off_face_count_negative.off", "declares -3 vertices"},
    {"off_face_index_negative.off", "vertex index -1 is not a whole number >= 0"},
    {"off_ndim_negative_vertex_count.off", "negative number of vertices"},
    {"off_colour_index_negative.off", "'COFF'"},
    {"ply_property_before_element.ply", "property before any element"},
    {"ply_coordinate_of_integer_type.ply", "property 'x' of element 'vertex' has type int16"},
    // The reader reads ascii PLY one item a line, so the short first line is refused before "0-1" (which the
    // strict number rule refuses as well).
    {"ply_list_length_inside_token.ply", "item 1 of element 'vertex' ends before property 'zobj_info'"},
    {"ply_truncated_before_list_length.ply", "the file ends inside item 2 of element 'face', before a list length"},
    {"ply_ascii_list_length_huge.ply", "list length 4000000000"},
    {"ply_ascii_list_length_negative.ply", "list length -1"},
    {"ply_binary_list_length_huge.ply", "list length 4294967280"},
};

}  // namespace

TEST_CASE("every reader regression input is refused with a clean error naming the file and the problem",
          "[regression_inputs]") {
  const std::string dir = source_path("tests/data/fuzz-regressions");
  std::set<std::string> seen;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    const std::string name = entry.path().filename().string();
    if (name == "README.md") continue;
    seen.insert(name);
    CAPTURE(name);
    // A file added without an expectation is itself a failure: every regression input says what it guards.
    REQUIRE(expected_messages.count(name) == 1);
    const auto start = std::chrono::steady_clock::now();
    std::string message;
    try {
      read_mesh(entry.path().string());
      FAIL("accepted");
    } catch (const Error& error) {
      message = error.what();
    }
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    CAPTURE(message);
    CHECK(message.find(name) != std::string::npos);
    CHECK(message.find(expected_messages.at(name)) != std::string::npos);
    CHECK(message.find('\n') == std::string::npos);
    CHECK(seconds < 5);
  }
  CHECK(seen.size() == expected_messages.size());
}
