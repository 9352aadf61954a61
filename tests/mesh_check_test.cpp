#include "polystokes/mesh/mesh_check.h"

#include <CGAL/Exact_predicates_inexact_constructions_kernel.h>
#include <CGAL/Polygon_mesh_processing/self_intersections.h>
#include <CGAL/Surface_mesh.h>
#include <oneapi/tbb/global_control.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>
#include <random>

#include "mesh/self_intersections.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using polystokes::test::source_path;
using polystokes::test::temp_directory;

namespace {

const MeshCheck& check_named(const MeshCheckReport& report, const std::string& name) {
  for (const auto& check : report.checks)
    if (check.name == name) return check;
  FAIL("no check named " << name);
  throw std::logic_error("unreachable");
}

void require_all_passed(const MeshCheckReport& report) {
  REQUIRE(report.checks.size() == 9);
  for (const auto& check : report.checks) {
    CAPTURE(check.name, check.first_offender);
    REQUIRE(check.ran);
    REQUIRE(check.passed);
    REQUIRE(check.count == 0);
  }
}

/// Validates and returns the MeshError message; fails the test if validation passes.
std::string validation_error(Mesh mesh) {
  try {
    validate_mesh(mesh);
  } catch (const MeshError& e) {
    return e.what();
  }
  FAIL("validate_mesh accepted the mesh");
  return {};
}

Mesh without_face(const Mesh& mesh, Eigen::Index face) {
  Mesh out = mesh;
  out.faces.resize(mesh.faces.rows() - 1, 3);
  out.faces << mesh.faces.topRows(face), mesh.faces.bottomRows(mesh.faces.rows() - face - 1);
  return out;
}

Mesh shifted(const Mesh& mesh, double x, double y, double z) {
  return transformed(mesh, Eigen::Matrix3d::Identity(), Eigen::Vector3d(x, y, z));
}

/// Writes and re-reads a mesh so that coincident vertices of separately generated parts are welded.
Mesh welded(const Mesh& mesh) {
  const std::string path = temp_directory() + "/welded.obj";
  write_obj(mesh, path, LengthUnit::meter);
  return read_mesh(path, {});
}

Mesh read_fixture(const std::string& name) { return read_mesh(source_path("tests/data/" + name), {}); }

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

}  // namespace

TEST_CASE("Generated closed shapes pass every check; box volume is a*b*c (elementary geometry)",
          "[mesh_check]") {
  Mesh box = make_box(2, 3, 4);
  const MeshCheckReport report = validate_mesh(box);
  require_all_passed(report);
  REQUIRE_FALSE(report.flipped);
  REQUIRE(report.signed_volume == Approx(24.0).epsilon(1e-14));
  REQUIRE(box.notices.empty());

  Mesh ellipsoid = make_ellipsoid(3, 3.0, 2.0, 1.0);
  require_all_passed(validate_mesh(ellipsoid));
  require_all_passed(inspect_mesh(make_icosphere(2)));
}

TEST_CASE(
    "Icosphere volume lies just below 4/3 pi (inscribed polyhedron of the unit sphere, elementary geometry)",
    "[mesh_check]") {
  Mesh sphere = make_icosphere(4);
  const double volume = validate_mesh(sphere).signed_volume;
  const double ball = 4.0 / 3.0 * M_PI;
  REQUIRE(volume < ball);
  REQUIRE(volume > 0.99 * ball);
}

TEST_CASE("An inside-out mesh is reversed with a notice and then has positive volume", "[mesh_check]") {
  Mesh mesh = reversed(make_box(2, 3, 4));
  const MeshCheckReport inspected = inspect_mesh(mesh);
  const MeshCheck& outward = check_named(inspected, "outward_oriented");
  REQUIRE_FALSE(outward.passed);
  REQUIRE(contains(outward.first_offender, "the whole mesh is inside-out"));
  REQUIRE(inspected.signed_volume == Approx(-24.0).epsilon(1e-14));
  REQUIRE(mesh.faces == reversed(make_box(2, 3, 4)).faces);  // inspect leaves the mesh alone

  const MeshCheckReport report = validate_mesh(mesh);
  REQUIRE(report.flipped);
  require_all_passed(report);
  REQUIRE(report.signed_volume == Approx(24.0).epsilon(1e-14));
  REQUIRE(mesh.faces == make_box(2, 3, 4).faces);
  REQUIRE(mesh.notices.size() == 1);
  REQUIRE(contains(mesh.notices[0], "reversed all 12 faces"));

  // Two separate bodies, both inside-out, are also just reversed.
  Mesh pair = reversed(merged(make_box(1, 1, 1), shifted(make_box(1, 1, 1), 3, 0, 0)));
  const MeshCheckReport pair_report = validate_mesh(pair);
  REQUIRE(pair_report.flipped);
  REQUIRE(pair_report.signed_volume == Approx(2.0).epsilon(1e-14));
}

TEST_CASE("Open box fails 'closed' with the border edge count and first edge", "[mesh_check]") {
  // Removing face 11 (3, 7, 5) of make_box leaves its three edges on the border; the lowest face still
  // using one of them is face 3 (5, 7, 6), running 5 -> 7 (worked out from the face list by hand).
  REQUIRE(validation_error(without_face(make_box(1, 1, 1), 11)) ==
          "box: mesh check 'closed' failed: 3 border edges, first edge (5, 7) of face 3");
  const std::string file = source_path("tests/data/open_box.obj");
  const std::string message = validation_error(read_fixture("open_box.obj"));
  CAPTURE(message);
  REQUIRE(contains(message, file + ": mesh check 'closed' failed: 4 border edges, first edge"));
}

TEST_CASE("Two boxes sharing an edge fail 'edge_manifold' (four faces on one edge)", "[mesh_check]") {
  // File vertices 4 and 8 (zero-based 3 and 7) span the shared edge; the first box's side y = 1 is the
  // lowest face on it, as triangle 7 running 7 -> 3.
  const std::string message = validation_error(read_fixture("nonmanifold_edge.obj"));
  CAPTURE(message);
  REQUIRE(contains(message,
                   "nonmanifold_edge.obj: mesh check 'edge_manifold' failed: 1 edge shared by more than two "
                   "faces, first edge (7, 3) shared by 4 faces"));
}

TEST_CASE("Two boxes touching at one corner fail 'vertex_manifold'", "[mesh_check]") {
  const Mesh pair =
      welded(merged(shifted(make_box(1, 1, 1), 0.5, 0.5, 0.5), shifted(make_box(1, 1, 1), 1.5, 1.5, 1.5)));
  REQUIRE(pair.vertices.rows() == 15);
  const std::string message = validation_error(pair);
  CAPTURE(message);
  REQUIRE(contains(message,
                   "mesh check 'vertex_manifold' failed: 1 non-manifold vertex, first vertex 7 (its faces "
                   "form 2 separate fans)"));
}

TEST_CASE("A face run the wrong way fails 'consistently_oriented'", "[mesh_check]") {
  const std::string message = validation_error(read_fixture("flipped_face.obj"));
  CAPTURE(message);
  // The reversed top quad splits into two triangles, so its four outer edges are each run twice the same way.
  REQUIRE(contains(message,
                   "flipped_face.obj: mesh check 'consistently_oriented' failed: 4 edges run in the same "
                   "direction by both their faces, first edge"));
  Mesh box = make_box(1, 1, 1);
  std::swap(box.faces(0, 1), box.faces(0, 2));
  REQUIRE(contains(validation_error(box), "mesh check 'consistently_oriented' failed: 3 edges"));
}

TEST_CASE(
    "Topological checks on a mesh of many vertex blocks: counts and first offenders equal a plain count over "
    "all edges, on one thread and on two",
    "[mesh_check]") {
  // The checks walk the vertices in blocks on several threads; the reference here is a single ordered map of
  // every directed edge use (common practice), independent of that walk. Holes and reversed faces are put
  // in several places so that offenders fall in different blocks.
  Mesh sphere = make_geodesic_sphere(80);
  REQUIRE(sphere.vertices.rows() > 3 * 16384);
  std::vector<Eigen::Index> keep;
  for (Eigen::Index f = 0; f < sphere.faces.rows(); ++f)
    if (f % 9973 != 17) keep.push_back(f);
  Mesh holed = sphere;
  holed.faces.resize(Eigen::Index(keep.size()), 3);
  for (size_t i = 0; i < keep.size(); ++i) holed.faces.row(Eigen::Index(i)) = sphere.faces.row(keep[i]);
  for (Eigen::Index f = 31000; f < holed.faces.rows(); f += 23011)
    std::swap(holed.faces(f, 1), holed.faces(f, 2));

  std::map<std::pair<int, int>, std::vector<std::pair<int, int>>> uses;  // lower, higher -> (face, from)
  for (int f = 0; f < int(holed.faces.rows()); ++f)
    for (int k = 0; k < 3; ++k) {
      const int a = holed.faces(f, k), b = holed.faces(f, (k + 1) % 3);
      uses[{std::min(a, b), std::max(a, b)}].push_back({f, a});
    }
  long border = 0, same_direction = 0;
  int first_border_face = INT_MAX, first_same_face = INT_MAX;
  for (auto& [edge, list] : uses) {
    std::sort(list.begin(), list.end());
    if (list.size() == 1) {
      ++border;
      first_border_face = std::min(first_border_face, list[0].first);
    }
    if (list.size() == 2 && list[0].second == list[1].second) {
      ++same_direction;
      first_same_face = std::min(first_same_face, list[0].first);
    }
  }
  REQUIRE(border > 0);
  REQUIRE(same_direction > 0);

  for (int threads : {1, 2}) {
    CAPTURE(threads);
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, size_t(threads));
    const MeshCheckReport report = inspect_mesh(holed);
    const MeshCheck& closed = check_named(report, "closed");
    REQUIRE(closed.count == border);
    REQUIRE(contains(closed.first_offender, "of face " + std::to_string(first_border_face)));
    const MeshCheck& oriented = check_named(report, "consistently_oriented");
    REQUIRE(oriented.count == same_direction);
    REQUIRE(contains(oriented.first_offender, "of faces " + std::to_string(first_same_face) + " and"));
    REQUIRE(check_named(report, "edge_manifold").passed);
    REQUIRE(check_named(report, "vertex_manifold").passed);
  }
}

TEST_CASE("Self-intersecting meshes fail 'no_self_intersections' (CGAL exact predicates)", "[mesh_check]") {
  SECTION("a vertex pushed through the opposite side") {
    const std::string message = validation_error(read_fixture("self_intersecting.obj"));
    CAPTURE(message);
    REQUIRE(contains(message, "self_intersecting.obj: mesh check 'no_self_intersections' failed:"));
    REQUIRE(contains(message, "intersecting face pair"));
    REQUIRE(contains(message, "intersect"));
  }
  SECTION("two overlapping boxes") {
    const Mesh overlap = merged(make_box(1, 1, 1), shifted(make_box(1, 1, 1), 0.5, 0.5, 0.5));
    const MeshCheck check = check_named(inspect_mesh(overlap), "no_self_intersections");
    REQUIRE_FALSE(check.passed);
    REQUIRE(check.count > 0);
    REQUIRE(contains(check.first_offender, " intersect"));
  }
}

TEST_CASE("Zero-area faces fail 'no_degenerate_faces'", "[mesh_check]") {
  // The fixture's sliver is its fifth face record; the two quads before it become two triangles each.
  const std::string message = validation_error(read_fixture("degenerate_face.obj"));
  CAPTURE(message);
  REQUIRE(contains(message,
                   "degenerate_face.obj: mesh check 'no_degenerate_faces' failed: 1 degenerate face, first "
                   "face 7 (vertices 0, 8, 1, area 0 m^2)"));
  Mesh box = make_box(1, 1, 1);
  box.faces(5, 2) = box.faces(5, 0);
  REQUIRE(contains(validation_error(box),
                   "mesh check 'no_degenerate_faces' failed: 1 degenerate face, first face 5"));
}

TEST_CASE("Non-finite coordinates fail 'finite'; inspect skips the geometric checks", "[mesh_check]") {
  Mesh box = make_box(1, 1, 1);
  box.vertices(6, 1) = std::numeric_limits<double>::quiet_NaN();
  REQUIRE(contains(validation_error(box),
                   "box: mesh check 'finite' failed: 1 vertex with a non-finite coordinate, "
                   "first vertex 6 (-0.5, nan, 0.5)"));
  const MeshCheckReport report = inspect_mesh(box);
  REQUIRE_FALSE(check_named(report, "no_degenerate_faces").ran);
  REQUIRE(check_named(report, "closed").passed);
  REQUIRE(describe(check_named(report, "outward_oriented")) == "not run: needs 'finite'");
}

TEST_CASE("Out-of-range face indices fail 'valid_indices' and inspect still returns a report",
          "[mesh_check]") {
  Mesh box = make_box(1, 1, 1);
  box.faces(4, 1) = 99;
  REQUIRE(contains(validation_error(box),
                   "mesh check 'valid_indices' failed: 1 face with an index out of range, "
                   "first face 4 refers to vertex 99 of 8"));
  MeshCheckReport report;
  REQUIRE_NOTHROW(report = inspect_mesh(box));
  REQUIRE(report.checks.size() == 9);
  REQUIRE(check_named(report, "finite").passed);
  REQUIRE_FALSE(check_named(report, "closed").ran);
  Mesh empty;
  REQUIRE(
      contains(validation_error(empty), "mesh: mesh check 'valid_indices' failed: the mesh has no faces"));
}

TEST_CASE("inspect_mesh names each bad fixture's failing check without throwing", "[mesh_check]") {
  const std::pair<const char*, const char*> expected[] = {{"open_box.obj", "closed"},
                                                          {"nonmanifold_edge.obj", "edge_manifold"},
                                                          {"flipped_face.obj", "consistently_oriented"},
                                                          {"self_intersecting.obj", "no_self_intersections"},
                                                          {"degenerate_face.obj", "no_degenerate_faces"}};
  for (const auto& [file, failing] : expected) {
    CAPTURE(file);
    MeshCheckReport report;
    REQUIRE_NOTHROW(report = inspect_mesh(read_fixture(file)));
    REQUIRE(report.checks.size() == 9);
    const MeshCheck& check = check_named(report, failing);
    REQUIRE(check.ran);
    REQUIRE_FALSE(check.passed);
    REQUIRE(check.count > 0);
    REQUIRE_FALSE(check_named(report, "outward_oriented").passed);
  }
}

TEST_CASE("Several bodies and cavities: winding numbers decide orientation (elementary geometry volumes)",
          "[mesh_check]") {
  SECTION("two separate boxes") {
    Mesh pair = merged(make_box(1, 1, 1), shifted(make_box(1, 2, 3), 5, 0, 0));
    const MeshCheckReport report = validate_mesh(pair);
    require_all_passed(report);
    REQUIRE(report.signed_volume == Approx(1.0 + 6.0).epsilon(1e-14));
  }
  SECTION("a hollow box: inward-facing cavity inside a body") {
    Mesh shell = merged(make_box(2, 2, 2), reversed(make_box(1, 1, 1)));
    const MeshCheckReport report = validate_mesh(shell);
    require_all_passed(report);
    REQUIRE_FALSE(report.flipped);
    REQUIRE(report.signed_volume == Approx(8.0 - 1.0).epsilon(1e-14));
  }
  SECTION("a body nested inside another, both outward: the solids overlap") {
    const std::string message = validation_error(merged(make_box(2, 2, 2), make_box(1, 1, 1)));
    CAPTURE(message);
    REQUIRE(contains(message,
                     "mesh check 'outward_oriented' failed: 1 wrongly oriented component, first component "
                     "containing face 12 lies inside another body"));
  }
  SECTION("one of two separate bodies inside-out is not silently flipped") {
    Mesh pair = merged(make_box(1, 1, 1), reversed(shifted(make_box(1, 1, 1), 3, 0, 0)));
    const std::string message = validation_error(pair);
    CAPTURE(message);
    REQUIRE(contains(message, "first component containing face 12 is inside-out (signed volume -1 m^3)"));
  }
}

TEST_CASE(
    "Rigid motions of a valid body pass every check and keep its volume (volume is invariant, common "
    "practice)",
    "[mesh_check]") {
  const Mesh body = make_deformed_sphere(4, [](const Eigen::Vector3d& u) {
    return Eigen::Vector3d(1000.0 * (1.0 + 0.25 * u.x() * u.y() + 0.1 * u.z() * u.z() * u.z()) * u);
  });
  Mesh reference = body;
  const double volume = validate_mesh(reference).signed_volume;
  std::mt19937_64 random(77);
  std::normal_distribution<double> gauss;
  std::uniform_real_distribution<double> offset(-1e6, 1e6);
  for (int trial = 0; trial < 8; ++trial) {
    // Normalised Gaussian quaternion: a uniformly random rotation (Shoemake 1992, Graphics Gems III).
    const Eigen::Quaterniond q =
        Eigen::Quaterniond(gauss(random), gauss(random), gauss(random), gauss(random)).normalized();
    Mesh moved = transformed(body, q.toRotationMatrix(),
                             Eigen::Vector3d(offset(random), offset(random), offset(random)));
    CAPTURE(trial);
    const MeshCheckReport report = validate_mesh(moved);
    require_all_passed(report);
    REQUIRE_FALSE(report.flipped);
    REQUIRE(report.signed_volume == Approx(volume).epsilon(1e-9));
  }
}

TEST_CASE("describe() words a failed check as count, noun and first offender", "[mesh_check]") {
  REQUIRE(describe({"closed", false, 1, "edge (1, 2) of face 3", true}) ==
          "1 border edge, first edge (1, 2) of face 3");
  REQUIRE(describe({"no_self_intersections", false, 2, "faces 0 and 9 intersect", true}) ==
          "2 intersecting face pairs, first faces 0 and 9 intersect");
  REQUIRE(describe({"closed", true, 0, "", true}).empty());
}

TEST_CASE("Check timings on a 204,800-face mesh of four bodies", "[mesh_check][.slow]") {
  Mesh mesh = merged(merged(make_icosphere(6), shifted(make_icosphere(6), 3, 0, 0)),
                     merged(shifted(make_icosphere(5), 0, 3, 0), shifted(make_icosphere(5), 0, 0, 3)));
  REQUIRE(mesh.faces.rows() == 204800);
  const auto start = std::chrono::steady_clock::now();
  const MeshCheckReport report = validate_mesh(mesh);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  require_all_passed(report);
  WARN("validate_mesh on 204800 faces: " << seconds << " s");
  REQUIRE(seconds < 10.0);
}

TEST_CASE("check_mesh reverses an inside-out mesh without throwing and still reports real failures",
          "[mesh_check]") {
  Mesh inverted = reversed(make_box(2, 3, 4));
  const MeshCheckReport report = check_mesh(inverted);
  require_all_passed(report);
  REQUIRE(report.flipped);
  REQUIRE(first_failure(report) == nullptr);
  REQUIRE(contains(report.flip_notice, "reversed all 12 faces: the mesh was inside-out"));
  REQUIRE(inverted.notices == std::vector<std::string>{report.flip_notice});
  REQUIRE(inverted.faces == make_box(2, 3, 4).faces);

  // An open box is not repaired; its failure is the same one-line error validate_mesh throws.
  Mesh open = without_face(make_box(1, 1, 1), 11);
  const MeshCheckReport open_report = check_mesh(open);
  const MeshCheck* failed = first_failure(open_report);
  REQUIRE(failed != nullptr);
  REQUIRE(failed->name == "closed");
  REQUIRE(std::string(check_failure(open, *failed).what()) == validation_error(open));
}

TEST_CASE("winding_number is 1 inside, 0 outside and in a cavity (Van Oosterom & Strackee 1983)",
          "[mesh_check]") {
  const Mesh box = make_box(2, 2, 2);
  CHECK(winding_number(box, Eigen::Vector3d(0.2, -0.3, 0.9)) == Approx(1.0).epsilon(1e-12));
  CHECK(std::abs(winding_number(box, Eigen::Vector3d(1.5, 0, 0))) < 1e-12);
  // A shell with a cavity: the outward box and an inward (reversed) smaller box inside it.
  const Mesh shell = merged(make_box(4, 4, 4), reversed(make_box(2, 2, 2)));
  CHECK(std::abs(winding_number(shell, Eigen::Vector3d(0, 0, 0))) < 1e-12);
  CHECK(winding_number(shell, Eigen::Vector3d(1.5, 1.5, 1.5)) == Approx(1.0).epsilon(1e-12));
}

TEST_CASE("check_regions accepts a void inside the body and refuses one that is not", "[mesh_check]") {
  auto named = [](Mesh mesh, const std::string& name) {
    mesh.source = name;
    return mesh;
  };
  const Mesh outer = named(make_box(2, 2, 2), "outer.obj");
  SECTION("a void strictly inside, and a positive region anywhere, are accepted") {
    REQUIRE_NOTHROW(check_regions({{outer, 1500}, {named(make_box(1, 1, 1), "void.obj"), -1500}}));
    REQUIRE_NOTHROW(
        check_regions({{outer, 1500}, {named(shifted(make_box(1, 1, 1), 5, 0, 0), "moon.obj"), 900}}));
  }
  SECTION("a void poking out through a face names the crossing face pair") {
    const std::string message = [&] {
      try {
        check_regions({{outer, 1500}, {named(shifted(make_box(1, 1, 1), 0.8, 0, 0), "void.obj"), -1500}});
      } catch (const MeshError& e) {
        return std::string(e.what());
      }
      return std::string("accepted");
    }();
    CAPTURE(message);
    CHECK(contains(message,
                   "void.obj: region 2 (density -1500 kg/m^3) must lie inside the first mesh outer.obj"));
    CHECK(contains(message, "touches or crosses face"));
  }
  SECTION("a void wholly outside names a vertex") {
    REQUIRE_THROWS_WITH(
        check_regions({{outer, 1500}, {named(shifted(make_box(1, 1, 1), 4, 0, 0), "void.obj"), -1500}}),
        Catch::Contains("its vertex 0 (3.5, -0.5, -0.5) m lies outside outer.obj"));
  }
  SECTION("a void in the body's cavity is outside the solid") {
    const Mesh hollow = named(merged(make_box(4, 4, 4), reversed(make_box(2, 2, 2))), "hollow.obj");
    REQUIRE_THROWS_WITH(check_regions({{hollow, 1500}, {named(make_box(1, 1, 1), "void.obj"), -1500}}),
                        Catch::Contains("lies outside hollow.obj"));
  }
  SECTION("a void whose every vertex is inside a non-convex body but whose middle is outside") {
    // Dumbbell: radius 0.3 + 1.2 x^2 in direction (x, y, z); the waist at x = 0 has radius 0.3. A box of
    // half-widths 0.7, 0.3, 0.3 has all corners in the lobes (|p| = 0.82 < r = 1.18) but its middle section
    // reaches 0.42 from the axis, outside the waist.
    const Mesh dumbbell = named(
        make_deformed_sphere(
            4, [](const Eigen::Vector3d& d) { return Eigen::Vector3d((0.3 + 1.2 * d.x() * d.x()) * d); }),
        "dumbbell.obj");
    const Mesh bar = named(make_box(1.4, 0.6, 0.6), "bar.obj");
    for (Eigen::Index v = 0; v < bar.vertices.rows(); ++v)
      REQUIRE(winding_number(dumbbell, bar.vertices.row(v).transpose()) == Approx(1.0).epsilon(1e-9));
    REQUIRE_THROWS_WITH(check_regions({{dumbbell, 1500}, {bar, -1500}}),
                        Catch::Contains("touches or crosses"));
  }
  SECTION("the first region must have a positive density") {
    REQUIRE_THROWS_AS(check_regions({{outer, -1500}}), MeshError);
  }
}

// --- The self-intersection search (mesh/self_intersections.h) against cases decided by hand and against
// CGAL's own whole-mesh test, Polygon_mesh_processing::self_intersections on a Surface_mesh (CGAL 5.5), as
// an outside oracle: the search shares only CGAL's predicates, not that code.

namespace {

using OracleMesh = CGAL::Surface_mesh<CGAL::Exact_predicates_inexact_constructions_kernel::Point_3>;

/// Intersecting face pairs by the oracle (pairs (f, f), which mark collinear faces, left out).
long oracle_pairs(const Mesh& mesh) {
  OracleMesh surface;
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    surface.add_vertex({mesh.vertices(v, 0), mesh.vertices(v, 1), mesh.vertices(v, 2)});
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
    REQUIRE(surface.add_face(OracleMesh::Vertex_index(mesh.faces(f, 0)),
                             OracleMesh::Vertex_index(mesh.faces(f, 1)),
                             OracleMesh::Vertex_index(mesh.faces(f, 2))) != OracleMesh::null_face());
  std::vector<std::pair<OracleMesh::Face_index, OracleMesh::Face_index>> pairs;
  CGAL::Polygon_mesh_processing::self_intersections(surface, std::back_inserter(pairs));
  REQUIRE(CGAL::Polygon_mesh_processing::does_self_intersect(surface) == !pairs.empty());
  return std::count_if(pairs.begin(), pairs.end(),
                       [](const auto& pair) { return pair.first != pair.second; });
}

Mesh mesh_of(std::initializer_list<std::array<double, 3>> vertices,
             std::initializer_list<std::array<int, 3>> faces) {
  Mesh mesh;
  mesh.vertices.resize(Eigen::Index(vertices.size()), 3);
  mesh.faces.resize(Eigen::Index(faces.size()), 3);
  Eigen::Index row = 0;
  for (const auto& v : vertices) mesh.vertices.row(row++) << v[0], v[1], v[2];
  row = 0;
  for (const auto& f : faces) mesh.faces.row(row++) << f[0], f[1], f[2];
  return mesh;
}

/// A tetrahedron with outward faces, vertices 0..3 (elementary geometry: any four points in general
/// position; faces ordered so each normal points away from the opposite vertex).
Mesh tetrahedron(const Eigen::Vector3d& a, const Eigen::Vector3d& b, const Eigen::Vector3d& c,
                 const Eigen::Vector3d& d) {
  Mesh mesh =
      mesh_of({{a.x(), a.y(), a.z()}, {b.x(), b.y(), b.z()}, {c.x(), c.y(), c.z()}, {d.x(), d.y(), d.z()}},
              {{0, 2, 1}, {0, 1, 3}, {0, 3, 2}, {1, 2, 3}});
  if ((b - a).cross(c - a).dot(d - a) < 0) mesh.faces.col(1).swap(mesh.faces.col(2));
  return mesh;
}

/// Two tetrahedra joined by `shared` (0, 1 or 2) of their vertex numbers: the second's first `shared`
/// vertices are the first's.
Mesh joined(const Mesh& first, const Mesh& second, int shared) {
  Mesh out = merged(first, second);
  const Eigen::Index offset = first.vertices.rows();
  for (Eigen::Index f = first.faces.rows(); f < out.faces.rows(); ++f)
    for (int k = 0; k < 3; ++k)
      if (out.faces(f, k) - offset < shared)
        out.faces(f, k) -= offset;
      else
        out.faces(f, k) -= shared;
  Vertices vertices(out.vertices.rows() - shared, 3);
  vertices << out.vertices.topRows(offset), out.vertices.bottomRows(out.vertices.rows() - offset - shared);
  out.vertices = vertices;
  return out;
}

/// The same mesh with its vertices renumbered at random and each face's corners rotated at random.
Mesh renumbered(const Mesh& mesh, std::mt19937_64& random) {
  std::vector<int> to(size_t(mesh.vertices.rows()));
  std::iota(to.begin(), to.end(), 0);
  std::shuffle(to.begin(), to.end(), random);
  Mesh out = mesh;
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    out.vertices.row(to[size_t(v)]) = mesh.vertices.row(v);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const auto turn = int(random() % 3);
    for (int k = 0; k < 3; ++k) out.faces(f, k) = to[size_t(mesh.faces(f, (k + turn) % 3))];
  }
  return out;
}

}  // namespace

TEST_CASE(
    "Self-intersection search: two tetrahedra, overlapping, apart, or joined at a vertex or an edge "
    "(elementary geometry; CGAL PMP as oracle)",
    "[mesh_check]") {
  const Mesh first = tetrahedron({0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {0, 0, 1});
  SECTION("one tetrahedron's corner inside the other: its three faces cross the other's slanted face") {
    const Mesh both =
        merged(first, tetrahedron({0.2, 0.2, 0.2}, {2, 0.3, 0.3}, {0.3, 2, 0.3}, {0.3, 0.3, 2}));
    const FacePairs pairs = self_intersecting_pairs(both);
    REQUIRE(pairs.count == 3);
    REQUIRE(pairs.count == oracle_pairs(both));
    REQUIRE(pairs.first == 3);
    REQUIRE(pairs.second >= 4);
  }
  SECTION("apart") {
    const Mesh both = merged(first, tetrahedron({2, 0, 0}, {3, 0, 0}, {2, 1, 0}, {2, 0, 1}));
    REQUIRE(self_intersecting_pairs(both).count == 0);
    REQUIRE(oracle_pairs(both) == 0);
  }
  SECTION("touching at a shared vertex or edge is not an intersection") {
    // The first fills x, y, z >= 0 below x + y + z = 1. The second lies in x <= 0 and meets it only in
    // vertex 0, or in y <= 0 and meets it only in the edge 0-1.
    const Mesh at_vertex =
        joined(first, tetrahedron({0, 0, 0}, {-1, 0.2, 0.1}, {-0.3, 1, 0.2}, {-0.2, 0.1, 1}), 1);
    // (A Surface_mesh cannot hold these non-manifold joins, so the oracle cannot judge them.)
    REQUIRE(self_intersecting_pairs(at_vertex).count == 0);
    const Mesh at_edge = joined(first, tetrahedron({0, 0, 0}, {1, 0, 0}, {0.3, -1, 0.2}, {0.5, -0.4, 1}), 2);
    REQUIRE(self_intersecting_pairs(at_edge).count == 0);
  }
  SECTION("a shared vertex whose neighbour pokes into the other tetrahedron is an intersection") {
    const Mesh poking =
        joined(first, tetrahedron({0, 0, 0}, {0.3, 0.3, 0.3}, {-1, 0.3, 0.2}, {-0.4, -0.5, 1}), 1);
    // Vertex (0.3, 0.3, 0.3) lies inside the first tetrahedron (x + y + z < 1), so the three faces of the
    // second at that vertex each cross the first's slanted face, and the two of them that also hold the
    // shared vertex 0 reach the first's faces at vertex 0 along their edges from it.
    REQUIRE(self_intersecting_pairs(poking).count > 0);
  }
  SECTION("touching at a point without sharing the vertex number is an intersection") {
    const Mesh touching =
        merged(first, tetrahedron({0, 0, 0}, {-1, 0.2, 0.1}, {-0.3, 1, 0.2}, {-0.2, 0.1, 1}));
    const long count = self_intersecting_pairs(touching).count;
    REQUIRE(count == 9);  // each of the 3 faces at one corner meets each of the 3 at the other
    REQUIRE(count == oracle_pairs(touching));
  }
}

TEST_CASE(
    "Self-intersection search: faces folded onto or through their neighbours (elementary geometry; "
    "CGAL PMP as oracle)",
    "[mesh_check]") {
  // Faces (0, 1, 2) and (1, 0, 3) share the edge 0-1 along the x axis; vertex 2 is at y = 1, z = 0.
  auto hinge = [](double y, double z) {
    return mesh_of({{0, 0, 0}, {1, 0, 0}, {0.5, 1, 0}, {0.5, y, z}}, {{0, 1, 2}, {1, 0, 3}});
  };
  const struct {
    const char* name;
    Mesh mesh;
    long expected;
  } cases[] = {
      {"folded flat onto the neighbour (coplanar, same side)", hinge(0.5, 0), 1},
      {"flat continuation (coplanar, other side)", hinge(-1, 0), 0},
      {"bent at the edge", hinge(0.5, 0.7), 0},
      {"bent out of the plane by 1e-300 (only exact arithmetic tells it from flat)", hinge(0.5, 1e-300), 0},
      // Faces (0, 1, 2) and (0, 3, 4) share vertex 0; the second's far edge 3-4 crosses the first.
      {"a fan neighbour whose far edge pierces the face",
       mesh_of({{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {0.3, 0.3, -0.5}, {0.3, 0.3, 0.5}}, {{0, 1, 2}, {0, 3, 4}}),
       1},
      {"a fan neighbour lying in the face's plane over it",
       mesh_of({{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {0.2, 0.1, 0}, {0.1, 0.2, 0}}, {{0, 1, 2}, {0, 3, 4}}), 1},
      {"a fan neighbour bent away",
       mesh_of({{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {-0.3, -0.3, -0.5}, {-0.3, 0.3, 0.5}},
               {{0, 1, 2}, {0, 3, 4}}),
       0},
  };
  for (const auto& c : cases) {
    CAPTURE(c.name);
    REQUIRE(self_intersecting_pairs(c.mesh).count == c.expected);
    REQUIRE(oracle_pairs(c.mesh) == c.expected);
  }
  SECTION("a closed mesh folding through itself: the fixture with a vertex pushed through the bottom") {
    const Mesh mesh = read_fixture("self_intersecting.obj");
    const long count = self_intersecting_pairs(mesh).count;
    REQUIRE(count > 0);
    REQUIRE(count == oracle_pairs(mesh));
  }
}

TEST_CASE(
    "Self-intersection search agrees with CGAL PMP on larger meshes, and a rigid motion or a "
    "renumbering never changes its verdict (common practice: invariance)",
    "[mesh_check]") {
  const Mesh lumpy = polystokes::test::lumpy_test_mesh();
  const Mesh overlapping = merged(lumpy, shifted(lumpy, 1500, 300, 200));
  const Mesh sphere_pair = merged(make_icosphere(3), shifted(make_icosphere(3), 1.9, 0.3, 0.1));
  std::mt19937_64 random(2026);
  std::normal_distribution<double> normal;
  for (const Mesh* mesh : {&lumpy, &overlapping, &sphere_pair}) {
    const long expected = oracle_pairs(*mesh);
    CAPTURE(expected);
    REQUIRE(self_intersecting_pairs(*mesh).count == expected);
    for (int trial = 0; trial < 4; ++trial) {
      const Eigen::Quaterniond rotation =
          Eigen::Quaterniond(normal(random), normal(random), normal(random), normal(random)).normalized();
      const Eigen::Vector3d shift(1e3 * normal(random), 1e3 * normal(random), 1e3 * normal(random));
      const Mesh moved = renumbered(transformed(*mesh, rotation.toRotationMatrix(), shift), random);
      CAPTURE(trial);
      REQUIRE((self_intersecting_pairs(moved).count > 0) == (expected > 0));
      REQUIRE(self_intersecting_pairs(renumbered(*mesh, random)).count == expected);
    }
  }
  REQUIRE(self_intersecting_pairs(lumpy).count == 0);
  REQUIRE(self_intersecting_pairs(overlapping).count > 0);
}
