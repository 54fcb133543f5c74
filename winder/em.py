"""Electromagnetic figures of a wound coil: inductance, on-axis field, drive and heating.

Pure layer-1 physics: SI floats and numpy in, SI floats out (metres, turns, henry,
tesla per ampere, volts, amperes, watts, degrees Celsius). Nothing here reads files.

Geometry
    A coil is a :class:`CoilShape`: a round core (diameter) or a rectangular core
    (width x length with a corner radius), a winding of ``build_m`` radial depth over
    the core and ``length_m`` along the axis, and ``turns`` turns. A turn whose wire
    centre sits ``h`` above a rectangular core is a rounded rectangle with the core's
    straight sides and corner radius ``corner_radius_m + h`` (the wire wraps round the
    corners), so even a sharp-cornered core gives rounded outer layers.

Inductance (air core)
    *Wheeler's multilayer formula* (H. A. Wheeler, "Simple inductance formulas for radio
    coils", Proc. IRE 16, 1928), in inches and microhenry
    ``L = 0.8 a² N² / (6a + 9b + 10c)``, a = mean radius, b = length, c = depth.
    Wheeler claims about 1 % when the three denominator terms are comparable. Measured
    here against Maxwell's coaxial-loop mutual inductance summed over a filament grid
    of square cells (:func:`filament_inductance_h` at 8 and 16 cells across the shorter
    side, extrapolated with its 1/n² convergence, L16 + (L16 - L8) / 3; 8 and 16 cells
    differ by at most 0.53 %, and the extrapolation from 16 and 32 cells agrees to
    0.003 % at the s = 2 corner), over 0.1 <= b/a <= 10, 0.05 <= c/a <= 1.9: a log
    grid of 11770 proportions plus 6751 on the band edges s = 1.5, 2, 3, 5 (the error grows with the
    spread, so each band's extremes sit on its edge; the worst low reading of every
    edge is at 9b = 6a, 10c = s 6a). tests/test_em.py re-checks 30 proportions and the
    edge corners with an independent scipy implementation. The error by the spread
    s = max/min of (6a, 9b, 10c)::

        s <= 1.5   -1.41 % .. +0.83 %     s <= 3     -5.46 % .. +3.56 %
        s <= 2     -2.26 % .. +1.79 %     s <= 5     -8.14 % .. +8.32 %
        whole range: -11.0 % (long thin coils, b/a = 10) .. +19.7 % (long full
        coils, c/a near 2: almost no core)

    (An earlier measurement on the log grid alone against the 8-cell sum read
    -1.29 / -2.14 / -5.15 at s <= 1.5 / 2 / 3: it missed the edge corners, and the
    bands rounded from it were too tight there; re-measured as above.)

    So on round cores :func:`air_core_estimate` uses Wheeler where s <= 2 and the
    filament sum itself (error under 1 %, :data:`FILAMENT_BAND_PCT`) elsewhere.
    :data:`WHEELER_BANDS_PCT` holds these bands rounded outward (at least 0.05 %
    beyond the measured extremes), and :func:`air_core_band_pct` picks the one for a
    coil; a spread within 1e-9 of a band's limit counts as on it, so a coil exactly on
    an edge gets the same band however its spread was rounded.

    *Rectangular cores* go through an equivalent round coil for the mean turn: Wheeler's
    a² is the turn's enclosed area over pi (a long coil's inductance goes as its area)
    and the a of the 6a end term is 2 A / P, twice the area over the perimeter (the
    radius for a circle; for an elongated turn it follows the short side, which sets
    the end field). Both are the radius for a circle, so round outlines give Wheeler's
    formula exactly. Measured against a numerical reference (rounded-rectangle filament
    loops, near-square cells, the closed-form vector potential of each straight segment
    integrated along the others; it agrees with Maxwell's formula on circles to 0.1 %)
    over 140 coils: core aspect 1..24, sharp, rounded and full-round (blade) ends,
    winding length and build 0.25..4 core short sides (spread s up to 7.6)::

        this equivalent        s <= 3: +0.5 % .. +8.6 %    all: -3.9 % .. +8.6 %
        (on the first 100, aspect 1..12, compared with:)
        equal-area radius      -31.5 % .. +5.8 %  (elongated cores read far low)
        equal-perimeter radius -3.3 % .. +148 %
        their geometric mean   -3.6 % .. +53 %

    Elongated cores read high: +2.8 % .. +6.6 % at aspect 8, +4.7 % .. +8.6 % at
    16..24. :data:`RECT_BANDS_PCT` holds the bands; beyond s = 5 it falls back to
    Wheeler's widest round-coil band, the honest bound there. (A filament sum for
    rectangular turns needs the segment mutuals of the tests' reference, about
    0.1-0.5 s a coil: left for later.)

    A core of steel or magnets changes everything: when the bobbin records a measured
    inductance of an earlier coil (henry, turns) on the same bobbin and core,
    :func:`scaled_inductance_h` scales it by turns squared (exact for the same winding
    cross-section; a fuller or emptier window changes the geometry factor, so treat it
    as an estimate within roughly the change in mean radius).

Field on the axis
    Round cores: the closed form of a thick coil of uniform current density over
    r1..r2 and length L, with signed distances to both ends (:func:`thick_coil_bz_per_a`).
    Rectangular cores: a Gauss-Legendre sum over the winding cross-section of
    rounded-rectangle loops, each loop's on-axis field summed in closed form over its
    straight segments (Biot-Savart of a finite straight segment; arcs are split into
    short chords) (:func:`rect_coil_bz_per_a`). Both agree with magpylib summing the
    coil's turns (tests/test_em.py).

Drive and heating
    :func:`drive_figures` takes a drive voltage or current and the coil's resistance
    with the temperature it was measured at, solves the steady hot state with the
    linear resistance model R(T) = R20 (1 + alpha (T - 20 C)), and reports current,
    ampere-turns, power, current density over the bare copper area, the field at a
    point, and the temperature rise ``P / (h A)`` over the outer lateral surface
    (the flanges cover the end faces; leaving them out errs on the hot side).
    ``h`` = 10 W/m²K for still air is common practice, no source. It warns above a
    60 C rise (common practice, no source), above the insulation's thermal class when
    one is given, when no steady state exists (current drive runaway), and when a
    voltage drive sees less than 4 ohm at ambient, as at switch-on (common amplifier
    minimum load, common practice, no source).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from winder.errors import InputError

MU0 = 1.25663706212e-6  # vacuum permeability, H/m (CODATA 2018)
INCH = 0.0254  # m
H_CONVECTION_W_M2K = 10.0  # still-air natural convection, common practice, no source
RISE_LIMIT_C = 60.0  # warning threshold for the steady rise, common practice, no source
AMBIENT_C = 25.0  # default ambient, degC
MIN_AMP_LOAD_OHM = 4.0  # lowest common audio-amplifier load, common practice, no source
COPPER_ALPHA_PER_K = 0.00393  # IEC 60287-1-1 Table 1

CAUTIONS = (
    "Hot coils: a driven coil heats up and can burn; check its temperature before "
    "leaving it driven.",
    "Insulation thermal class: keep the hottest spot of the winding below the wire's "
    "thermal class; the figures here are an average estimate, the inside runs hotter.",
    "Amplifiers: a low-resistance coil can overload an amplifier; follow its "
    "documentation for minimum load and protection.",
    "Defer to the amplifier's documentation and local codes.",
)


# ---------------------------------------------------------------------------- geometry


@dataclass(frozen=True)
class CoilShape:
    """The winding's geometry, SI.

    ``core`` is ``"round"`` or ``"rect"``. For a round core ``core_width_m`` and
    ``core_length_m`` are both the diameter and ``corner_radius_m`` is half of it.
    ``build_m`` is the radial depth of the winding above the core, ``length_m`` its
    length along the axis (the wound part of the window), ``turns`` the turn count.
    """

    core: str
    core_width_m: float
    core_length_m: float
    corner_radius_m: float
    build_m: float
    length_m: float
    turns: float

    @property
    def inner_radius_m(self) -> float:
        """Round core: the winding's inner radius r1, m."""
        return self.core_width_m / 2.0

    @property
    def outer_radius_m(self) -> float:
        """Round core: the winding's outer radius r2, m."""
        return self.core_width_m / 2.0 + self.build_m

    def turn_perimeter_m(self, h: ArrayLike) -> NDArray[np.float64]:
        """Length of a turn whose wire centre is ``h`` m above the core, m."""
        return rounded_rect_perimeter_m(self.core_width_m, self.core_length_m,
                                        self.corner_radius_m, h)

    def turn_area_m2(self, h: ArrayLike) -> NDArray[np.float64]:
        """Area enclosed by a turn ``h`` m above the core, m²."""
        return rounded_rect_area_m2(self.core_width_m, self.core_length_m,
                                    self.corner_radius_m, h)


def _positive(value: float, key: str, where: str | None) -> float:
    v = float(value)
    if not math.isfinite(v) or v <= 0.0:
        raise InputError(f"must be a positive finite number, got {value!r}", where=where, key=key)
    return v


def round_shape(diameter_m: float, build_m: float, length_m: float, turns: float,
                *, where: str | None = None) -> CoilShape:
    """A coil on a round core of ``diameter_m``; build, length in m; turns."""
    d = _positive(diameter_m, "diameter", where)
    return CoilShape("round", d, d, d / 2.0, _positive(build_m, "build", where),
                     _positive(length_m, "length", where), _positive(turns, "turns", where))


def rect_shape(width_m: float, length_core_m: float, build_m: float, length_m: float,
               turns: float, *, corner_radius_m: float = 0.0,
               where: str | None = None) -> CoilShape:
    """A coil on a rectangular core ``width_m`` x ``length_core_m`` (m) with corners of
    ``corner_radius_m``; build and winding length (along the axis) in m; turns."""
    w = _positive(width_m, "width", where)
    lc = _positive(length_core_m, "length", where)
    rc = float(corner_radius_m)
    if not math.isfinite(rc) or rc < 0.0 or rc > min(w, lc) / 2.0 + 1e-15:
        raise InputError(f"corner radius must be between 0 and half the shorter side, "
                         f"got {corner_radius_m!r} m", where=where, key="corner_radius")
    return CoilShape("rect", w, lc, min(rc, min(w, lc) / 2.0),
                     _positive(build_m, "build", where), _positive(length_m, "length", where),
                     _positive(turns, "turns", where))


def make_shape(core: str, *, build_m: float, length_m: float, turns: float,
               diameter_m: float | None = None, width_m: float | None = None,
               core_length_m: float | None = None, corner_radius_m: float = 0.0,
               where: str | None = None) -> CoilShape:
    """Plain-float entry: ``core`` ``"round"`` (give ``diameter_m``) or ``"rect"`` (give
    ``width_m``, ``core_length_m`` and optionally ``corner_radius_m``); m and turns."""
    if core == "round":
        if diameter_m is None:
            raise InputError("a round core needs a diameter", where=where, key="diameter")
        return round_shape(diameter_m, build_m, length_m, turns, where=where)
    if core == "rect":
        if width_m is None or core_length_m is None:
            raise InputError("a rectangular core needs a width and a length", where=where,
                             key="width" if width_m is None else "length")
        return rect_shape(width_m, core_length_m, build_m, length_m, turns,
                          corner_radius_m=corner_radius_m, where=where)
    raise InputError(f"core must be 'round' or 'rect', got {core!r}", where=where, key="core")


def rounded_rect_perimeter_m(width_m: float, length_m: float, corner_radius_m: float,
                             h: ArrayLike) -> NDArray[np.float64]:
    """Perimeter of the core outline grown outward by ``h`` (m): straight sides of the
    core plus a corner radius ``corner_radius_m + h``, m."""
    r = corner_radius_m + np.asarray(h, dtype=float)
    return 2.0 * (width_m + length_m - 4.0 * corner_radius_m) + 2.0 * np.pi * r


def rounded_rect_area_m2(width_m: float, length_m: float, corner_radius_m: float,
                         h: ArrayLike) -> NDArray[np.float64]:
    """Area inside the core outline grown outward by ``h`` (m), m²."""
    r = corner_radius_m + np.asarray(h, dtype=float)
    sx, sy = width_m - 2.0 * corner_radius_m, length_m - 2.0 * corner_radius_m
    return (sx + 2.0 * r) * (sy + 2.0 * r) - (4.0 - np.pi) * r * r


# -------------------------------------------------------------------------- inductance


def wheeler_h(mean_radius_m: ArrayLike, length_m: ArrayLike, depth_m: ArrayLike,
              turns: ArrayLike, *, end_radius_m: ArrayLike | None = None) -> NDArray[np.float64]:
    """Wheeler's multilayer air-core inductance, H (vectorised).

    ``L[uH] = 0.8 a² N² / (6a + 9b + 10c)`` with a, b, c in inches; here a, b, c in m.
    About 1 % when 6a, 9b and 10c are comparable (Wheeler 1928); see the module
    docstring and :func:`wheeler_band_pct` for the band measured across proportions.
    ``end_radius_m`` replaces a in the 6a term (the rectangular-core equivalent).
    """
    a = np.asarray(mean_radius_m, dtype=float)
    ae = a if end_radius_m is None else np.asarray(end_radius_m, dtype=float)
    b = np.asarray(length_m, dtype=float)
    c = np.asarray(depth_m, dtype=float)
    n = np.asarray(turns, dtype=float)
    return 0.8e-6 / INCH * a * a * n * n / (6.0 * ae + 9.0 * b + 10.0 * c)


def wheeler_spread(mean_radius_m: float, length_m: float, depth_m: float) -> float:
    """Largest over smallest of Wheeler's denominator terms 6a, 9b, 10c (inf for a
    zero term): 1 is the formula's sweet spot, the error grows with the spread."""
    t = (6.0 * mean_radius_m, 9.0 * length_m, 10.0 * depth_m)
    return max(t) / min(t) if min(t) > 0.0 else math.inf


# Measured error of wheeler_h against the extrapolated filament reference (module
# docstring), percent, by the spread of the denominator terms, over 0.1 <= b/a <= 10 and
# 0.05 <= c/a <= 1.9, band edges included, rounded outward.
WHEELER_BANDS_PCT = ((1.5, (-1.5, 0.9)), (2.0, (-2.4, 1.9)), (3.0, (-5.6, 4.7)),
                     (5.0, (-8.3, 9.6)), (math.inf, (-12.0, 21.5)))
SPREAD_TIE_REL = 1e-9  # a spread this close to a band limit (relative) is on the limit
# The same for rectangular cores through the equivalent below, aspect ratio up to 12.
# Measured up to a spread of 7.6, aspect up to 24; beyond 5 the round coil's widest band.
RECT_BANDS_PCT = ((3.0, (0.0, 9.0)), (5.0, (-4.5, 9.0)), (math.inf, (-12.0, 21.5)))


def wheeler_band_pct(spread: float, core: str = "round") -> tuple[float, float]:
    """The measured error band (low, high) in percent of the air-core estimate for a
    coil whose Wheeler terms have ``spread`` (:func:`wheeler_spread`); ``core``
    ``"round"`` or ``"rect"``. Outside the measured proportions the widest band is
    returned and may not hold."""
    bands = WHEELER_BANDS_PCT if core == "round" else RECT_BANDS_PCT
    for limit, band in bands:
        if spread <= limit * (1.0 + SPREAD_TIE_REL):
            return band
    return bands[-1][1]


def brooks_h(mean_radius_m: ArrayLike, turns: ArrayLike) -> NDArray[np.float64]:
    """Inductance of a Brooks coil (square section c x c, mean radius a = 1.5 c), H:
    ``1.6994e-6 a N²`` with a in m (the constant is from memory; a filament
    integration converges to it, see tests/test_em.py)."""
    a = np.asarray(mean_radius_m, dtype=float)
    n = np.asarray(turns, dtype=float)
    return 1.6994e-6 * a * n * n


def equivalent_radii_m(shape: CoilShape, h: ArrayLike) -> tuple[NDArray[np.float64],
                                                                  NDArray[np.float64]]:
    """The round coil standing in for the turn ``h`` m above the core: (area radius,
    end radius), m.

    Round core: both are the turn's radius. Rectangular core: the area radius
    sqrt(A / pi) of the turn's enclosed area A (inductance of a long coil goes as the
    area, so Wheeler's a² uses it) and the end radius 2 A / P with P the turn's
    perimeter (the radius for a circle; for an elongated turn it follows the short
    side, which sets the end correction, Wheeler's 6a term). Both equal the radius
    for a circle, so a round outline reduces to Wheeler's formula exactly.
    """
    h = np.asarray(h, dtype=float)
    if shape.core == "round":
        r = shape.inner_radius_m + h
        return r, r
    area = shape.turn_area_m2(h)
    return np.sqrt(area / np.pi), 2.0 * area / shape.turn_perimeter_m(h)


def air_core_inductance_h(shape: CoilShape) -> float:
    """Wheeler's estimate for the coil without a magnetic core, H (rectangular cores
    through :func:`equivalent_radii_m` of the mean turn)."""
    a, ae = equivalent_radii_m(shape, shape.build_m / 2.0)
    return float(wheeler_h(a, shape.length_m, shape.build_m, shape.turns, end_radius_m=ae))


def air_core_band_pct(shape: CoilShape) -> tuple[float, float]:
    """Measured error band (low, high) of :func:`air_core_inductance_h`, percent."""
    _, ae = equivalent_radii_m(shape, shape.build_m / 2.0)
    return wheeler_band_pct(wheeler_spread(float(ae), shape.length_m, shape.build_m),
                            shape.core)


def scaled_inductance_h(reference: tuple[float, float], turns: ArrayLike) -> NDArray[np.float64]:
    """Scale a measured inductance ``reference = (henry, turns)`` of an earlier coil on
    the same bobbin and core to ``turns`` by turns squared, H."""
    l_ref, n_ref = float(reference[0]), float(reference[1])
    if not (math.isfinite(l_ref) and l_ref > 0 and math.isfinite(n_ref) and n_ref > 0):
        raise InputError(f"reference inductance needs positive henry and turns, got "
                         f"{reference!r}", key="reference_inductance")
    n = np.asarray(turns, dtype=float)
    return l_ref * (n / n_ref) ** 2


def _ellip_ke(m: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Complete elliptic integrals K(m), E(m) (parameter m = k², 0 <= m < 1) by the
    arithmetic-geometric mean; converged to double precision in a few steps."""
    a = np.ones_like(m)
    b = np.sqrt(1.0 - m)
    c2_sum = 0.5 * m  # sum of 2^(n-1) c_n², c_0² = m
    scale = 0.5
    for _ in range(12):
        c = 0.5 * (a - b)
        a, b = 0.5 * (a + b), np.sqrt(a * b)
        scale *= 2.0
        c2_sum = c2_sum + scale * c * c
    k = np.pi / (2.0 * a)
    return k, k * (1.0 - c2_sum)


def coaxial_mutual_h(r1_m: ArrayLike, r2_m: ArrayLike, d_m: ArrayLike) -> NDArray[np.float64]:
    """Maxwell's mutual inductance of two coaxial circular loops of radii r1, r2 a
    distance d apart, H: ``mu0 sqrt(r1 r2) [(2/k - k) K(k) - (2/k) E(k)]``,
    k² = 4 r1 r2 / ((r1 + r2)² + d²) (vectorised)."""
    r1 = np.asarray(r1_m, dtype=float)
    r2 = np.asarray(r2_m, dtype=float)
    d = np.asarray(d_m, dtype=float)
    m = 4.0 * r1 * r2 / ((r1 + r2) ** 2 + d * d)
    k = np.sqrt(m)
    kk, ee = _ellip_ke(m)
    return MU0 * np.sqrt(r1 * r2) * ((2.0 / k - k) * kk - 2.0 / k * ee)


def filament_inductance_h(shape: CoilShape, *, cells: int = 8, max_cells: int = 200) -> float:
    """Air-core inductance of a coil on a round core by a filament sum, H.

    The winding cross-section is cut into near-square cells (``cells`` across the
    shorter side, fewer for very slender sections so that at most ``max_cells`` run
    along the longer; memory goes as nr² nz); each cell is a circular
    filament carrying its share of the turns; mutual terms by Maxwell's formula
    (:func:`coaxial_mutual_h`), self terms ``mu0 R (ln(8R/g) - 2)`` with g the geometric
    mean distance of the cell, 0.2235 (dr + dz) (Maxwell). Mutual terms depend only on
    the two radii and the axial offset, so the cost is nr² nz, not (nr nz)²: long
    thin coils keep square cells. Against a converged grid the default is within
    :data:`FILAMENT_BAND_PCT`; the self terms lose accuracy only when the winding
    nearly reaches the axis (c/a near 2)."""
    if shape.core != "round":
        raise InputError("the filament sum is for round cores", key="core")
    c, b = shape.build_m, shape.length_m
    ratio = max(b / c, c / b)
    # fewer cells across the short side of a very slender section keeps them square
    n_short = max(2, min(cells, int(max_cells / ratio)))
    n_long = min(max_cells, max(n_short, round(n_short * ratio)))
    nr, nz = (n_short, n_long) if c < b else (n_long, n_short)
    dr, dz = c / nr, b / nz
    r = shape.inner_radius_m + (np.arange(nr) + 0.5) * dr
    zi = np.arange(nz) * dz
    # mutual terms depend on the two radii and the axial offset k*dz only:
    # sum over offsets with multiplicity (nz for k = 0, 2 (nz - k) otherwise)
    ri, rj = r[:, None, None], r[None, :, None]
    dd = zi[None, None, :]
    same = (np.arange(nr)[:, None, None] == np.arange(nr)[None, :, None]) & (dd == 0.0)
    g = 0.2235 * (dr + dz)
    m = coaxial_mutual_h(ri, rj, np.where(same, g, dd))  # self entries replaced below
    self_terms = MU0 * r * (np.log(8.0 * r / g) - 2.0)
    m = np.where(same, self_terms[:, None, None] * np.ones_like(m), m)
    mult = np.where(np.arange(nz) == 0, nz, 2 * (nz - np.arange(nz)))
    total = float((m * mult[None, None, :]).sum())
    return total * (shape.turns / (nr * nz)) ** 2


# Filament sum (default grid, 8 cells across the shorter side) against a grid of 16,
# percent, over 0.1 <= b/a <= 10 and 0.05 <= c/a <= 1.9: -0.52 .. +0.01 (-0.10 .. +0.01
# for c/a <= 1); with the 1/n² convergence the true error is about 4/3 of that.
FILAMENT_BAND_PCT = (-0.8, 0.1)


def air_core_estimate(shape: CoilShape) -> tuple[float, str, tuple[float, float]]:
    """The best air-core figure: (henry, method, measured band in percent).

    Wheeler's formula (method ``"wheeler"``) where its terms have a spread of at most
    2 (error within about 2 %) and for rectangular cores; otherwise, on round cores,
    the filament sum (method ``"filament"``), whose error does not depend on the
    proportions."""
    if shape.core == "round":
        a = shape.inner_radius_m + shape.build_m / 2.0
        if wheeler_spread(a, shape.length_m, shape.build_m) > 2.0 * (1.0 + SPREAD_TIE_REL):
            return filament_inductance_h(shape), "filament", FILAMENT_BAND_PCT
    return air_core_inductance_h(shape), "wheeler", air_core_band_pct(shape)


def inductance_h(shape: CoilShape, reference: tuple[float, float] | None = None) -> float:
    """The coil's inductance, H: scaled from ``reference`` (henry, turns) when given
    (it knows the core material), else :func:`air_core_estimate`."""
    if reference is not None:
        return float(scaled_inductance_h(reference, shape.turns))
    return air_core_estimate(shape)[0]


# ------------------------------------------------------------------------------- field


def thick_coil_bz_per_a(r1_m: float, r2_m: float, length_m: float, turns: float,
                        z_m: ArrayLike) -> NDArray[np.float64]:
    """On-axis flux density per ampere of a thick round coil, T/A (vectorised over z).

    Uniform current density over r1..r2 and length L; ``z_m`` is measured from the
    coil's centre along the axis. With signed distances to both ends z1 = z + L/2,
    z2 = z - L/2 and F(u) = u ln[(r2 + sqrt(r2² + u²)) / (r1 + sqrt(r1² + u²))]:
    ``B/I = mu0 N / (2 L (r2 - r1)) [F(z1) - F(z2)]``.
    """
    z = np.asarray(z_m, dtype=float)

    def f(u: NDArray[np.float64]) -> NDArray[np.float64]:
        return u * np.log((r2_m + np.hypot(r2_m, u)) / (r1_m + np.hypot(r1_m, u)))

    k = MU0 * turns / (2.0 * length_m * (r2_m - r1_m))
    return k * (f(z + length_m / 2.0) - f(z - length_m / 2.0))


def rounded_rect_outline(width_m: float, length_m: float, corner_radius_m: float,
                         h: float, arc_segments: int = 12) -> NDArray[np.float64]:
    """Closed counter-clockwise polygon (n+1, 2) of the core outline grown by ``h``,
    m; each corner arc (radius ``corner_radius_m + h``) split into ``arc_segments``
    chords whose vertices sit on the radius that keeps the arc's area (this cancels
    the chords' leading field error). A zero radius gives the corners of a rectangle."""
    r = corner_radius_m + h
    cx = width_m / 2.0 - corner_radius_m
    cy = length_m / 2.0 - corner_radius_m
    if r <= 0.0:
        pts = np.array([[cx, -cy], [cx, cy], [-cx, cy], [-cx, -cy]])
    else:
        t = np.linspace(0.0, np.pi / 2.0, arc_segments + 1)
        # vertices on a slightly larger radius so each chord fan has the arc's area:
        # the polygon's on-axis field then matches the arc's to O(x^4), x = half chord angle
        x = np.pi / 4.0 / arc_segments
        ra = r * math.sqrt(x / (math.sin(x) * math.cos(x)))
        corners = []
        for k, (sx, sy) in enumerate(((1, 1), (-1, 1), (-1, -1), (1, -1))):
            tt = t + k * np.pi / 2.0
            corners.append(np.column_stack([sx * cx + ra * np.cos(tt), sy * cy + ra * np.sin(tt)]))
        pts = np.vstack(corners)
        # drop repeated points where a straight side has zero length
        keep = np.ones(len(pts), dtype=bool)
        keep[1:] = np.hypot(*(np.diff(pts, axis=0).T)) > 1e-15
        pts = pts[keep]
    return np.vstack([pts, pts[:1]])


def polygon_bz_per_a(outline: NDArray[np.float64], z_m: ArrayLike) -> NDArray[np.float64]:
    """On-axis flux density per ampere of a plane polygon loop, T/A.

    ``outline`` (..., n+1, 2): closed counter-clockwise vertex lists in the plane z=0
    round the axis; ``z_m`` axial positions (broadcast against the leading axes).
    Each straight segment contributes the Biot-Savart closed form
    ``mu0/(4 pi) (a x b)_z (|a| + |b|) / (|a| |b| (|a| |b| + a.b))`` with a, b the
    vectors from the field point to the segment's ends.
    """
    p = np.asarray(outline, dtype=float)
    z = np.asarray(z_m, dtype=float)[..., None]
    x1, y1 = p[..., :-1, 0], p[..., :-1, 1]
    x2, y2 = p[..., 1:, 0], p[..., 1:, 1]
    z2 = z * z
    ra = np.sqrt(x1 * x1 + y1 * y1 + z2)
    rb = np.sqrt(x2 * x2 + y2 * y2 + z2)
    cross = x1 * y2 - y1 * x2
    dot = x1 * x2 + y1 * y2 + z2
    terms = cross * (ra + rb) / (ra * rb * (ra * rb + dot))
    return MU0 / (4.0 * np.pi) * terms.sum(axis=-1)


@lru_cache(maxsize=16)
def _gauss_legendre(n: int) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Gauss-Legendre nodes and weights on [-1, 1] (numpy's, cached: about 0.6 ms a call)."""
    return np.polynomial.legendre.leggauss(n)


def _grown_outlines(width_m: float, length_m: float, corner_radius_m: float,
                    hs: NDArray[np.float64], arc_segments: int) -> NDArray[np.float64]:
    """:func:`rounded_rect_outline` for every build height in ``hs`` (all > 0), stacked.

    Each vertex is a corner centre plus the grown corner radius times a fixed unit
    direction, so the outline of every height comes from the outline of one:
    vertices = centres + (r + h)/(r + h0) x (outline(h0) - centres).
    """
    h0 = float(hs[0])
    first = rounded_rect_outline(width_m, length_m, corner_radius_m, h0, arc_segments)
    cx = width_m / 2.0 - corner_radius_m
    cy = length_m / 2.0 - corner_radius_m
    centres = np.column_stack([np.sign(first[:, 0]) * cx, np.sign(first[:, 1]) * cy])
    scale = (corner_radius_m + np.asarray(hs)) / (corner_radius_m + h0)
    return centres[None] + scale[:, None, None] * (first - centres)[None]


def rect_coil_bz_per_a(shape: CoilShape, z_m: ArrayLike, *, radial_points: int = 8,
                       axial_points: int = 12, arc_segments: int = 12) -> NDArray[np.float64]:
    """On-axis flux density per ampere of a coil on a rectangular core, T/A.

    Uniform current density over the winding cross-section (build x length),
    integrated by Gauss-Legendre (``radial_points`` across the build, ``axial_points``
    along the length) of rounded-rectangle loops (:func:`polygon_bz_per_a`). ``z_m``
    from the coil's centre. The integrand is smooth on the axis (the axis lies inside
    the core), so the default grid is converged to well under 0.1 % at and beyond
    the faces.
    """
    z = np.atleast_1d(np.asarray(z_m, dtype=float))
    xr, wr = _gauss_legendre(radial_points)
    xz, wz = _gauss_legendre(axial_points)
    hs = (xr + 1.0) * shape.build_m / 2.0
    zs = xz * shape.length_m / 2.0
    outlines = _grown_outlines(shape.core_width_m, shape.core_length_m,
                               shape.corner_radius_m, hs, arc_segments)  # (nr, n+1, 2)
    dz = z[:, None] - zs[None, :]  # (m, nz)
    b = polygon_bz_per_a(outlines[None, None], dz[:, :, None])  # (m, nz, nr)
    weights = wz[:, None] * wr[None, :] / 4.0  # mean over the cross-section
    out = shape.turns * np.einsum("mzr,zr->m", b, weights)
    return out.reshape(np.shape(z_m)) if np.ndim(z_m) else out[0]


def axial_bz_per_a(shape: CoilShape, z_m: ArrayLike) -> NDArray[np.float64]:
    """On-axis flux density per ampere at ``z_m`` from the coil's centre, T/A."""
    if shape.core == "round":
        return thick_coil_bz_per_a(shape.inner_radius_m, shape.outer_radius_m,
                                   shape.length_m, shape.turns, z_m)
    return rect_coil_bz_per_a(shape, z_m)


def center_field_t_per_a(shape: CoilShape) -> float:
    """Flux density per ampere at the coil's centre, T/A."""
    return float(axial_bz_per_a(shape, 0.0))


def field_beyond_face_t_per_a(shape: CoilShape, distance_m: float) -> float:
    """Flux density per ampere on the axis ``distance_m`` beyond the top face, T/A
    (0 is on the face; the face is the end of the winding, half its length from the
    centre)."""
    d = float(distance_m)
    if not math.isfinite(d) or d < 0.0:
        raise InputError(f"distance beyond the face must be zero or positive, got {distance_m!r}",
                         key="distance")
    return float(axial_bz_per_a(shape, shape.length_m / 2.0 + d))


# ----------------------------------------------------------------------- drive, heating


def outer_surface_m2(shape: CoilShape) -> float:
    """Outer lateral surface of the winding (outer perimeter x length), m²."""
    return float(shape.turn_perimeter_m(shape.build_m)) * shape.length_m


@dataclass(frozen=True)
class DriveFigures:
    """The steady hot state of a driven coil (SI; temperatures degC)."""

    voltage_v: float
    current_a: float
    ampere_turns: float
    power_w: float
    resistance_hot_ohm: float
    current_density_a_m2: float
    temp_rise_c: float            # inf when no steady state exists
    coil_temp_c: float
    surface_m2: float
    h_w_m2k: float
    field_at_point_t: float | None
    warnings: list[str] = field(default_factory=list)


def drive_figures(shape: CoilShape, *, resistance_ohm: float, bare_m: float,
                  drive_v: float | None = None, drive_a: float | None = None,
                  resistance_temp_c: float = 20.0,
                  alpha_per_k: float | None = COPPER_ALPHA_PER_K,
                  distance_m: float | None = None, ambient_c: float = AMBIENT_C,
                  h_w_m2k: float = H_CONVECTION_W_M2K,
                  class_temp_c: float | None = None) -> DriveFigures:
    """Drive the coil with ``drive_v`` volts or ``drive_a`` amperes (exactly one).

    ``resistance_ohm`` is the coil's resistance at ``resistance_temp_c``; with
    ``alpha_per_k`` (default copper) the steady hot state is solved in closed form
    (R follows the coil temperature); ``alpha_per_k=None`` holds the resistance as
    given (pass a measured hot resistance). ``bare_m`` is the bare conductor
    diameter (current density over its area, A/m²). ``distance_m`` beyond the top
    face gives ``field_at_point_t``. ``class_temp_c`` is the insulation's thermal
    class temperature, compared with ambient plus rise.
    """
    if (drive_v is None) == (drive_a is None):
        raise InputError("give a drive voltage or a drive current, not both or neither",
                         key="drive")
    r_ref = _positive(resistance_ohm, "resistance", None)
    bare = _positive(bare_m, "bare diameter", None)
    h_conv = _positive(h_w_m2k, "h", None)
    area = outer_surface_m2(shape)
    ga = h_conv * area  # W/K
    alpha = 0.0 if alpha_per_k is None else float(alpha_per_k)
    # R(T) = r0 + r1 (T - ambient), from R(T) = R_ref (1 + alpha (T - 20)) / base,
    # base = 1 + alpha (t_ref - 20)
    base = 1.0 + alpha * (resistance_temp_c - 20.0)
    r20 = r_ref / base
    r0 = r20 * (1.0 + alpha * (ambient_c - 20.0))
    r1 = r20 * alpha
    warnings: list[str] = []
    if drive_a is not None:
        i = _positive(drive_a, "drive current", None)
        denom = 1.0 - r1 * i * i / ga
        rise = i * i * r0 / ga / denom if denom > 0.0 else math.inf
        if not math.isfinite(rise):
            warnings.append(f"no steady temperature at {i:g} A: the coil heats without limit "
                            f"(resistance rises faster than cooling)")
            r_hot, power, v = math.inf, math.inf, math.inf
        else:
            r_hot = r0 + r1 * rise
            power, v = i * i * r_hot, i * r_hot
    else:
        v = _positive(drive_v, "drive voltage", None)
        q = v * v / ga
        # rise (r0 + r1 rise) = v²/ga  ->  r1 rise² + r0 rise - q = 0
        rise = q / r0 if r1 == 0.0 else (-r0 + math.sqrt(r0 * r0 + 4.0 * r1 * q)) / (2.0 * r1)
        r_hot = r0 + r1 * rise
        i = v / r_hot
        power = v * i
        if r0 < MIN_AMP_LOAD_OHM:  # the amplifier sees the cold coil at switch-on
            warnings.append(f"{r0:.3g} ohm at {ambient_c:g} C is below the "
                            f"{MIN_AMP_LOAD_OHM:g} ohm many amplifiers accept: check the "
                            f"amplifier's minimum load and protection")
    temp = ambient_c + rise
    if math.isfinite(rise) and rise > RISE_LIMIT_C:
        warnings.append(f"steady rise {rise:.0f} C exceeds {RISE_LIMIT_C:.0f} C: the coil "
                        f"gets hot enough to burn")
    if class_temp_c is not None and math.isfinite(temp) and temp > class_temp_c:
        warnings.append(f"coil temperature {temp:.0f} C exceeds the insulation's thermal "
                        f"class {class_temp_c:.0f} C")
    b_point = None
    if distance_m is not None:
        b_point = field_beyond_face_t_per_a(shape, distance_m) * i
    return DriveFigures(
        voltage_v=v, current_a=i, ampere_turns=i * shape.turns, power_w=power,
        resistance_hot_ohm=r_hot, current_density_a_m2=i / (math.pi * bare * bare / 4.0),
        temp_rise_c=rise, coil_temp_c=temp, surface_m2=area, h_w_m2k=h_conv,
        field_at_point_t=b_point, warnings=warnings)


# ----------------------------------------------------------------------------- figures


def coil_em(shape: CoilShape, *, resistance_ohm: float | None = None,
            bare_m: float | None = None, reference_inductance: tuple[float, float] | None = None,
            drive_v: float | None = None, drive_a: float | None = None,
            distance_m: float | None = None, alpha_per_k: float | None = COPPER_ALPHA_PER_K,
            ambient_c: float = AMBIENT_C, class_temp_c: float | None = None) -> dict[str, Any]:
    """The figures as a plain dict (the keys of ``winder plan --json``).

    Always: ``inductance_uH``, ``inductance_source`` ("reference", "air core
    (wheeler)" or "air core (filament)"), ``inductance_band_pct`` (measured [low, high]
    error of the air-core estimate, None for a reference), ``air_core_inductance_uH``
    (the air-core figure even when a reference is used), ``center_field_mT_per_A``;
    with ``distance_m``: ``field_at_point_mT_per_A``;
    with a drive (needs ``resistance_ohm`` at 20 C and ``bare_m``): ``current_a``,
    ``ampere_turns``, ``power_w``, ``temp_rise_c``, ``coil_temp_c``,
    ``resistance_hot_ohm``, ``current_density_a_mm2``, ``field_at_point_mT``
    (None without a distance) and ``warnings``. Power and temperatures are None when
    a current drive has no steady state (the warning says so).
    """
    l_air, method, band = air_core_estimate(shape)
    ref = reference_inductance is not None
    out: dict[str, Any] = {
        "inductance_uH": inductance_h(shape, reference_inductance) * 1e6,
        "inductance_source": "reference" if ref else f"air core ({method})",
        "inductance_band_pct": None if ref else list(band),
        "air_core_inductance_uH": l_air * 1e6,
        "center_field_mT_per_A": center_field_t_per_a(shape) * 1e3,
    }
    if distance_m is not None:
        out["field_at_point_mT_per_A"] = field_beyond_face_t_per_a(shape, distance_m) * 1e3
    if drive_v is None and drive_a is None:
        return out
    if resistance_ohm is None or bare_m is None:
        raise InputError("drive figures need the coil's resistance and the bare wire "
                         "diameter", key="drive")
    d = drive_figures(shape, resistance_ohm=resistance_ohm, bare_m=bare_m, drive_v=drive_v,
                      drive_a=drive_a, alpha_per_k=alpha_per_k, distance_m=distance_m,
                      ambient_c=ambient_c, class_temp_c=class_temp_c)
    def finite(x: float) -> float | None:  # JSON has no infinity: no steady state -> None
        return x if math.isfinite(x) else None

    out.update({
        "current_a": d.current_a,
        "ampere_turns": d.ampere_turns,
        "power_w": finite(d.power_w),
        "temp_rise_c": finite(d.temp_rise_c),
        "coil_temp_c": finite(d.coil_temp_c),
        "resistance_hot_ohm": finite(d.resistance_hot_ohm),
        "current_density_a_mm2": d.current_density_a_m2 * 1e-6,
        "field_at_point_mT": None if d.field_at_point_t is None else d.field_at_point_t * 1e3,
        "warnings": list(d.warnings),
    })
    return out


def shape_of_plan(plan: Any) -> CoilShape:
    """The :class:`CoilShape` of a planner ``Plan`` (its bobbin's core, the planned
    build height, the usable window width and the planned turns)."""
    bobbin = plan.bobbin
    core = bobbin.core
    where = getattr(plan.coil, "source", None) if hasattr(plan, "coil") else None
    build = max(float(plan.build_height_m), 1e-9)
    if hasattr(core, "diameter_m"):
        return round_shape(core.diameter_m, build, bobbin.usable_width_m, plan.turns,
                           where=where)
    return rect_shape(core.width_m, core.length_m, build, bobbin.usable_width_m, plan.turns,
                      corner_radius_m=getattr(core, "corner_radius_m", 0.0), where=where)


def em_figures(plan: Any, *, drive_v: float | None = None, drive_a: float | None = None,
               distance_m: float | None = None, class_temp_c: float | None = None,
               ambient_c: float = AMBIENT_C) -> dict[str, Any]:
    """:func:`coil_em` for a planner ``Plan``: geometry from :func:`shape_of_plan`,
    the 20 C resistance, the wire's bare diameter and temperature coefficient, and
    the bobbin's ``reference_inductance`` when it records one."""
    wire = plan.wire
    material = getattr(wire, "material", None)
    alpha = getattr(material, "alpha_per_k", COPPER_ALPHA_PER_K)
    return coil_em(shape_of_plan(plan), resistance_ohm=plan.resistance_ohm,
                   bare_m=wire.bare_m,
                   reference_inductance=getattr(plan.bobbin, "reference_inductance", None),
                   drive_v=drive_v, drive_a=drive_a, distance_m=distance_m,
                   alpha_per_k=alpha, ambient_c=ambient_c, class_temp_c=class_temp_c)
