"""winder.em against published worked examples and independent numerical references.

References used here (no project code in them):
* magpylib (a general-purpose magnetics library) summing the coil's turns as current
  loops (``magpylib.current.Circle``) or polygon loops (``magpylib.current.Polyline``);
* Maxwell's mutual inductance of coaxial loops, M = mu0 sqrt(r1 r2) [(2/k - k) K(k)
  - (2/k) E(k)], k² = 4 r1 r2 / ((r1 + r2)² + d²), with scipy.special.ellipk/ellipe
  (which take m = k²), summed over a filament grid of the winding; each filament's
  self term is mu0 R (ln(8R/g) - 2) with g the geometric mean distance of its cell
  (0.2235 (dr + dz), Maxwell's GMD of a rectangle, 0.44705 s for a square);
* for rectangular turns: the closed-form vector potential of a straight segment,
  A = mu0 I / (4 pi) u ln((Ra + Rb + l) / (Ra + Rb - l)), integrated along the other
  loop by Gauss-Legendre (self terms: the loop against a copy moved by its GMD);
  checked here against Maxwell's formula on circles.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest

from winder import em
from winder.errors import InputError

MU0 = 1.25663706212e-6  # H/m, CODATA 2018
INCH = 0.0254


# --------------------------------------------------------------------- references


def maxwell_mutual(r1, r2, d):
    """Maxwell's mutual inductance of two coaxial loops, H (scipy m = k²)."""
    from scipy.special import ellipe, ellipk

    m = 4.0 * r1 * r2 / ((r1 + r2) ** 2 + d * d)
    k = np.sqrt(m)
    return MU0 * np.sqrt(r1 * r2) * ((2.0 / k - k) * ellipk(m) - 2.0 / k * ellipe(m))


def filament_inductance(r1, r2, length, turns, nr, nz):
    """Inductance of a round coil (uniform current over r1..r2 x length), H: Maxwell's
    formula over an nr x nz filament grid, GMD self terms. Filament pairs are grouped
    by their axial offset (nz pairs at offset 0, 2 (nz - k) at offset k dz)."""
    dr, dz = (r2 - r1) / nr, length / nz
    r = r1 + (np.arange(nr) + 0.5) * dr
    g = 0.2235 * (dr + dz)
    total = 0.0
    for k in range(nz):
        pairs = nz if k == 0 else 2 * (nz - k)
        d = np.full((nr, nr), k * dz)
        if k == 0:
            np.fill_diagonal(d, 1.0)  # any value; the diagonal is replaced below
        m = maxwell_mutual(r[:, None], r[None, :], d)
        if k == 0:
            np.fill_diagonal(m, MU0 * r * (np.log(8.0 * r / g) - 2.0))
        total += pairs * m.sum()
    return total * (turns / (nr * nz)) ** 2


def grid_for(c, b, n=6, cap=2000):
    """A filament grid with near-square cells: (nr, nz) for depth c and length b."""
    if c < b:
        return n, min(cap, max(n, round(n * b / c)))
    return min(cap, max(n, round(n * c / b))), n


def outline(w, lc, rc, h, arc_n=8, side_n=4):
    """Closed CCW polygon of a rounded rectangle w x lc (corner rc) grown by h; arc
    vertices on the circle, straight sides split into side_n pieces."""
    r = rc + h
    cx, cy = w / 2 - rc, lc / 2 - rc
    arcs = []
    for k, (sx, sy) in enumerate(((1, 1), (-1, 1), (-1, -1), (1, -1))):
        c = np.array([sx * cx, sy * cy])
        t = np.linspace(0, np.pi / 2, arc_n + 1) + k * np.pi / 2
        arcs.append(c + r * np.column_stack([np.cos(t), np.sin(t)]) if r > 0 else c[None])
    pts = []
    for k in range(4):
        a, b = arcs[k], arcs[(k + 1) % 4]
        pts.append(a)
        if np.hypot(*(b[0] - a[-1])) > 1e-15:
            s = np.linspace(0, 1, side_n + 1)[1:-1]
            pts.append(a[-1] + s[:, None] * (b[0] - a[-1]))
    p = np.vstack(pts)
    keep = np.ones(len(p), bool)
    keep[1:] = np.hypot(*np.diff(p, axis=0).T) > 1e-15
    p = p[keep]
    return np.vstack([p, p[:1]])


def polygon_mutual(src, tgt, dz, nq=6):
    """Mutual inductance of two plane polygon loops in parallel planes dz apart, H."""
    x, w = np.polynomial.legendre.leggauss(nq)
    a0, a1 = src[:-1], src[1:]
    ls = np.hypot(*(a1 - a0).T)
    us = (a1 - a0) / ls[:, None]
    t0, t1 = tgt[:-1], tgt[1:]
    lt = np.hypot(*(t1 - t0).T)
    ut = (t1 - t0) / lt[:, None]
    p = (t0[:, None, :] + (t1 - t0)[:, None, :] * ((x + 1) / 2)[None, :, None]).reshape(-1, 2)
    wt = (w[None, :] * lt[:, None] / 2).reshape(-1)
    dot = np.repeat(ut @ us.T, nq, axis=0)
    ra = np.sqrt(((p[:, None, :] - a0[None]) ** 2).sum(-1) + dz * dz)
    rb = np.sqrt(((p[:, None, :] - a1[None]) ** 2).sum(-1) + dz * dz)
    s = ra + rb
    return MU0 / (4 * np.pi) * (wt[:, None] * dot * np.log((s + ls) / (s - ls))).sum()


def rect_filament_inductance(w, lc, rc, build, length, turns, nr=3, nz=3, **kw):
    """Inductance of a coil on a rounded-rectangle core, H: filament loops (turn at h
    above the core has corner radius rc + h), polygon mutuals, GMD self terms."""
    dr, dz = build / nr, length / nz
    loops = [outline(w, lc, rc, (i + 0.5) * dr, **kw) for i in range(nr)]
    g = 0.2235 * (dr + dz)
    total = 0.0
    for i in range(nr):
        for j in range(i, nr):
            for k in range(nz):
                d = k * dz if (k or i != j) else g
                pairs = (nz if k == 0 else 2 * (nz - k)) * (1 if i == j else 2)
                total += pairs * polygon_mutual(loops[i], loops[j], d)
    return total * (turns / (nr * nz)) ** 2


# ------------------------------------------------------------ published worked examples


def test_thin_solenoid_worked_example():
    # R = 10 mm, L = 50 mm, N = 500, I = 1 A: 11.668 mT at the centre, 6.161 mT at an
    # end (thin-solenoid formula, worked example in the project's reference notes).
    eps = 1e-7
    z = np.array([0.0, 25e-3])
    b = em.thick_coil_bz_per_a(10e-3 - eps, 10e-3 + eps, 50e-3, 500, z) * 1e3
    assert b[0] == pytest.approx(11.668, abs=0.0006)
    assert b[1] == pytest.approx(6.161, abs=0.0006)
    # the rectangular-core sum on a circular outline (w = l = 2 rc) reduces to the same
    shape = em.rect_shape(20e-3, 20e-3, 2 * eps, 50e-3, 500, corner_radius_m=10e-3 - eps)
    br = em.rect_coil_bz_per_a(shape, z, radial_points=2, axial_points=40) * 1e3
    assert br[0] == pytest.approx(11.668, abs=0.0006)
    assert br[1] == pytest.approx(6.161, abs=0.0006)


def test_thick_solenoid_worked_example():
    # N = 8000, I = 1 mA, r1 = 2 mm, r2 = 10 mm, length 12 mm: 0.6009 mT at the centre
    # (thick-solenoid formula, worked example in the project's reference notes).
    shape = em.round_shape(4e-3, 8e-3, 12e-3, 8000)
    assert em.center_field_t_per_a(shape) * 1e-3 * 1e3 == pytest.approx(0.6009, abs=0.00005)


def test_wheeler_worked_example_and_filament_value():
    # a = 0.5 in, b = 0.5 in, c = 0.25 in, N = 100: Wheeler gives 200.0 uH and a
    # filament integration 200.5 uH (Wheeler, Proc. IRE 16, 1928; worked example and
    # filament value in the project's reference notes).
    a, b, c = 0.5 * INCH, 0.5 * INCH, 0.25 * INCH
    assert em.wheeler_h(a, b, c, 100) * 1e6 == pytest.approx(200.0, abs=0.05)
    ref = filament_inductance(a - c / 2, a + c / 2, b, 100, 8, 16) * 1e6
    assert ref == pytest.approx(200.5, abs=0.1)
    shape = em.round_shape(2 * (a - c / 2), c, b, 100)
    assert em.air_core_inductance_h(shape) * 1e6 == pytest.approx(200.0, abs=0.05)


def test_brooks_coil():
    # Brooks coil: square section c x c, inner radius c, mean radius a = 1.5 c;
    # L = 1.6994e-6 a N² (constant from memory; confirmed here by a filament integration)
    c, n = 10e-3, 100
    a = 1.5 * c
    ref = filament_inductance(c, 2 * c, c, n, 16, 16)
    assert em.brooks_h(a, n) == pytest.approx(ref, rel=1e-3)
    # Wheeler's formula reads 0.7 % low on the Brooks proportions (spread 1.56)
    assert em.wheeler_h(a, c, c, n) / ref - 1 == pytest.approx(-0.0071, abs=0.001)


def test_rectangular_loop_closed_form():
    # Biot-Savart closed form of a rectangular loop (half sides p, q) on its axis:
    # B/I = mu0 p q / (pi sqrt(p² + q² + z²)) (1/(p² + z²) + 1/(q² + z²))
    p, q = 15e-3, 4e-3
    z = np.array([0.0, 2e-3, 10e-3, 50e-3])
    want = MU0 * p * q / (np.pi * np.sqrt(p * p + q * q + z * z)) * (
        1 / (p * p + z * z) + 1 / (q * q + z * z))
    got = em.polygon_bz_per_a(em.rounded_rect_outline(2 * p, 2 * q, 0.0, 0.0), z)
    np.testing.assert_allclose(got, want, rtol=1e-12)


# ------------------------------------------------------------------- field vs magpylib


def test_round_coil_field_matches_magpylib_turns():
    magpylib = pytest.importorskip("magpylib")
    # 10 layers of 20 turns at 0.5 mm pitch on a 10 mm core: build 5 mm, length 10 mm
    pitch, r1, per_layer, layers, amps = 0.5e-3, 5e-3, 20, 10, 1.0
    coil = magpylib.Collection()
    for i in range(layers):
        for j in range(per_layer):
            coil.add(magpylib.current.Circle(
                current=amps, diameter=2 * (r1 + (i + 0.5) * pitch),
                position=(0, 0, -per_layer * pitch / 2 + (j + 0.5) * pitch)))
    shape = em.round_shape(2 * r1, layers * pitch, per_layer * pitch, layers * per_layer)
    z = np.array([0.0, shape.length_m / 2, shape.length_m / 2 + 3e-3,
                  shape.length_m / 2 + 10e-3])
    ref = coil.getB(np.column_stack([0 * z, 0 * z, z]))[:, 2]
    got = em.axial_bz_per_a(shape, z) * amps
    # discrete turns against uniform current density: measured within 0.02 %
    np.testing.assert_allclose(got, ref, rtol=3e-4)
    assert em.field_beyond_face_t_per_a(shape, 3e-3) == pytest.approx(ref[2], rel=3e-4)


@pytest.mark.parametrize("rc", [0.0, 1.5e-3])
def test_rect_coil_field_matches_magpylib_turns(rc):
    magpylib = pytest.importorskip("magpylib")
    # 8 layers of 12 turns at 0.4 mm pitch on a 20 x 6 mm core
    pitch, w, lc, per_layer, layers = 0.4e-3, 20e-3, 6e-3, 12, 8
    length = per_layer * pitch
    coil = magpylib.Collection()
    turns = []
    for i in range(layers):
        poly = outline(w, lc, rc, (i + 0.5) * pitch, arc_n=48, side_n=1)
        for j in range(per_layer):
            zt = -length / 2 + (j + 0.5) * pitch
            turns.append((poly, zt))
            coil.add(magpylib.current.Polyline(
                current=1.0, vertices=np.column_stack([poly, np.full(len(poly), zt)])))
    shape = em.rect_shape(w, lc, layers * pitch, length, layers * per_layer,
                          corner_radius_m=rc)
    z = np.array([0.0, length / 2, length / 2 + 3e-3, length / 2 + 10e-3])
    ref = coil.getB(np.column_stack([0 * z, 0 * z, z]))[:, 2]
    # the segment closed form on the very same turns agrees with magpylib exactly
    same = sum(em.polygon_bz_per_a(poly, z - zt) for poly, zt in turns)
    np.testing.assert_allclose(same, ref, rtol=1e-8)
    # uniform current density (the model) against these 96 discrete turns: measured
    # 0.034 % (sharp core) and 0.074 % (rounded) at most; fewer, coarser turns differ more
    np.testing.assert_allclose(em.rect_coil_bz_per_a(shape, z), ref, rtol=1e-3)


def test_rect_sum_reduces_to_thick_closed_form_on_a_circle():
    shape = em.rect_shape(20e-3, 20e-3, 8e-3, 12e-3, 8000, corner_radius_m=10e-3)
    z = np.array([0.0, 6e-3, 10e-3, 30e-3])
    want = em.thick_coil_bz_per_a(10e-3, 18e-3, 12e-3, 8000, z)
    np.testing.assert_allclose(em.rect_coil_bz_per_a(shape, z), want, rtol=1e-6)


# ---------------------------------------------------- inductance error across proportions

# Bands measured against the filament sum extrapolated from 8 and 16 cells (percent), by
# the spread of Wheeler's terms max/min(6a, 9b, 10c); 0.1 <= b/a <= 10,
# 0.05 <= c/a <= 1.9, 11770 proportions on a log grid plus 6751 on the band edges
# s = 1.5, 2, 3, 5 (measured -1.41..+0.83, -2.26..+1.79, -5.46..+3.56, -8.14..+8.32,
# -10.98..+19.68; an earlier, coarser run reached +4.56 at s <= 3 and +9.47 at s <= 5),
# rounded outward by at least 0.05. The first measurement missed the edges (the worst
# low reading of each band is its corner 9b = 6a, 10c = s 6a) and gave -1.4, -2.3 and
# -5.3, too tight: see test_wheeler_band_edge_corners.
MEASURED_WHEELER_BANDS = ((1.5, (-1.5, 0.9)), (2.0, (-2.4, 1.9)), (3.0, (-5.6, 4.7)),
                          (5.0, (-8.3, 9.6)), (math.inf, (-12.0, 21.5)))
# Rectangular cores against rect_filament_inductance, 140 coils, aspect 1..24
# (measured +0.48..+8.57 up to spread 3, -3.87..+8.57 up to 7.6); beyond spread 5 the
# round coil's widest band.
MEASURED_RECT_BANDS = ((3.0, (0.0, 9.0)), (5.0, (-4.5, 9.0)), (math.inf, (-12.0, 21.5)))


def band_for(bands, spread):
    # a spread within 1e-9 of a limit is on it (the module's rule), so a coil exactly on
    # an edge gets one band however the two sides rounded its spread
    return next(band for limit, band in bands if spread <= limit * (1 + 1e-9))


def converged_filament(a, b, c, n):
    """The filament reference extrapolated to fine cells: grids of 6 and 12 cells across
    the shorter side, L12 + (L12 - L6) / 3 (the sum converges as 1/cells²)."""
    coarse = filament_inductance(a - c / 2, a + c / 2, b, n, *grid_for(c, b, n=6))
    fine = filament_inductance(a - c / 2, a + c / 2, b, n, *grid_for(c, b, n=12))
    return fine + (fine - coarse) / 3


def test_documented_bands_are_the_measured_ones():
    assert em.WHEELER_BANDS_PCT == MEASURED_WHEELER_BANDS
    assert em.RECT_BANDS_PCT == MEASURED_RECT_BANDS


@pytest.mark.parametrize("b_over_a", [0.1, 0.3, 0.67, 1.5, 4.0, 10.0])
@pytest.mark.parametrize("c_over_a", [0.05, 0.22, 0.6, 1.2, 1.9])
def test_wheeler_error_band_across_proportions(b_over_a, c_over_a):
    a, n = 10e-3, 100
    b, c = b_over_a * a, c_over_a * a
    ref = converged_filament(a, b, c, n)
    err = 100 * (em.wheeler_h(a, b, c, n) / ref - 1)
    lo, hi = band_for(MEASURED_WHEELER_BANDS, em.wheeler_spread(a, b, c))
    assert lo <= err <= hi
    shape = em.round_shape(2 * (a - c / 2), c, b, n)
    assert em.air_core_band_pct(shape) == (lo, hi)


@pytest.mark.parametrize("spread, measured, old_low", [
    (1.5, -1.414, -1.4), (2.0, -2.265, -2.3), (3.0, -5.457, -5.3),
])
def test_wheeler_band_edge_corners(spread, measured, old_low):
    # the worst low reading of each band: 9b = 6a and 10c = spread * 6a (the band's edge)
    a, n = 10e-3, 100
    b, c = 6 * a / 9, spread * 6 * a / 10
    err = 100 * (em.wheeler_h(a, b, c, n) / converged_filament(a, b, c, n) - 1)
    assert err == pytest.approx(measured, abs=0.02)  # the module's 8/16-cell measurement
    lo, hi = band_for(MEASURED_WHEELER_BANDS, em.wheeler_spread(a, b, c))
    assert lo <= err <= hi
    # the first bands (rounded from a sweep that missed the edges) did not hold here,
    # except at s = 2 where -2.3 held by 0.04 %
    assert (err < old_low) == (spread != 2.0)


def test_band_on_an_edge_does_not_depend_on_rounding():
    below, above = np.nextafter(2.0, 0.0), np.nextafter(2.0, 3.0)
    assert em.wheeler_band_pct(below) == em.wheeler_band_pct(2.0) == em.wheeler_band_pct(above)
    assert em.wheeler_band_pct(2.0 * (1 + 1e-6)) == band_for(MEASURED_WHEELER_BANDS, 3.0)
    # the 30-point sweep's b/a = 0.67, c/a = 1.2 sits exactly on s = 2: one ulp either way
    # in the mean radius gives the same band and the same method
    for a in (np.nextafter(10e-3, 0.0), 10e-3, np.nextafter(10e-3, 1.0)):
        b, c = 0.67 * 10e-3, 1.2 * 10e-3
        shape = em.round_shape(2 * (a - c / 2), c, b, 100)
        assert em.air_core_band_pct(shape) == band_for(MEASURED_WHEELER_BANDS, 2.0)
        assert em.air_core_estimate(shape)[1] == "wheeler"


def test_module_elliptic_and_filament_sum_match_scipy():
    from scipy.special import ellipe, ellipk

    m = np.array([0.0, 1e-6, 0.3, 0.9, 0.999, 1 - 1e-9])
    k, e = em._ellip_ke(m)
    np.testing.assert_allclose(k, ellipk(m), rtol=1e-13)
    np.testing.assert_allclose(e, ellipe(m), rtol=1e-13)
    r2, d = np.array([5e-3, 12e-3]), np.array([1e-3, 30e-3])
    np.testing.assert_allclose(em.coaxial_mutual_h(10e-3, r2, d),
                               maxwell_mutual(10e-3, r2, d), rtol=1e-12)
    shape = em.round_shape(12e-3, 3e-3, 30e-3, 600)
    want = filament_inductance(6e-3, 9e-3, 30e-3, 600, 8, 80)  # the same grid
    assert em.filament_inductance_h(shape) == pytest.approx(want, rel=1e-10)


@pytest.mark.parametrize("b_over_a, c_over_a", [
    (10.0, 0.05), (3.0, 0.3), (0.67, 0.6), (0.1, 0.05), (0.2, 1.0), (1.0, 1.9),
])
def test_filament_sum_converged_within_its_band(b_over_a, c_over_a):
    a = 10e-3
    b, c = b_over_a * a, c_over_a * a
    shape = em.round_shape(2 * (a - c / 2), c, b, 100)
    fine = filament_inductance(a - c / 2, a + c / 2, b, 100, *grid_for(c, b, n=16))
    lo, hi = em.FILAMENT_BAND_PCT
    assert lo <= 100 * (em.filament_inductance_h(shape) / fine - 1) <= hi


def test_air_core_estimate_picks_filament_sum_for_long_round_coils():
    # a = 10 mm, b/a = 10, c/a = 0.1: spread 16.7, Wheeler measured 7.4 % low here
    long_coil = em.round_shape(19e-3, 1e-3, 100e-3, 600)
    value, method, band = em.air_core_estimate(long_coil)
    assert method == "filament" and band == em.FILAMENT_BAND_PCT
    ref = filament_inductance(9.5e-3, 10.5e-3, 100e-3, 600, *grid_for(1e-3, 100e-3, n=16))
    assert value == pytest.approx(ref, rel=0.008)
    assert em.air_core_inductance_h(long_coil) / ref - 1 < -0.06
    squat = em.round_shape(2 * 0.375 * INCH, 0.25 * INCH, 0.5 * INCH, 100)  # Wheeler's example
    assert em.air_core_estimate(squat)[1] == "wheeler"


def test_wheeler_within_one_percent_where_terms_are_comparable():
    # Wheeler's own claim, about 1 %, holds where 6a, 9b and 10c are nearly equal
    a, n = 10e-3, 100
    b, c = 6 * a / 9, 6 * a / 10
    ref = filament_inductance(a - c / 2, a + c / 2, b, n, 10, 10)
    assert abs(em.wheeler_h(a, b, c, n) / ref - 1) < 0.01


def test_rect_reference_agrees_with_maxwell_on_circles():
    # the rounded-rectangle reference on a circular outline against Maxwell's formula
    r1, c, b = 8e-3, 4e-3, 6e-3
    poly = rect_filament_inductance(2 * r1, 2 * r1, r1, c, b, 100, arc_n=16)
    assert poly == pytest.approx(filament_inductance(r1, r1 + c, b, 100, 3, 3), rel=2e-3)


@pytest.mark.parametrize("aspect, b_rel, c_rel, rc_rel", [
    (1, 1.0, 1.0, 0.0), (2, 0.5, 0.5, 0.5), (2, 4.0, 0.5, 0.0), (4, 1.0, 1.0, 0.5),
    (4, 0.25, 0.25, 0.0), (8, 2.0, 2.0, 0.0), (8, 3.0, 1.0, 0.5), (12, 0.5, 0.5, 0.0),
    (12, 1.0, 1.0, 0.5), (12, 4.0, 0.5, 0.0), (24, 2.0, 2.0, 1.0), (24, 3.0, 1.0, 0.0),
])
def test_rect_equivalent_error_band(aspect, b_rel, c_rel, rc_rel):
    # core s*aspect x s, corner rc_rel * s/2, winding length and build relative to s
    s, n = 5e-3, 100
    w, lc, rc = s * aspect, s, rc_rel * s / 2
    b, c = b_rel * s, c_rel * s
    ref = rect_filament_inductance(w, lc, rc, c, b, n, *grid_for(c, b, n=3, cap=12))
    shape = em.rect_shape(w, lc, c, b, n, corner_radius_m=rc)
    err = 100 * (em.air_core_inductance_h(shape) / ref - 1)
    lo, hi = em.air_core_band_pct(shape)
    assert lo <= err <= hi


def test_rect_equivalent_beats_equal_area_on_an_elongated_core():
    # a pickup-like bar core 12:1: the equal-area circle reads far low
    s, n = 5e-3, 100
    w, lc, b, c = 12 * s, s, 0.5 * s, 0.5 * s
    ref = rect_filament_inductance(w, lc, 0.0, c, b, n)
    shape = em.rect_shape(w, lc, c, b, n)
    a_area = math.sqrt(float(shape.turn_area_m2(c / 2)) / math.pi)
    assert em.wheeler_h(a_area, b, c, n) / ref - 1 < -0.15  # measured -22 %
    assert abs(em.air_core_inductance_h(shape) / ref - 1) < 0.08  # measured +6.2 %


def test_reference_inductance_scales_by_turns_squared():
    # a measured 2.5 H at 8000 turns on the same bobbin -> 0.625 H at 4000 turns
    assert em.scaled_inductance_h((2.5, 8000), 4000) == pytest.approx(0.625)
    shape = em.rect_shape(60e-3, 5e-3, 3e-3, 10e-3, 6000)
    assert em.inductance_h(shape, (2.5, 8000)) == pytest.approx(2.5 * (6000 / 8000) ** 2)
    assert em.inductance_h(shape) == pytest.approx(em.air_core_inductance_h(shape))
    with pytest.raises(InputError):
        em.scaled_inductance_h((0.0, 8000), 4000)


# ------------------------------------------------------------------- drive and heating

DRIVER = em.round_shape(10e-3, 4e-3, 8e-3, 400)  # invented demo coil
BARE = 0.3e-3


def test_voltage_drive_with_fixed_resistance_is_ohms_law():
    d = em.drive_figures(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_v=2.0,
                         alpha_per_k=None, distance_m=3e-3)
    area = 2 * math.pi * 9e-3 * 8e-3  # outer radius 9 mm, length 8 mm
    assert d.surface_m2 == pytest.approx(area)
    assert d.current_a == pytest.approx(0.25)
    assert d.power_w == pytest.approx(0.5)
    assert d.ampere_turns == pytest.approx(100.0)
    assert d.current_density_a_m2 == pytest.approx(0.25 / (math.pi * BARE**2 / 4))
    assert d.temp_rise_c == pytest.approx(0.5 / (10.0 * area))  # h = 10 W/m²K default
    assert d.field_at_point_t == pytest.approx(
        0.25 * em.field_beyond_face_t_per_a(DRIVER, 3e-3))


@pytest.mark.parametrize("drive", [{"drive_v": 3.0}, {"drive_a": 0.3}])
def test_hot_steady_state_is_self_consistent(drive):
    alpha, r20, amb = 0.00393, 8.0, 25.0  # copper alpha: IEC 60287-1-1 Table 1
    d = em.drive_figures(DRIVER, resistance_ohm=r20, bare_m=BARE, ambient_c=amb, **drive)
    t = amb + d.temp_rise_c
    assert d.resistance_hot_ohm == pytest.approx(r20 * (1 + alpha * (t - 20)))
    assert d.power_w == pytest.approx(d.current_a**2 * d.resistance_hot_ohm)
    assert d.temp_rise_c == pytest.approx(d.power_w / (10.0 * d.surface_m2))


def test_resistance_given_hot_is_referred_to_its_temperature():
    hot = em.drive_figures(DRIVER, resistance_ohm=8.0 * (1 + 0.00393 * 60), bare_m=BARE,
                           drive_v=3.0, resistance_temp_c=80.0)
    cold = em.drive_figures(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_v=3.0)
    assert hot.current_a == pytest.approx(cold.current_a)


def test_warnings_rise_class_and_low_resistance():
    d = em.drive_figures(DRIVER, resistance_ohm=3.0, bare_m=BARE, drive_v=6.0,
                         class_temp_c=130.0)  # 3 ohm at 20 C, 3.06 ohm at 25 C ambient
    text = " ".join(d.warnings)
    assert d.temp_rise_c > 60 and "60 C" in text
    assert "thermal class 130 C" in text
    assert "minimum load" in text
    mild = em.drive_figures(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_v=0.5,
                            class_temp_c=130.0)
    assert mild.warnings == []


def test_current_drive_runaway_has_no_steady_state():
    d = em.drive_figures(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_a=3.0)
    assert math.isinf(d.temp_rise_c)
    assert any("no steady temperature" in w for w in d.warnings)
    out = em.coil_em(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_a=3.0)
    assert out["temp_rise_c"] is None and out["power_w"] is None


@pytest.mark.parametrize("drive", [{}, {"drive_v": 1.0, "drive_a": 1.0}])
def test_drive_needs_exactly_one_of_voltage_and_current(drive):
    with pytest.raises(InputError):
        em.drive_figures(DRIVER, resistance_ohm=8.0, bare_m=BARE, **drive)


def test_bad_geometry_is_an_input_error():
    with pytest.raises(InputError):
        em.round_shape(-1e-3, 1e-3, 1e-3, 10)
    with pytest.raises(InputError):
        em.rect_shape(10e-3, 4e-3, 1e-3, 5e-3, 10, corner_radius_m=3e-3)
    with pytest.raises(InputError):
        em.make_shape("oval", build_m=1e-3, length_m=1e-3, turns=10)
    with pytest.raises(InputError):
        em.field_beyond_face_t_per_a(DRIVER, -1e-3)


def test_make_shape_plain_floats():
    r = em.make_shape("round", diameter_m=10e-3, build_m=4e-3, length_m=8e-3, turns=400)
    assert r == DRIVER
    q = em.make_shape("rect", width_m=20e-3, core_length_m=6e-3, corner_radius_m=1e-3,
                      build_m=2e-3, length_m=5e-3, turns=300)
    assert q.core == "rect" and q.turn_perimeter_m(0.0) == pytest.approx(
        2 * (20e-3 + 6e-3) - 8e-3 + 2 * math.pi * 1e-3)


# ------------------------------------------------------------------ the plan adapter


def fake_plan(core, reference=None):
    """A stand-in shaped like the planner's Plan contract (only the fields em reads)."""
    bobbin = SimpleNamespace(core=core, usable_width_m=8e-3, reference_inductance=reference)
    wire = SimpleNamespace(bare_m=BARE, material=SimpleNamespace(alpha_per_k=0.00393))
    return SimpleNamespace(bobbin=bobbin, wire=wire, turns=400, build_height_m=4e-3,
                           resistance_ohm=8.0, coil=SimpleNamespace(source=None))


def test_em_figures_keys_and_values_from_a_plan():
    plan = fake_plan(SimpleNamespace(diameter_m=10e-3))
    out = em.em_figures(plan)
    assert set(out) >= {"inductance_uH", "center_field_mT_per_A"}
    assert "current_a" not in out
    assert out["center_field_mT_per_A"] == pytest.approx(
        em.center_field_t_per_a(DRIVER) * 1e3)
    driven = em.em_figures(plan, drive_v=2.0, distance_m=3e-3, class_temp_c=155.0)
    want = em.coil_em(DRIVER, resistance_ohm=8.0, bare_m=BARE, drive_v=2.0,
                      distance_m=3e-3, class_temp_c=155.0)
    assert driven == want
    for key in ("current_a", "ampere_turns", "power_w", "temp_rise_c", "field_at_point_mT",
                "current_density_a_mm2", "warnings"):
        assert key in driven
    rect = em.em_figures(fake_plan(SimpleNamespace(width_m=20e-3, length_m=6e-3,
                                                   corner_radius_m=1e-3), (0.01, 200)))
    assert rect["inductance_uH"] == pytest.approx(1e4 * 4)
    assert rect["inductance_source"] == "reference"


def test_em_figures_on_a_real_plan():
    # the shipped 8 ohm driver profile (invented demo data) through the real planner
    from winder.planner import make_plan
    from winder.profile import examples_dir, load_coil

    plan = make_plan(load_coil(examples_dir() / "coils" / "driver-8ohm.yaml"))
    shape = em.shape_of_plan(plan)
    assert shape.core == plan.bobbin.core.shape
    assert shape.turns == plan.turns and shape.build_m == pytest.approx(plan.build_height_m)
    # the planner's turn length at mid-build is the em turn perimeter there
    h = plan.build_height_m / 2
    assert float(shape.turn_perimeter_m(h)) == pytest.approx(
        float(plan.bobbin.turn_length_m(h)), rel=1e-9)
    out = em.em_figures(plan, drive_v=2.0, distance_m=3e-3, class_temp_c=155.0)
    assert out["current_a"] == pytest.approx(2.0 / out["resistance_hot_ohm"])
    assert out["ampere_turns"] == pytest.approx(out["current_a"] * plan.turns)
    assert out["field_at_point_mT"] == pytest.approx(
        out["field_at_point_mT_per_A"] * out["current_a"])
    assert out["inductance_uH"] > 0 and out["center_field_mT_per_A"] > 0
