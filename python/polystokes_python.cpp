// The Python module `polystokes`: the library's sets, meshes, computation, conversions and fields for numpy
// users. Lengths in metres, GM in m^3 s^-2, densities in kg m^-3; arrays are numpy float64 (faces int32).
#include <pybind11/eigen.h>
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/mesh.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/field/series.h"
#include "polystokes/core/constants.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/render/comparison.h"
#include "polystokes/sets/compare.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/transforms.h"

namespace py = pybind11;
using namespace polystokes;

namespace {

using RowPoints = Eigen::Ref<const Points>;

/// A mesh from numpy arrays, checked as every command checks its meshes (an inside-out mesh is reversed,
/// with a notice); the arrays are copied once into the library's own layout.
Mesh checked_mesh(Mesh mesh) {
  validate_mesh(mesh);
  return mesh;
}

std::vector<DensityRegion> regions_of(const std::vector<Mesh>& meshes, const std::vector<double>& densities) {
  if (meshes.empty()) throw ConventionError("at least one mesh is needed");
  if (densities.size() != meshes.size())
    throw ConventionError("one density per mesh is needed: " + std::to_string(meshes.size()) + " mesh(es), " +
                          std::to_string(densities.size()) + " densities");
  std::vector<DensityRegion> regions;
  for (size_t i = 0; i < meshes.size(); ++i) regions.push_back({checked_mesh(meshes[i]), densities[i]});
  check_regions(regions);
  return regions;
}

/// One array per quantity: potential (N,), acceleration (N, 3), gradient (N, 3, 3).
py::dict field_arrays(const std::vector<FieldValue>& values, bool gradient) {
  const py::ssize_t n = py::ssize_t(values.size());
  py::array_t<double> potential(n);
  py::array_t<double> acceleration({n, py::ssize_t(3)});
  auto u = potential.mutable_unchecked<1>();
  auto a = acceleration.mutable_unchecked<2>();
  for (py::ssize_t i = 0; i < n; ++i) {
    u(i) = values[size_t(i)].potential;
    for (int k = 0; k < 3; ++k) a(i, k) = values[size_t(i)].acceleration[k];
  }
  py::dict result;
  result["potential"] = potential;
  result["acceleration"] = acceleration;
  if (gradient) {
    py::array_t<double> tensor({n, py::ssize_t(3), py::ssize_t(3)});
    auto t = tensor.mutable_unchecked<3>();
    for (py::ssize_t i = 0; i < n; ++i)
      for (int r = 0; r < 3; ++r)
        for (int c = 0; c < 3; ++c) t(i, r, c) = values[size_t(i)].gradient(r, c);
    result["gradient"] = tensor;
  }
  return result;
}

Convention convention_of(const std::string& normalization, bool condon_shortley, bool zonal_j) {
  return Convention{parse_normalization(normalization), condon_shortley, zonal_j};
}

}  // namespace

PYBIND11_MODULE(polystokes, m) {
  m.doc() =
      "Exact gravity fields (Stokes coefficients) of small bodies from shape meshes.\n"
      "Units: lengths m, GM m^3 s^-2, densities kg m^-3, potential m^2 s^-2, acceleration m s^-2, gradient s^-2.\n"
      "Caution: a shape-derived field is a model, to be validated against tracking data and reviewed under the\n"
      "mission's own procedures before operational use.";

  // One Python exception per error family; all derive from polystokes.Error. Translators registered later are
  // tried first, so the families come after their base.
  static py::exception<Error> error(m, "Error");
  py::register_exception<MeshError>(m, "MeshError", error.ptr());
  py::register_exception<FormatError>(m, "FormatError", error.ptr());
  py::register_exception<ConventionError>(m, "ConventionError", error.ptr());
  py::register_exception<ResourceError>(m, "ResourceError", error.ptr());
  py::register_exception<OutputError>(m, "OutputError", error.ptr());

  m.attr("G") = gravitational_constant;
  m.attr("__version__") = POLYSTOKES_VERSION;

  py::class_<Mesh>(m, "Mesh", "A closed triangle mesh: vertices (V, 3) in metres, faces (F, 3) zero-based, "
                              "counter-clockwise seen from outside.")
      .def(py::init([](const Vertices& vertices, const Faces& faces) {
             Mesh mesh;
             mesh.vertices = vertices;
             mesh.faces = faces;
             mesh.source = "array";
             return mesh;
           }),
           py::arg("vertices"), py::arg("faces"))
      .def_readwrite("vertices", &Mesh::vertices, "(V, 3) float64, metres (a view: edits change the mesh)")
      .def_readwrite("faces", &Mesh::faces, "(F, 3) int32, zero-based vertex indices (a view)")
      .def_readonly("source", &Mesh::source)
      .def_readonly("notices", &Mesh::notices, "What import and the checks changed (merged vertices, reversal)")
      .def_property_readonly("unit", [](const Mesh& mesh) { return to_string(mesh.unit); },
                             "Length unit of the source file ('m' or 'km'); vertices are always metres")
      .def("__repr__", [](const Mesh& mesh) {
        return "<polystokes.Mesh " + std::to_string(mesh.vertices.rows()) + " vertices, " +
               std::to_string(mesh.faces.rows()) + " faces from " + mesh.source + ">";
      });

  py::class_<FrameMetadata>(m, "FrameMetadata",
                            "What a set's body-fixed frame is, as the user states it; None = not given. Angles in "
                            "degrees, epoch ISO 8601 UTC.")
      .def(py::init<>())
      .def_readwrite("name", &FrameMetadata::name)
      .def_readwrite("definition", &FrameMetadata::definition)
      .def_readwrite("pole_ra", &FrameMetadata::pole_ra, "right ascension of the +z pole, degrees")
      .def_readwrite("pole_dec", &FrameMetadata::pole_dec, "declination of the +z pole, degrees")
      .def_readwrite("meridian", &FrameMetadata::meridian, "prime meridian angle at the epoch, degrees")
      .def_readwrite("epoch", &FrameMetadata::epoch, "YYYY-MM-DDTHH:MM:SS[.fraction]Z")
      .def("__repr__", [](const FrameMetadata& f) { return "<polystokes.FrameMetadata " + describe(f) + ">"; });

  py::class_<CoefficientCovariance>(
      m, "Covariance",
      "The covariance of a set's parameters of degrees 0..degree (docs/uncertainty.md): `values` is a (P, P) "
      "float64 array, P = (degree+1)^2, and `parameters` lists (n, m, 'C' or 'S') in its order, in the set's "
      "convention, reference radius and GM.")
      .def_readonly("degree", &CoefficientCovariance::degree)
      .def_readonly("body", &CoefficientCovariance::body)
      .def_readonly("samples", &CoefficientCovariance::samples,
                    "Monte Carlo samples it comes from (its rank is at most this; 0: not from samples)")
      .def_readonly("reference_radius", &CoefficientCovariance::reference_radius, "m")
      .def_readonly("gm", &CoefficientCovariance::gm, "m^3 s^-2")
      .def_property_readonly(
          "normalization", [](const CoefficientCovariance& c) { return to_string(c.convention.normalization); })
      .def_readonly("values", &CoefficientCovariance::values, "(P, P) float64, symmetric")
      .def_property_readonly(
          "parameters",
          [](const CoefficientCovariance& c) {
            std::vector<py::tuple> out;
            for (const CoefficientParameter& p : covariance_parameters(c.degree))
              out.push_back(py::make_tuple(p.n, p.m, p.sine ? "S" : "C"));
            return out;
          },
          "(n, m, 'C' or 'S') of each row and column, in order")
      .def("__repr__", [](const CoefficientCovariance& c) {
        return "<polystokes.Covariance " + c.body + ", degrees 0.." + std::to_string(c.degree) + ", " +
               std::to_string(c.values.rows()) + " parameters>";
      });

  py::class_<CoefficientSet>(m, "CoefficientSet", py::dynamic_attr(),
                             "A Stokes coefficient set. C, S, sigma_C, sigma_S are (degree+1, degree+1) arrays "
                             "indexed [n, m] (upper triangle zero), in the set's stored convention, as views of "
                             "the set's own storage. A set from read_set has `covariance`: its companion "
                             "Covariance, or None.")
      .def_readonly("degree", &CoefficientSet::degree)
      .def_readwrite("body", &CoefficientSet::body)
      .def_readwrite("gm", &CoefficientSet::gm, "GM, m^3 s^-2")
      .def_readwrite("reference_radius", &CoefficientSet::reference_radius, "reference radius R, m")
      .def_property_readonly(
          "normalization", [](const CoefficientSet& s) { return to_string(s.convention.normalization); },
          "'fully' (4pi), 'unnormalized', 'schmidt' or 'orthonormal'")
      .def_property_readonly("condon_shortley", [](const CoefficientSet& s) { return s.convention.condon_shortley; },
                             "True if the Legendre functions carry the (-1)^m phase")
      .def_property_readonly("zonal_j", [](const CoefficientSet& s) { return s.convention.zonal_as_j; },
                             "True if column m = 0 of C holds J_n = -C_n0")
      .def_property_readonly("convention", [](const CoefficientSet& s) { return describe(s.convention); },
                             "The convention in words")
      .def_readwrite("C", &CoefficientSet::C)
      .def_readwrite("S", &CoefficientSet::S)
      .def_readwrite("sigma_C", &CoefficientSet::sigma_C)
      .def_readwrite("sigma_S", &CoefficientSet::sigma_S)
      .def_property_readonly("origin", [](const CoefficientSet& s) { return to_string(s.origin); },
                             "What the expansion origin is, as files write it ('com', 'mesh', ...)")
      .def_property_readonly("frame", [](const CoefficientSet& s) { return frame_label(s); },
                             "What the axes are, as files write it ('mesh', 'principal', a declared label, ...)")
      .def_readonly("origin_in_mesh", &CoefficientSet::origin_in_mesh, "expansion origin in the mesh frame, m")
      .def_readonly("axes_in_mesh", &CoefficientSet::axes_in_mesh, "rows: the set's axes in the mesh frame")
      .def_readonly("center_of_mass", &CoefficientSet::center_of_mass, "mesh frame, m")
      .def_readonly("mass", &CoefficientSet::mass, "kg (0 when unknown)")
      .def_readonly("volume", &CoefficientSet::volume, "m^3 (0 when unknown)")
      .def_readonly("brillouin_radius", &CoefficientSet::brillouin_radius, "m, about the origin (0 when unknown)")
      .def_readonly("history", &CoefficientSet::history)
      .def_readonly("notes", &CoefficientSet::notes)
      .def_readonly("created", &CoefficientSet::created)
      .def_property(
          "frame_metadata", [](const CoefficientSet& s) { return s.frame_metadata; },
          [](CoefficientSet& s, const FrameMetadata& frame) {
            check_frame_metadata(frame);
            if (s.frame == FrameKind::declared && !frame.name)
              throw ConventionError("a declared frame keeps its name: it is the frame's label");
            s.frame_metadata = frame;
          },
          "The frame metadata (a copy); assigning checks it (ConventionError). For a declared frame the name is "
          "its label.")
      .def(
          "write",
          [](CoefficientSet set, const std::string& path) {
            drop_covariance_link(set);  // the companion stays with the file it was read from
            write_coefficient_files(set, {{path, coefficient_form_for(path)}});
          },
          py::arg("path"),
          "Writes the set: JSON for a name ending in .json, else the polystokes text format (without a link to "
          "a covariance companion).")
      .def("__repr__", [](const CoefficientSet& s) {
        return "<polystokes.CoefficientSet " + s.body + ", degree " + std::to_string(s.degree) + ", " +
               short_name(s.convention) + ">";
      });

  m.def(
      "read_set",
      [](const std::string& path) {
        py::object set = py::cast(read_coefficient_file(path));
        const auto covariance = read_companion_covariance(set.cast<const CoefficientSet&>(), path);
        set.attr("covariance") = covariance ? py::cast(*covariance) : py::none();
        return set;
      },
      py::arg("path"),
      "Reads a coefficient set, text or JSON (told apart by content), with its covariance companion if the set "
      "records one (as .covariance; None otherwise). A companion whose SHA-256 is not the recorded one is "
      "refused (FormatError).");
  m.def("read_covariance", &read_covariance_file, py::arg("path"),
        "Reads a covariance file (text or binary): a Covariance with .values (numpy) and .parameters.");
  m.def(
      "read_mesh",
      [](const std::string& path, const std::string& unit, double merge_tolerance) {
        MeshReadOptions options;
        options.unit = parse_length_unit(unit);
        options.merge_tolerance = merge_tolerance;
        return read_mesh(path, options);
      },
      py::arg("path"), py::arg("unit"), py::arg("merge_tolerance") = 0.0,
      "Reads an OBJ, OFF, PLY or STL mesh whose coordinates are in `unit` ('m' or 'km'; no default, as a "
      "wrong unit changes every result); vertices come back in metres.");

  m.def(
      "write_mesh",
      [](const Mesh& mesh, const std::string& path, const std::string& unit) {
        if (mesh_format_of(path, "") != "obj")
          throw ConventionError(path + ": write_mesh writes OBJ files; give a name ending in .obj");
        write_obj(mesh, path, parse_length_unit(unit));
      },
      py::arg("mesh"), py::arg("path"), py::arg("unit"),
      "Writes `mesh` (vertices in metres) as an OBJ file whose coordinates are in `unit` ('m' or 'km', stated in "
      "its first comment line), written whole or not at all; read it back with read_mesh(path, unit).");

  m.def(
      "compute",
      [](const std::vector<Mesh>& meshes, const std::vector<double>& densities, int degree, double reference_radius,
         const std::string& origin, const std::string& frame, const std::string& normalization,
         bool condon_shortley, bool zonal_j, const std::string& body, int threads) {
        const std::vector<DensityRegion> regions = regions_of(meshes, densities);
        ComputeOptions options;
        options.degree = degree;
        options.reference_radius = reference_radius;
        // compute_coefficients refuses the kinds a computation cannot have; a point needs its coordinates.
        options.origin = parse_origin_kind(origin);
        if (options.origin == OriginKind::point)
          throw ConventionError("origin must be 'com' or 'mesh', not '" + origin + "'");
        options.frame = parse_frame_kind(frame);
        options.convention = convention_of(normalization, condon_shortley, zonal_j);
        options.body = body;
        options.execution.threads = threads;
        py::gil_scoped_release release;
        return compute_coefficients(regions, options);
      },
      py::arg("meshes"), py::arg("densities"), py::arg("degree"), py::kw_only(), py::arg("reference_radius") = 0.0,
      py::arg("origin") = "com", py::arg("frame") = "mesh", py::arg("normalization") = "fully",
      py::arg("condon_shortley") = false, py::arg("zonal_j") = false, py::arg("body") = "body",
      py::arg("threads") = 0,
      "Exact constant-density coefficients of superposed regions (one density per mesh, kg m^-3; a negative "
      "density is a void inside the first mesh). reference_radius in m, 0 = Brillouin radius. The meshes are "
      "checked first (MeshError). Results do not depend on `threads` (0 = all cores).");

  m.def(
      "field",
      [](const CoefficientSet& set, const RowPoints& points, bool gradient, bool set_frame, int threads) {
        const SeriesModel model(set);
        Points local = points;
        if (!set_frame)
          for (Eigen::Index i = 0; i < local.rows(); ++i) local.row(i) = to_set_frame(set, points.row(i).transpose());
        std::vector<FieldValue> values;
        {
          py::gil_scoped_release release;
          values = model.evaluate(local, threads);
        }
        if (!set_frame)
          for (FieldValue& value : values) value = to_mesh_frame(set, value);
        return field_arrays(values, gradient);
      },
      py::arg("set"), py::arg("points"), py::kw_only(), py::arg("gradient") = false, py::arg("set_frame") = false,
      py::arg("threads") = 0,
      "Series field at points (N, 3), metres, outside the Brillouin sphere: a dict of potential (N,), "
      "acceleration (N, 3) and with gradient=True the gradient (N, 3, 3). Points and vectors in the mesh frame, "
      "or in the set's frame about its origin with set_frame=True.");
  m.def(
      "field",
      [](const std::vector<Mesh>& meshes, const std::vector<double>& densities, const RowPoints& points,
         bool gradient, int threads) {
        const PolyhedronGravity model(regions_of(meshes, densities));
        std::vector<FieldValue> values;
        {
          py::gil_scoped_release release;
          values = model.evaluate(Points(points), threads);
        }
        return field_arrays(values, gradient);
      },
      py::arg("meshes"), py::arg("densities"), py::arg("points"), py::kw_only(), py::arg("gradient") = false,
      py::arg("threads") = 0,
      "Exact polyhedron field of superposed constant-density regions at points (N, 3), metres, mesh frame, "
      "anywhere inside or outside.");

  m.def(
      "convert",
      [](const CoefficientSet& set, std::optional<std::string> normalization, std::optional<bool> condon_shortley,
         std::optional<bool> zonal_j) {
        Convention target = set.convention;
        if (normalization) target.normalization = parse_normalization(*normalization);
        if (condon_shortley) target.condon_shortley = *condon_shortley;
        if (zonal_j) target.zonal_as_j = *zonal_j;
        return convert_convention(set, target);
      },
      py::arg("set"), py::kw_only(), py::arg("normalization") = py::none(), py::arg("condon_shortley") = py::none(),
      py::arg("zonal_j") = py::none(), "The same set in another convention (exact; sigmas alike).");
  m.def("rescale_radius", &rescale_reference_radius, py::arg("set"), py::arg("radius"),
        "The same field with reference radius `radius` (m).");
  m.def("rescale_gm", &rescale_gm, py::arg("set"), py::arg("gm"), "The same field with GM `gm` (m^3 s^-2).");
  m.def(
      "shift",
      [](const CoefficientSet& set, const Eigen::Vector3d& shift, bool allow_outside) {
        ShiftOptions options;
        options.allow_outside = allow_outside;
        py::gil_scoped_release release;
        return shift_origin(set, shift, options);
      },
      py::arg("set"), py::arg("shift"), py::kw_only(), py::arg("allow_outside") = false,
      "Moves the expansion origin by `shift` (m, set frame); exact to the set's degree.");
  m.def(
      "rotate",
      [](const CoefficientSet& set, const Eigen::Matrix3d& rotation) {
        py::gil_scoped_release release;
        return rotate_set(set, rotation);
      },
      py::arg("set"), py::arg("rotation"),
      "Rotates the set's axes: a point x in the old frame has coordinates rotation @ x in the new one.");
  m.def(
      "compare",
      [](const py::object& a, const py::object& b, double tolerance) {
        CompareOptions options;
        options.tolerance = tolerance;
        // The covariance read_set attached, if any.
        const auto covariance_of = [](const py::object& set) -> const CoefficientCovariance* {
          const py::object covariance = py::getattr(set, "covariance", py::none());
          return covariance.is_none() ? nullptr : &covariance.cast<const CoefficientCovariance&>();
        };
        const Comparison comparison = compare_sets(a.cast<const CoefficientSet&>(), b.cast<const CoefficientSet&>(),
                                                   options, covariance_of(a), covariance_of(b));
        return py::module_::import("json").attr("loads")(comparison_json(comparison));
      },
      py::arg("a"), py::arg("b"), py::kw_only(), py::arg("tolerance") = CompareOptions{}.tolerance,
      "Compares two sets degree by degree (after bringing B to A's conventions) and diagnoses the usual "
      "exchange mistakes, and against their sigmas and covariances (.covariance from read_set) when they have "
      "any; returns the comparison as a dict (the same content as compare --json).");
}
