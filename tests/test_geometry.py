"""Tests of anisotropy.geometry: conventions, frames, fans, projection.

Outside references used here:
- scipy.spatial.transform.Rotation (reference rotation library);
- exact vector algebra computed in the test (brute force: dot and cross
  products, numpy.linalg);
- Archimedes' hat-box theorem (area of a spherical zone is proportional to
  its height), which makes z uniform for uniform directions;
- the Lambert azimuthal equal-area projection, Snyder (1987), *Map
  Projections - A Working Manual*, USGS Prof. Paper 1395, polar aspect
  (rho = 2 R sin(theta/2), recalled from memory), scaled to unit radius at
  the horizontal.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from scipy.spatial.transform import Rotation

from anisotropy import geometry as g
from anisotropy.errors import InputError, InterpretationError

trends = st.floats(0.0, 359.999, allow_nan=False)
plunges = st.floats(0.01, 89.0, allow_nan=False)
rotations = st.floats(-89.9, 89.9, allow_nan=False)
dips = st.floats(1.0, 90.0, allow_nan=False)
pitches = st.floats(0.0, 179.99, allow_nan=False)
comp = st.floats(-1.0, 1.0, allow_nan=False)
vectors = st.tuples(comp, comp, comp).filter(lambda v: np.linalg.norm(v) > 1e-3)

R0 = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, -1.0]])


def circ_diff(a, b, period=360.0):
    d = np.mod(np.asarray(a) - np.asarray(b) + period / 2, period) - period / 2
    return np.abs(d)


def scipy_line(trend, plunge):
    # scipy Rotation: north (0,1,0) turned down by the plunge about east,
    # then clockwise (negative about up) by the trend
    return Rotation.from_euler("ZX", [-trend, -plunge], degrees=True).apply([0.0, 1.0, 0.0])


# --------------------------------------------------------------------- lines

@pytest.mark.parametrize("t,p,expected", [
    (0, 0, (0, 1, 0)),    # north, horizontal
    (90, 0, (1, 0, 0)),   # east
    (180, 30, (0, -np.cos(np.radians(30)), -0.5)),
    (0, 90, (0, 0, -1)),  # vertical down
])
def test_line_to_vector_known(t, p, expected):
    # exact trigonometry of the design.md convention at special angles
    np.testing.assert_allclose(g.line_to_vector(t, p), expected, atol=1e-15)


@given(trends, st.floats(0.0, 90.0))
def test_line_to_vector_matches_scipy(t, p):
    # scipy.spatial.transform.Rotation as the reference
    np.testing.assert_allclose(g.line_to_vector(t, p), scipy_line(t, p), atol=1e-12)


@given(trends, plunges)
def test_line_round_trip(t, p):
    tt, pp = g.vector_to_line(g.line_to_vector(t, p))
    assert abs(pp - p) < 1e-8
    assert circ_diff(tt, t) < 1e-8


@given(trends)
def test_horizontal_lines_trend_in_half_circle(t):
    tt, pp = g.vector_to_line(g.line_to_vector(t, 0.0))
    assert 0.0 <= tt < 180.0 and pp == 0.0
    assert circ_diff(tt, t, 180.0) < 1e-8


@given(vectors)
def test_lower_hemisphere(v):
    v = np.array(v)
    w = g.to_lower_hemisphere(v)
    # brute force: same line (parallel, same length) and pointing down
    assert np.linalg.norm(np.cross(v, w)) < 1e-12
    np.testing.assert_allclose(np.linalg.norm(w), np.linalg.norm(v))
    assert w[2] <= 0
    if w[2] == 0:
        assert w[0] > 0 or (w[0] == 0 and w[1] > 0)
    np.testing.assert_array_equal(g.to_lower_hemisphere(w), w)  # idempotent
    np.testing.assert_array_equal(g.to_lower_hemisphere(-v), w)  # undirected
    t, p = g.vector_to_line(v)
    assert 0 <= t < 360 and 0 <= p <= 90


def test_vectorised_shapes():
    t = np.linspace(0, 350, 12).reshape(3, 4)
    v = g.line_to_vector(t, 30.0)
    assert v.shape == (3, 4, 3)
    tt, pp = g.vector_to_line(v)
    assert tt.shape == (3, 4)
    np.testing.assert_allclose(tt, t, atol=1e-9)
    assert isinstance(g.vector_to_line([0, 1, -1])[0], float)


def test_bad_vectors_rejected():
    with pytest.raises(InputError):
        g.vector_to_line([0.0, 0.0, 0.0])
    with pytest.raises(InputError):
        g.vector_to_line([1.0, 2.0])
    with pytest.raises(InputError):
        g.vector_to_line([np.nan, 0.0, 1.0])


# -------------------------------------------------------------------- planes

@pytest.mark.parametrize("dd,strike", [(90, 0), (0, 270), (45, 315), (270, 180)])
def test_strike_right_hand_rule(dd, strike):
    assert g.strike_of(dd) == pytest.approx(strike)
    # right-hand rule, brute force: looking along strike the plane dips to the
    # right, a clockwise quarter turn seen from above, so strike x dip-direction
    # (both horizontal) points straight down
    s = g.line_to_vector(g.strike_of(dd), 0.0)
    d = g.line_to_vector(dd, 0.0)
    np.testing.assert_allclose(np.cross(s, d), [0.0, 0.0, -1.0], atol=1e-12)


@given(trends, dips)
def test_pole_is_normal_to_plane(dd, dip):
    n = g.plane_to_pole(dd, dip)
    strike_v = g.line_to_vector(dd - 90.0, 0.0)
    dip_v = g.line_to_vector(dd, dip)
    # brute force: the pole is perpendicular to both in-plane lines
    assert abs(np.dot(n, strike_v)) < 1e-12 and abs(np.dot(n, dip_v)) < 1e-12
    assert n[2] <= 0 and np.linalg.norm(n) == pytest.approx(1.0)


@given(trends, st.floats(0.01, 89.99))
def test_plane_round_trip(dd, dip):
    dd2, dip2 = g.pole_to_plane(g.plane_to_pole(dd, dip))
    assert abs(dip2 - dip) < 1e-8
    assert circ_diff(dd2, dd) < 1e-7


@given(vectors)
def test_pole_round_trip(v):
    v = np.array(v)
    dd, dip = g.pole_to_plane(v)
    assert 0 <= dip <= 90 and 0 <= dd < 360
    pole = g.plane_to_pole(dd, dip)
    # compared as axes: a vector 1e-190 above horizontal may come back as its opposite
    assert g.axis_angle(pole, v) < 1e-7 and pole[2] <= 0


@given(trends, dips, pitches)
def test_pitch_round_trip(dd, dip, pitch):
    v = g.line_from_pitch(dd, dip, pitch)
    # brute force: the line lies in the plane and points down
    assert abs(np.dot(v, g.plane_to_pole(dd, dip))) < 1e-12
    assert v[2] <= 0
    back = g.pitch_of(v, dd, dip)
    assert 0 <= back < 180
    assert circ_diff(back, pitch, 180.0) < 1e-7


def test_pitch_known_values():
    # pitch 90 is the dip line, pitch 0 the strike line (definition, design.md)
    np.testing.assert_allclose(g.line_from_pitch(120, 40, 90), g.line_to_vector(120, 40), atol=1e-12)
    assert g.axis_angle(g.line_from_pitch(120, 40, 0), g.line_to_vector(30, 0)) < 1e-9
    # a line plunging 30 in a plane dipping 90 has pitch 30 (sin(plunge) = sin(pitch) sin(dip),
    # exact spherical trigonometry of a right spherical triangle)
    v = g.line_from_pitch(90, 60, 30)
    _, p = g.vector_to_line(v)
    assert np.sin(np.radians(p)) == pytest.approx(np.sin(np.radians(30)) * np.sin(np.radians(60)))


def test_pitch_off_plane_rejected():
    with pytest.raises(InterpretationError):
        g.pitch_of(g.line_to_vector(0, 80), 90, 10, max_off_plane=5)
    with pytest.raises(InterpretationError):
        g.pitch_of(g.plane_to_pole(90, 10), 90, 10)


# -------------------------------------------------------------------- frames

@given(trends, st.floats(0.0, 90.0), st.floats(-180.0, 180.0))
def test_frame_matches_scipy(a, p, r):
    # reference composition with scipy.spatial.transform.Rotation
    ref = Rotation.from_euler("ZXY", [-a, -p, r], degrees=True).as_matrix() @ R0
    R = g.frame_from_angles(a, p, r)
    np.testing.assert_allclose(R, ref, atol=1e-12)
    # orthonormal and right-handed (numpy.linalg)
    np.testing.assert_allclose(R.T @ R, np.eye(3), atol=1e-12)
    assert np.linalg.det(R) == pytest.approx(1.0)
    np.testing.assert_allclose(R[:, 2], np.cross(R[:, 0], R[:, 1]), atol=1e-12)
    # major axis is the (trend, plunge) line; rotation = angle of the semi-major
    # axis below the horizontal measured about the major axis
    np.testing.assert_allclose(R[:, 0], scipy_line(a, p), atol=1e-12)
    s0 = g.line_to_vector(a + 90.0, 0.0)
    assert np.degrees(np.arccos(np.clip(R[:, 1] @ s0, -1, 1))) == pytest.approx(abs(r), abs=1e-6)


def test_rotation_zero_keeps_semi_horizontal_and_positive_turns_down():
    R = g.frame_from_angles(30.0, 40.0, 0.0)
    assert abs(R[2, 1]) < 1e-15
    R = g.frame_from_angles(30.0, 40.0, 25.0)
    assert R[2, 1] < 0
    # a = p = r = 0: major north, semi-major east, minor down (design convention)
    np.testing.assert_allclose(g.frame_from_angles(0, 0, 0), R0, atol=1e-15)


@given(trends, plunges, rotations)
def test_angles_round_trip(a, p, r):
    R = g.frame_from_angles(a, p, r)
    a2, p2, r2 = g.angles_from_frame(R)
    assert abs(p2 - p) < 1e-7
    assert circ_diff(a2, a) < 1e-6
    assert abs(r2 - r) < 1e-6


@settings(max_examples=60)
@given(st.integers(0, 2**31 - 1))
def test_random_rotation_round_trip(seed):
    # any rotation (scipy's uniform random rotation), axes in any sense
    R = Rotation.random(random_state=seed).as_matrix()
    a, p, r = g.angles_from_frame(R)
    assert 0 <= a < 360 and 0 <= p <= 90 and -90 < r <= 90
    R2 = g.frame_from_angles(a, p, r)
    for k in range(3):
        assert g.axis_angle(R[:, k], R2[:, k]) < 1e-6
    C = g.canonical_frame(R)
    assert np.linalg.det(C) == pytest.approx(1.0)
    assert C[2, 0] <= 0 and C[2, 2] <= 0
    for k in range(3):
        assert g.axis_angle(R[:, k], C[:, k]) < 1e-9
    assert g.is_rotation(C)


def test_vertical_major_angles():
    R = g.frame_from_angles(40.0, 90.0, 30.0)
    a, p, r = g.angles_from_frame(R)
    assert p == pytest.approx(90.0) and r == 0.0
    R2 = g.frame_from_angles(a, p, r)
    for k in range(3):
        assert g.axis_angle(R[:, k], R2[:, k]) < 1e-6


@given(trends, plunges, rotations)
def test_minor_is_pole_of_major_semi_plane(a, p, r):
    R = g.frame_from_angles(a, p, r)
    dd, dip = g.pole_to_plane(R[:, 2])
    # brute force: the plane holding major and semi-major has normal major x semi
    n = np.cross(R[:, 0], R[:, 1])
    assert g.axis_angle(n, g.plane_to_pole(dd, dip)) < 1e-6
    # both axes lie in that plane: pitch is defined with no off-plane angle
    g.pitch_of(R[:, 0], dd, dip, max_off_plane=1e-6)
    g.pitch_of(R[:, 1], dd, dip, max_off_plane=1e-6)


@given(trends, plunges, rotations)
def test_frame_from_axes(a, p, r):
    R = g.frame_from_angles(a, p, r)
    for F in (g.frame_from_axes(R[:, 0], minor=R[:, 2]),
              g.frame_from_axes(R[:, 0], semi=R[:, 1]),
              g.frame_from_axes(R[:, 0], minor=R[:, 2] + 1e-3 * R[:, 0], semi=R[:, 1])):
        assert g.is_rotation(F)
        for k in range(3):
            assert g.axis_angle(F[:, k], R[:, k]) < 0.1
    F = g.frame_from_axes(R[:, 0])
    assert g.is_rotation(F) and abs(F[2, 1]) < 1e-12  # semi-major horizontal


def test_frame_from_axes_rejects_bad_axes():
    with pytest.raises(InterpretationError):
        g.frame_from_axes([0, 1, 0], minor=[0, 2, 0])
    with pytest.raises(InterpretationError):
        g.frame_from_axes([0, 1, 0], minor=[0, 0, -1], semi=[0, 0.7, 0.7])


# ------------------------------------------------------------- axis angles

def test_axis_angle_against_brute_force(rng):
    u = rng.normal(size=(200, 3))
    v = rng.normal(size=(200, 3))
    cosang = np.abs(np.sum(u * v, 1)) / np.linalg.norm(u, axis=1) / np.linalg.norm(v, axis=1)
    np.testing.assert_allclose(g.axis_angle(u, v), np.degrees(np.arccos(cosang)), atol=1e-6)
    assert g.axis_angle([1, 0, 0], [-1, 0, 0]) == 0.0
    assert g.axis_angle([1, 0, 0], [0, 0, 1]) == pytest.approx(90.0)
    assert g.axis_angle(u[:, None, :], v[None, :5, :]).shape == (200, 5)


# ------------------------------------------------------------------- fans

@pytest.mark.parametrize("n", [1, 10, 300, 2000])
def test_fibonacci_hemisphere(n):
    v = g.fibonacci_hemisphere(n)
    assert v.shape == (n, 3)
    np.testing.assert_allclose(np.linalg.norm(v, axis=1), 1.0)
    assert np.all(v[:, 2] < 0)
    # Archimedes: a zone's area is proportional to its height, so an
    # equal-area lattice has about n*h points in each z-band of height h
    for c in (0.25, 0.5, 0.9):
        assert abs(np.sum(-v[:, 2] < c) - n * c) <= 1.0


def _nn_axis_angles(v):
    c = np.abs(v @ v.T)
    np.fill_diagonal(c, -1)
    return np.degrees(np.arccos(np.clip(c.max(1), -1, 1)))


def test_fibonacci_lattice_is_even():
    v = g.fibonacci_hemisphere(1000)
    # brute-force nearest neighbours as directed vectors: no clusters, no holes
    # (Gonzalez 2010 shows the lattice is close to the best equal-area
    # arrangements; the 15 % bound is ours, chosen loosely)
    c = v @ v.T
    np.fill_diagonal(c, -1)
    nn_dir = np.degrees(np.arccos(np.clip(c.max(1), -1, 1)))
    assert nn_dir.min() > 0.85 * np.median(nn_dir)
    assert nn_dir.max() < 1.15 * np.median(nn_dir)
    # as undirected axes only the rim (near-horizontal points meeting the
    # antipodes of others) gets closer, never to duplicates
    nn = _nn_axis_angles(v)
    assert nn.min() > 0.5 * np.median(nn)
    assert np.all(nn[-v[:, 2] > 0.1] > 0.85 * np.median(nn))
    # covering: random directions are never far from a lattice direction
    rng = np.random.default_rng(1)
    w = g.to_lower_hemisphere(rng.normal(size=(2000, 3)))
    w /= np.linalg.norm(w, axis=1, keepdims=True)
    far = np.degrees(np.arccos(np.clip(np.abs(w @ v.T).max(1), -1, 1)))
    assert far.max() < 1.2 * np.median(nn)


@pytest.mark.parametrize("deg", [5.0, 10.0, 20.0])
def test_fan_for_spacing(deg):
    v = g.fan_for_spacing(deg)
    med = np.median(_nn_axis_angles(v))
    assert abs(med - deg) < 0.15 * deg
    with pytest.raises(InputError):
        g.fan_for_spacing(0.0)


# -------------------------------------------------------------- projection

def test_equal_area_known_points():
    # Schmidt net, unit radius at the horizontal (Snyder 1987, polar aspect)
    assert g.equal_area([0, 0, -1]) == (0.0, 0.0)
    np.testing.assert_allclose(g.equal_area(g.line_to_vector(0, 0)), (0.0, 1.0), atol=1e-15)
    np.testing.assert_allclose(g.equal_area(g.line_to_vector(90, 0)), (1.0, 0.0), atol=1e-15)
    x, y = g.equal_area(g.line_to_vector(90, 45))
    assert x == pytest.approx(np.sqrt(2) * np.sin(np.radians(45 / 2))) and abs(y) < 1e-15
    x, y = g.equal_area(g.line_to_vector(225, 30))
    r = np.sqrt(2) * np.sin(np.radians(60 / 2))
    np.testing.assert_allclose((x, y), (-r / np.sqrt(2), -r / np.sqrt(2)), atol=1e-12)


def test_equal_area_jacobian(rng):
    # equal-area property, numerically: the map (trend, plunge) -> disk has
    # Jacobian determinant = (disk area / hemisphere area) * sphere element
    # = (pi / 2 pi) * cos(plunge)
    t = rng.uniform(0, 2 * np.pi, 300)
    p = rng.uniform(0.05, np.pi / 2 - 0.05, 300)
    eps = 1e-6

    def proj(tt, pp):
        return np.stack(g.equal_area(g.line_to_vector(np.degrees(tt), np.degrees(pp))), -1)

    dt = (proj(t + eps, p) - proj(t - eps, p)) / (2 * eps)
    dp = (proj(t, p + eps) - proj(t, p - eps)) / (2 * eps)
    det = np.abs(dt[:, 0] * dp[:, 1] - dt[:, 1] * dp[:, 0])
    np.testing.assert_allclose(det / np.cos(p), 0.5, rtol=1e-5)


def test_equal_area_uniform_density():
    # uniform directions (normalised Gaussian vectors) must land uniformly in
    # the disk: r^2 ~ U(0, 1) and the polar angle ~ U(0, 2 pi); scipy.stats KS
    rng = np.random.default_rng(7)
    v = rng.normal(size=(20000, 3))
    x, y = g.equal_area(v)
    r2 = x**2 + y**2
    assert r2.max() <= 1.0 + 1e-12
    assert stats.kstest(r2, "uniform").pvalue > 1e-3
    ang = np.mod(np.arctan2(y, x), 2 * np.pi) / (2 * np.pi)
    assert stats.kstest(ang, "uniform").pvalue > 1e-3
    # the same test fails for a projection that is not equal-area
    # (equal-angle / stereographic radius tan(theta/2)), so it has power
    z = -np.abs(v[:, 2]) / np.linalg.norm(v, axis=1)
    theta = np.arccos(-z)
    assert stats.kstest(np.tan(theta / 2) ** 2, "uniform").pvalue < 1e-6


def test_vertical_axis_trend_does_not_depend_on_sign_of_zero():
    # (0, 0, 1) flipped is (-0., -0., -1); both must read as trend 0, plunge 90
    assert g.vector_to_line([0.0, 0.0, 1.0]) == (0.0, 90.0)
    assert g.vector_to_line([-0.0, -0.0, -1.0]) == (0.0, 90.0)


# ------------------------------------------- the second rotation-angle sequence

@settings(max_examples=60)
@given(st.floats(-360.0, 360.0), st.floats(0.5, 179.5), st.floats(-360.0, 360.0))
def test_zxz_frame_matches_scipy_intrinsic_zxz(al, be, ga):
    # reference: scipy.spatial.transform.Rotation, intrinsic "ZXZ" (upper case)
    ref = Rotation.from_euler("ZXZ", [al, be, ga], degrees=True).as_matrix()
    R = g.frame_from_zxz(al, be, ga)
    np.testing.assert_allclose(R, ref, atol=1e-12)
    # inverse: the angles rebuild the same matrix (scipy again as the reference)
    a2, b2, g2 = g.zxz_from_frame(R)
    np.testing.assert_allclose(
        Rotation.from_euler("ZXZ", [a2, b2, g2], degrees=True).as_matrix(), R, atol=1e-9)
    assert 0.0 <= b2 <= 180.0


@settings(max_examples=60)
@given(trends, plunges, rotations)
def test_zxz_angles_of_a_canonical_frame_give_the_plane(a, p, r):
    # brute force: the plane of the minor axis from pole_to_plane; with the minor
    # axis pointing down, alpha = -dip direction and beta = 180 - dip (derived:
    # the third column of Rz(al) Rx(be) Rz(ga) is (sin al sin be, -cos al sin be, cos be))
    R = g.canonical_frame(g.frame_from_angles(a, p, r))
    al, be, ga = g.zxz_from_frame(R)
    dd, dip = g.pole_to_plane(R[:, 2])
    assert be == pytest.approx(180.0 - dip, abs=1e-7)
    if 0.01 < dip < 89.99:
        assert circ_diff(al, -dd) == pytest.approx(0.0, abs=1e-6)


def test_zxz_vertical_minor_axis_reports_gamma_zero():
    # exact: a horizontal plane (minor vertical) leaves only alpha + gamma defined
    R = Rotation.from_euler("ZXZ", [30.0, 180.0, 0.0], degrees=True).as_matrix()
    al, be, ga = g.zxz_from_frame(R)
    assert be == pytest.approx(180.0) and ga == 0.0
    np.testing.assert_allclose(g.frame_from_zxz(al, be, ga), R, atol=1e-12)


@settings(max_examples=40)
@given(trends, plunges, rotations)
def test_rotation_sequences_rebuild_the_frame(a, p, r):
    # sequence 1 against scipy's intrinsic ZXY composed with R0 (as in
    # test_frame_matches_scipy), up to column signs; sequence 2 exactly
    R = g.canonical_frame(g.frame_from_angles(a, p, r))
    seq = g.rotation_sequences(R)
    s1, s2 = seq["azimuth_plunge_rotation"], seq["zxz"]
    ref1 = Rotation.from_euler("ZXY", [-s1["azimuth"], -s1["plunge"], s1["rotation"]],
                               degrees=True).as_matrix() @ R0
    for j in range(3):
        assert abs(ref1[:, j] @ R[:, j]) == pytest.approx(1.0, abs=1e-9)
    ref2 = Rotation.from_euler("ZXZ", [s2["alpha"], s2["beta"], s2["gamma"]],
                               degrees=True).as_matrix()
    np.testing.assert_allclose(ref2, R, atol=1e-9)
    assert "clockwise" in s1["definition"] and "counter-clockwise" in s2["definition"]
