"""Tests of the Python module `polystokes` against values computed here with numpy and scipy from their own
definitions (closed forms, direct quadrature), not against the command-line tool's files."""
import math
import os
import subprocess

import numpy as np
import pytest
from scipy import integrate, special

import polystokes

G = 6.67430e-11  # CODATA 2018 recommended value (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010)


def box(a, b, c):
    """A rectangular box centred on the origin, edges a, b, c along x, y, z, as 12 outward triangles."""
    corners = np.array([[x, y, z] for x in (-a / 2, a / 2) for y in (-b / 2, b / 2) for z in (-c / 2, c / 2)])
    quads = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
    faces = []
    for q in quads:
        faces += [(q[0], q[1], q[2]), (q[0], q[2], q[3])]
    faces = np.array(faces, dtype=np.int32)
    # Orient every face outward: its normal points away from the centre.
    for k, f in enumerate(faces):
        p = corners[f]
        if np.dot(np.cross(p[1] - p[0], p[2] - p[0]), p.mean(axis=0)) < 0:
            faces[k] = f[[0, 2, 1]]
    return polystokes.Mesh(corners, faces)


def norm_factor(n, m):
    """4pi full normalization N_nm = sqrt((2 - delta_m0)(2n + 1)(n - m)!/(n + m)!) (Heiskanen & Moritz 1967,
    Physical Geodesy, eq. 1-73), so that C_unnormalized = N_nm C_fully."""
    return math.sqrt((2 - (m == 0)) * (2 * n + 1) * special.factorial(n - m, exact=True)
                     / special.factorial(n + m, exact=True))


A, B, C, RHO = 3.0e3, 2.0e3, 1.2e3, 2000.0


@pytest.fixture(scope="module")
def box_set():
    return polystokes.compute([box(A, B, C)], [RHO], 4, reference_radius=2.5e3)


def test_gm_and_degree2_of_a_box_match_the_closed_forms(box_set):
    # Mass rho a b c; second moments int x^2 dm = M a^2 / 12 (common practice, any mechanics handbook).
    # Unnormalized C20 = (int z^2 - (x^2 + y^2)/2 dm) / (M R^2), C22 = (int x^2 - y^2 dm) / (4 M R^2)
    # (MacCullagh's formula, e.g. Kaula 1966, Theory of Satellite Geodesy, ch. 1).
    R = 2.5e3
    assert box_set.gm == pytest.approx(G * RHO * A * B * C, rel=1e-14)
    c20 = (C**2 / 12 - (A**2 + B**2) / 24) / R**2
    c22 = (A**2 - B**2) / 12 / (4 * R**2)
    assert box_set.normalization == "fully"
    assert box_set.C[2, 0] * norm_factor(2, 0) == pytest.approx(c20, rel=1e-13)
    assert box_set.C[2, 2] * norm_factor(2, 2) == pytest.approx(c22, rel=1e-13)
    # Symmetry of the box about every coordinate plane: odd degrees and all S vanish.
    assert np.max(np.abs(box_set.C[1])) < 1e-15 and np.max(np.abs(box_set.C[3])) < 1e-15
    assert np.max(np.abs(box_set.S)) < 1e-15
    assert box_set.C.shape == (5, 5) and box_set.C[0, 0] == 1.0


def test_arrays_are_views_of_the_set(box_set):
    c = box_set.C
    assert not c.flags.owndata
    assert np.shares_memory(c, box_set.C)


def test_exact_field_of_a_box_matches_direct_quadrature():
    # U(p) = G rho int dV / |p - q| evaluated by scipy's adaptive cubature (the definition of the potential).
    point = np.array([2.6e3, 1.1e3, -0.7e3])
    exact = polystokes.field([box(A, B, C)], [RHO], point.reshape(1, 3))
    integrand = lambda z, y, x: 1.0 / math.dist(point, (x, y, z))
    value, _ = integrate.tplquad(integrand, -A / 2, A / 2, -B / 2, B / 2, -C / 2, C / 2, epsabs=0, epsrel=1e-10)
    assert exact["potential"][0] == pytest.approx(G * RHO * value, rel=1e-8)


def test_series_acceleration_is_the_gradient_of_its_potential_and_matches_the_exact_field():
    s = polystokes.compute([box(A, B, C)], [RHO], 12)
    p = np.array([[7.0e3, -3.0e3, 4.0e3]])
    series = polystokes.field(s, p, gradient=True)
    h = 1.0
    numeric = np.array([(polystokes.field(s, p + h * e)["potential"][0] -
                         polystokes.field(s, p - h * e)["potential"][0]) / (2 * h) for e in np.eye(3)])
    np.testing.assert_allclose(series["acceleration"][0], numeric, rtol=1e-7)
    exact = polystokes.field([box(A, B, C)], [RHO], p)
    np.testing.assert_allclose(series["acceleration"][0], exact["acceleration"][0], rtol=1e-9)
    assert series["gradient"].shape == (1, 3, 3)
    np.testing.assert_allclose(np.trace(series["gradient"][0]), 0.0, atol=1e-12 * np.abs(series["gradient"]).max())


def test_conversion_to_unnormalized_uses_the_normalization_factors(box_set):
    plain = polystokes.convert(box_set, normalization="unnormalized")
    for n in range(5):
        for m in range(n + 1):
            assert plain.C[n, m] == pytest.approx(box_set.C[n, m] * norm_factor(n, m), rel=1e-14, abs=1e-300)


def test_rescaling_the_radius_scales_degree_n_by_the_ratio_to_the_n(box_set):
    # C_n' = C_n (R / R')^n keeps (R/r)^n C_n fixed (common practice).
    half = polystokes.rescale_radius(box_set, 5.0e3)
    np.testing.assert_allclose(half.C[2, 0], box_set.C[2, 0] * 0.25, rtol=1e-14)


def test_sets_round_trip_in_both_forms(box_set, tmp_path):
    for name in ("set.txt", "set.json"):
        path = str(tmp_path / name)
        box_set.write(path)
        back = polystokes.read_set(path)
        assert back.gm == box_set.gm and back.reference_radius == box_set.reference_radius
        assert np.array_equal(back.C, box_set.C) and np.array_equal(back.S, box_set.S)


def test_frame_metadata_is_checked_kept_by_write_and_read_and_origin_and_frame_are_words(box_set, tmp_path):
    # Issue 12; right ascension in [0, 360) (equatorial coordinates, common practice).
    assert box_set.origin == "com" and box_set.frame == "mesh"
    frame = polystokes.FrameMetadata()
    frame.name = "Box fixed"
    frame.pole_ra, frame.pole_dec = 12.5, -30.0
    frame.meridian, frame.epoch = 100.0, "2000-01-01T12:00:00Z"
    named = polystokes.rescale_radius(box_set, box_set.reference_radius)
    named.frame_metadata = frame
    for name in ("set.txt", "set.json"):
        path = str(tmp_path / name)
        named.write(path)
        back = polystokes.read_set(path).frame_metadata
        assert (back.name, back.pole_ra, back.pole_dec, back.meridian, back.epoch) == (
            "Box fixed", 12.5, -30.0, 100.0, "2000-01-01T12:00:00Z")
        assert back.definition is None
    frame.pole_ra = 360.0
    with pytest.raises(polystokes.ConventionError):
        named.frame_metadata = frame


def test_results_do_not_depend_on_the_thread_count():
    one = polystokes.compute([box(A, B, C)], [RHO], 10, threads=1)
    two = polystokes.compute([box(A, B, C)], [RHO], 10, threads=2)
    assert np.array_equal(one.C, two.C) and np.array_equal(one.S, two.S)


def test_errors_arrive_as_one_exception_family_each(tmp_path):
    mesh = box(A, B, C)
    open_box = polystokes.Mesh(mesh.vertices, mesh.faces[:-1])
    with pytest.raises(polystokes.MeshError):
        polystokes.compute([open_box], [RHO], 2)
    with pytest.raises(polystokes.FormatError):
        polystokes.read_set(str(tmp_path / "missing.txt"))
    assert issubclass(polystokes.MeshError, polystokes.Error)
    with pytest.raises(polystokes.ConventionError):
        polystokes.convert(polystokes.compute([mesh], [RHO], 2), normalization="sideways")


def test_a_mesh_file_in_km_arrives_in_metres():
    path = os.path.join(os.environ["POLYSTOKES_SOURCE_DIR"], "shapes-demo", "unit_cube.obj")
    metres = polystokes.read_mesh(path, "m")
    km = polystokes.read_mesh(path, "km")
    np.testing.assert_array_equal(km.vertices, metres.vertices * 1000.0)
    assert km.unit == "km"


def test_a_mesh_written_in_km_reads_back_in_metres(tmp_path):
    # The OBJ layout (common practice): "v x y z" lines in the stated unit, then "f i j k" with 1-based indices,
    # read here by hand with numpy, independently of the library's reader.
    mesh = box(A, B, C)
    path = str(tmp_path / "box.obj")
    polystokes.write_mesh(mesh, path, "km")
    lines = open(path).read().splitlines()
    vertices = np.array([[float(x) for x in line.split()[1:]] for line in lines if line.startswith("v ")])
    faces = np.array([[int(i) - 1 for i in line.split()[1:]] for line in lines if line.startswith("f ")])
    np.testing.assert_allclose(vertices * 1000.0, mesh.vertices, rtol=1e-15)
    np.testing.assert_array_equal(faces, mesh.faces)
    back = polystokes.read_mesh(path, "km")
    np.testing.assert_allclose(back.vertices, mesh.vertices, rtol=1e-15)
    with pytest.raises(polystokes.ConventionError):
        polystokes.write_mesh(mesh, str(tmp_path / "box.stl"), "m")


def python_blocks(relative_path):
    """The ```python blocks of a document of the project."""
    text = open(os.path.join(os.environ["POLYSTOKES_SOURCE_DIR"], relative_path), encoding="utf-8").read()
    blocks = []
    for part in text.split("```python\n")[1:]:
        blocks.append(part.split("```", 1)[0])
    return blocks


@pytest.mark.parametrize("document", ["docs/python.md", "README.md"])
def test_the_documented_examples_run(document, tmp_path, monkeypatch):
    blocks = python_blocks(document)
    assert blocks, f"{document} has no python example"
    os.symlink(os.path.join(os.environ["POLYSTOKES_SOURCE_DIR"], "shapes-demo"), tmp_path / "shapes-demo")
    monkeypatch.chdir(tmp_path)
    for block in blocks:
        exec(compile(block, document, "exec"), {})


def polystokes_executable():
    """The command-line tool built beside the module (build/polystokes for build/python)."""
    return os.path.join(os.path.dirname(os.path.abspath(polystokes.__file__)), os.pardir, "polystokes")


@pytest.mark.parametrize("form", ["text", "binary"])
def test_covariance_from_uncertainty_checked_with_numpy(form, tmp_path):
    source = os.environ.get("POLYSTOKES_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
    executable = polystokes_executable()
    if not os.path.exists(executable):
        pytest.skip("the polystokes executable is not built beside the module")
    samples = 8
    out = tmp_path / "set.txt"
    subprocess.run([executable, "-q", "uncertainty", os.path.join(source, "shapes-demo", "sphere.obj"), "--unit",
                    "km", "--density", "2100", "--degree", "4", "--samples", str(samples), "--seed", "3",
                    "--shape-sigma", "0.002", "--correlation-length", "0.3", "--normalization", "schmidt",
                    "--covariance-format", form, "-o", str(out)], check=True)
    s = polystokes.read_set(str(out))
    cov = s.covariance
    assert cov is not None and cov.degree == 4 and cov.samples == samples
    values = np.array(cov.values)
    assert values.shape == (25, 25)
    # sqrt of the diagonal is the set's sigmas exactly (==, not a tolerance).
    for k, (n, m, part) in enumerate(cov.parameters):
        sigma = s.sigma_S[n, m] if part == "S" else s.sigma_C[n, m]
        assert math.sqrt(values[k, k]) == sigma
    assert [p for p in cov.parameters[:4]] == [(0, 0, "C"), (1, 0, "C"), (1, 1, "C"), (1, 1, "S")]
    # Symmetric, positive semidefinite to rounding, rank at most the sample count (numpy's own eigenvalues).
    assert np.array_equal(values, values.T)
    eigenvalues = np.linalg.eigvalsh(values)
    assert eigenvalues.min() >= -1e-12 * eigenvalues.max()
    assert np.linalg.matrix_rank(values, tol=1e-10 * eigenvalues.max()) <= samples
    # The file read directly as documented (docs/uncertainty.md), independently of the module's reader.
    companion = tmp_path / ("set.cov.bin" if form == "binary" else "set.cov.txt")
    data = companion.read_bytes()
    if form == "binary":
        header_end = data.index(b"bytes 5000\n") + len(b"bytes 5000\n")
        direct = np.frombuffer(data[header_end:], dtype="<f8").reshape(25, 25)
    else:
        direct = np.zeros((25, 25))
        for line in data.decode().splitlines():
            if line.startswith("row "):
                words = line.split()
                i = int(words[1])
                direct[i, :i + 1] = [float(w) for w in words[2:]]
                direct[:i + 1, i] = direct[i, :i + 1]
    assert np.array_equal(direct, values)
    assert np.array_equal(np.array(polystokes.read_covariance(str(companion)).values), values)
    # A set against itself: no difference, so consistent within the uncertainty at every degree.
    report = polystokes.compare(s, s)
    assert report["uncertainty"]["covariance_degree_a"] == 4 and report["uncertainty"]["consistent"]
