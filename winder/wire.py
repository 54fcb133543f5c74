"""Wire catalog: AWG and IEC 60317 metric sizes, insulation build, conductor materials.

All lengths are metres, resistances ohms, temperatures degrees Celsius.

Sizes
-----
* AWG 10 to 56 from the ASTM B258 formula d = 0.127 mm x 92^((36 - n)/39).
  (The ASTM B258 *tables* round to 0.0001 in up to No. 44 and to 0.00001 in
  beyond, so a table value can differ from the formula by about 1 % for fine
  sizes: 42 AWG is 0.002494 in by formula, 0.0025 in in the table. winder uses
  the formula.)
* Metric nominal diameters of the IEC 60317-0-1 series (R20 preferred
  numbers), 0.020 mm to 2.00 mm.

Insulation and overall diameter (OD)
------------------------------------
* Metric grades 1/2/3: maximum OD from the IEC 60317-0-1 table for the sizes
  in :data:`IEC_MAX_OD_MM` (two of them from memory, marked); for other sizes
  the insulation increase (max OD - d) is interpolated log-log between the
  table sizes and extrapolated beyond them with a power law fitted to the
  table (an approximation, not a standard value).
* AWG builds single/heavy/triple: NEMA MW 1000 maximum ODs for 30-44 AWG
  single and heavy **from memory** (not confirmed against the standard); triple
  build as d + 1.5 x (heavy increase) (approximation); other AWG sizes use the
  metric approximation with single ~ grade 1, heavy ~ grade 2, triple ~ grade 3.
* The nominal OD used for stacking is the middle of the minimum and maximum
  increase; where the minimum increase is not tabulated it is taken as 0.6 x
  the maximum increase (the ratio seen in the IEC table, about 0.45-0.77), i.e.
  nominal OD = d + 0.8 x (max OD - d). A measured ``od`` always wins.

Bare diameter tolerance
-----------------------
* Metric: IEC 60317-0-1 tolerances (:func:`iec_tolerance_m`); below 0.071 mm
  the standard specifies resistance limits instead, approximated here as
  +/-0.002 mm.
* AWG: max(0.0001 in, 1 % of d) (from memory of NEMA MW 1000; at 30 AWG this
  gives the +/-2 % resistance band 101.7/103.7/105.8 ohm per 1000 ft of a
  copper magnet wire data sheet).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from winder.errors import InputError

INCH = 0.0254  # m, exact


@dataclass(frozen=True)
class Material:
    """A conductor material: resistivity (ohm m at 20 C), temperature coefficient (1/K), density."""

    name: str
    resistivity_ohm_m: float
    alpha_per_k: float
    density_kg_m3: float


MATERIALS: dict[str, Material] = {
    # IEC 60028: annealed copper 1/58 ohm mm^2/m at 20 C, density 8.89 g/cm^3;
    # alpha 0.00393 /K at 20 C (IEC 60287-1-1 Table 1).
    "copper": Material("copper", 1.0 / 58.0 * 1e-6, 0.00393, 8890.0),
    # IEC 60287-1-1 Table 1: 2.826e-8 ohm m (61 % IACS), 0.00403 /K; density 2.703 g/cm^3
    # (IEC 60889 hard-drawn aluminium, from memory).
    "aluminium": Material("aluminium", 1.0 / 58.0 * 1e-6 / 0.61, 0.00403, 2703.0),
}
MATERIALS["aluminum"] = MATERIALS["aluminium"]

AWG_RANGE = range(10, 57)

# IEC 60317-0-1 nominal conductor diameters (mm), R20 series, 0.020 to 2.00 mm.
METRIC_SIZES_MM = (
    0.020, 0.022, 0.025, 0.028, 0.032, 0.036, 0.040, 0.045, 0.050, 0.056, 0.063, 0.071,
    0.080, 0.090, 0.100, 0.112, 0.125, 0.140, 0.160, 0.180, 0.200, 0.224, 0.250, 0.280,
    0.315, 0.355, 0.400, 0.450, 0.500, 0.560, 0.630, 0.710, 0.800, 0.900, 1.000, 1.120,
    1.250, 1.400, 1.600, 1.800, 2.000,
)

# IEC 60317-0-1 maximum overall diameter (mm) for grade 1 / 2 / 3.
IEC_MAX_OD_MM: dict[float, tuple[float, float, float]] = {
    0.063: (0.076, 0.083, 0.090),   # IEC 60317-0-1
    0.071: (0.084, 0.091, 0.098),   # IEC 60317-0-1
    0.100: (0.117, 0.125, 0.132),   # IEC 60317-0-1
    0.200: (0.226, 0.239, 0.252),   # IEC 60317-0-1 (values from memory)
    0.315: (0.349, 0.367, 0.384),   # IEC 60317-0-1
    0.500: (0.544, 0.566, 0.587),   # IEC 60317-0-1 (values from memory)
}
# IEC 60317-0-1 minimum increase in diameter (mm) for grade 1 / 2 / 3.
IEC_MIN_INCREASE_MM: dict[float, tuple[float, float, float]] = {
    0.063: (0.006, 0.012, 0.017),
    0.071: (0.007, 0.012, 0.018),
    0.100: (0.008, 0.016, 0.023),
    0.315: (0.019, 0.035, 0.053),
}

# NEMA MW 1000 maximum OD (inches), single / heavy build, 30-44 AWG. FROM MEMORY: not
# confirmed against the standard; a measured od in the profile should be preferred.
NEMA_MAX_OD_IN: dict[int, tuple[float, float]] = {
    30: (0.0108, 0.0114), 31: (0.0097, 0.0102), 32: (0.0087, 0.0091), 33: (0.0077, 0.0081),
    34: (0.0069, 0.0072), 35: (0.0062, 0.0064), 36: (0.0055, 0.0058), 37: (0.0049, 0.0052),
    38: (0.0044, 0.0047), 39: (0.0038, 0.0041), 40: (0.0034, 0.0037), 41: (0.0030, 0.0033),
    42: (0.0027, 0.0030), 43: (0.0024, 0.0026), 44: (0.0022, 0.0024),
}

AWG_INSULATIONS = ("single", "heavy", "triple")
METRIC_INSULATIONS = ("grade 1", "grade 2", "grade 3")
_AWG_TO_GRADE = {"single": 0, "heavy": 1, "triple": 2}
NOMINAL_FRACTION = 0.8  # nominal increase / max increase where the minimum is not tabulated

# Thermal classes of electrical insulation, degC (IEC 60085 class designations, from
# memory); magnet wire is sold by class (IEC 60317 parts, NEMA MW 1000 by temperature index).
THERMAL_CLASSES_C = (105, 120, 130, 155, 180, 200, 220, 240)
# Assumed where a wire states none: 130 C, the lowest class common for modern solderable
# magnet wire, so a coil is flagged early rather than late (common practice, no source).
# Older plain enamel and vinyl-acetal wire may be 105 C: state it in the profile.
DEFAULT_THERMAL_CLASS_C = 130.0


def check_thermal_class_c(value: float) -> float:
    """Validate an insulation thermal class temperature in degC (90 .. 300 C)."""
    v = float(value)
    if not (math.isfinite(v) and 90.0 <= v <= 300.0):
        raise InputError(f"thermal class {value!r} degC is not plausible (the classes run "
                         f"{THERMAL_CLASSES_C[0]} to {THERMAL_CLASSES_C[-1]} C)",
                         key="thermal_class")
    return v


def awg_diameter_m(n: int) -> float:
    """Bare diameter (m) of AWG ``n`` by the ASTM B258 formula."""
    return 0.127e-3 * 92.0 ** ((36 - n) / 39.0)


def iec_tolerance_m(d_m: float) -> float:
    """IEC 60317-0-1 tolerance (+/- m) on the nominal conductor diameter ``d_m``."""
    d = d_m * 1e3
    steps = [(0.063, 0.002),  # below 0.071 mm: approximation (standard gives resistance limits)
             (0.250, 0.003), (0.355, 0.004), (0.500, 0.005), (0.630, 0.006), (0.800, 0.007),
             (0.900, 0.008)]
    for limit, tol in steps:
        if d <= limit + 1e-9:
            return tol * 1e-3
    return 0.01 * d_m  # 1 mm and above: about 1 % (memory)


def _fit_power(points: list[tuple[float, float]]) -> tuple[float, float]:
    """Least-squares fit of y = a x^b in log-log space; returns (a, b)."""
    xs = [math.log(x) for x, _ in points]
    ys = [math.log(y) for _, y in points]
    mx, my = sum(xs) / len(xs), sum(ys) / len(ys)
    b = sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / sum(
        (x - mx) ** 2 for x in xs)
    return math.exp(my - b * mx), b


def iec_max_increase_m(d_m: float, grade: int) -> tuple[float, str]:
    """Maximum insulation increase (m) for grade 1/2/3 (``grade`` 0-based) and its source."""
    d = d_m * 1e3
    table = sorted(IEC_MAX_OD_MM.items())
    for size, ods in table:
        if abs(size - d) < 1e-9:
            return (ods[grade] - size) * 1e-3, "IEC 60317-0-1 table"
    pts = [(s, ods[grade] - s) for s, ods in table]
    if pts[0][0] < d < pts[-1][0]:
        for (x0, y0), (x1, y1) in zip(pts, pts[1:], strict=False):
            if x0 < d < x1:
                t = (math.log(d) - math.log(x0)) / (math.log(x1) - math.log(x0))
                return math.exp(math.log(y0) + t * (math.log(y1) - math.log(y0))) * 1e-3, \
                    "interpolated from the IEC 60317-0-1 table (approximation)"
    a, b = _fit_power(pts)
    return a * d ** b * 1e-3, "extrapolated from the IEC 60317-0-1 table (approximation)"


@dataclass(frozen=True)
class Wire:
    """An insulated round magnet wire. Diameters in metres."""

    name: str            # "42 AWG heavy" / "0.063 mm grade 2"
    size_name: str       # "42 AWG" / "0.063 mm"
    bare_m: float        # nominal bare conductor diameter
    bare_tol_m: float    # +/- tolerance on the bare diameter
    od_m: float          # overall diameter used for stacking (measured if given, else nominal)
    od_max_m: float      # maximum overall diameter
    insulation: str      # single/heavy/triple/grade 1/grade 2/grade 3
    material: Material
    od_source: str = ""  # where od_m comes from
    series: str = "awg"  # "awg" | "metric" | "custom"
    edge_of_catalog: bool = False  # thickest or thinnest size of its series
    thermal_class_c: float | None = None  # insulation thermal class, degC (None: not stated)

    @property
    def thermal_class_or_default_c(self) -> float:
        """The stated thermal class, degC, else :data:`DEFAULT_THERMAL_CLASS_C`."""
        return (DEFAULT_THERMAL_CLASS_C if self.thermal_class_c is None
                else self.thermal_class_c)

    @property
    def area_m2(self) -> float:
        """Conductor cross-section (m^2) at the nominal bare diameter."""
        return math.pi * self.bare_m ** 2 / 4.0

    def ohm_per_m(self, temp_c: float = 20.0) -> float:
        """DC resistance per metre (ohm/m) at ``temp_c`` (linear model R20 (1 + alpha (T - 20)))."""
        m = self.material
        return m.resistivity_ohm_m / self.area_m2 * (1.0 + m.alpha_per_k * (temp_c - 20.0))

    def ohm_per_m_band(self, temp_c: float = 20.0) -> tuple[float, float]:
        """(low, high) ohm/m implied by the bare-diameter tolerance (thickest, thinnest)."""
        r = self.ohm_per_m(temp_c)
        d, t = self.bare_m, self.bare_tol_m
        return r * (d / (d + t)) ** 2, r * (d / (d - t)) ** 2

    def kg_per_m(self) -> float:
        """Conductor mass per metre (kg/m); enamel ignored."""
        return self.area_m2 * self.material.density_kg_m3


_AWG_RE = re.compile(r"^\s*(?:(?:#|no\.?\s*)?(\d+)\s*(?:awg|ga|gauge)|awg\s*#?\s*(\d+))\s*$",
                     re.IGNORECASE)


def _norm_insulation(text: str | None, series: str) -> str:
    if text is None:
        return "heavy" if series == "awg" else "grade 2"
    t = " ".join(str(text).lower().replace("grade", "grade ").split())
    aliases = {"heavy build": "heavy", "single build": "single", "triple build": "triple",
               "hvy": "heavy", "sgl": "single", "g1": "grade 1", "g2": "grade 2",
               "g3": "grade 3", "grade1": "grade 1", "grade2": "grade 2", "grade3": "grade 3"}
    t = aliases.get(t, t)
    allowed = AWG_INSULATIONS if series == "awg" else METRIC_INSULATIONS
    if series == "custom":
        allowed = AWG_INSULATIONS + METRIC_INSULATIONS
    if t not in allowed:
        other = METRIC_INSULATIONS if series == "awg" else AWG_INSULATIONS
        hint = (f"; {t!r} is for {'metric' if series == 'awg' else 'AWG'} sizes"
                if t in other else "")
        raise InputError(f"unknown insulation {text!r} for this size; use one of "
                         f"{', '.join(allowed)}{hint}", key="insulation")
    return t


def make_wire(size: str, insulation: str | None = None, od_m: float | None = None,
              material: str = "copper", thermal_class_c: float | None = None) -> Wire:
    """Look up a wire: ``size`` is '42 AWG' or a metric diameter such as '0.063 mm'.

    ``insulation`` defaults to 'heavy' (AWG) or 'grade 2' (metric); ``od_m`` is a
    measured overall diameter in metres and overrides the catalog value. A metric
    diameter that is not a series size is accepted as a custom size (OD by the
    approximation). ``thermal_class_c`` is the insulation's thermal class in degC
    (None: not stated; :data:`DEFAULT_THERMAL_CLASS_C` is assumed where a figure needs
    one). Raises :class:`InputError` for unknown sizes or insulations.
    """
    if thermal_class_c is not None:
        thermal_class_c = check_thermal_class_c(thermal_class_c)
    mat = MATERIALS.get(str(material).lower())
    if mat is None:
        raise InputError(f"unknown conductor material {material!r}; use copper or aluminium",
                         key="material")
    if not isinstance(size, str):
        raise InputError(f"wire size must be text such as '42 AWG' or '0.063 mm', got {size!r}",
                         key="size")
    m = _AWG_RE.match(size)
    if m:
        n = int(m.group(1) or m.group(2))
        if n not in AWG_RANGE:
            raise InputError(f"{size!r}: AWG sizes run from {AWG_RANGE[0]} to {AWG_RANGE[-1]}",
                             key="size")
        ins = _norm_insulation(insulation, "awg")
        d = awg_diameter_m(n)
        tol = max(0.0001 * INCH, 0.01 * d)
        grade = _AWG_TO_GRADE[ins]
        if n in NEMA_MAX_OD_IN:
            single, heavy = NEMA_MAX_OD_IN[n]
            inc = {0: single, 1: heavy, 2: d / INCH + 1.5 * (heavy - d / INCH)}[grade] * INCH
            inc = max(inc - d, 1e-7)
            src = ("NEMA MW 1000 max OD from memory (unconfirmed)" if grade < 2
                   else "triple = 1.5 x heavy increase (approximation)")
        else:
            inc, src = iec_max_increase_m(d, grade)
            src = f"{src}, via {ins} ~ grade {grade + 1}"
        size_name = f"{n} AWG"
        series = "awg"
        edge = n in (AWG_RANGE[0], AWG_RANGE[-1])
    else:
        from winder.units import parse_length

        d = parse_length(size, key="size", maximum=0.02)
        near = [s for s in METRIC_SIZES_MM if abs(s * 1e-3 - d) <= 1e-4 * d + 1e-12]
        series = "metric" if near else "custom"
        if near:
            d = near[0] * 1e-3
        ins = _norm_insulation(insulation, "metric" if series == "metric" else "custom")
        grade = (_AWG_TO_GRADE[ins] if ins in _AWG_TO_GRADE
                 else METRIC_INSULATIONS.index(ins))
        inc, src = iec_max_increase_m(d, grade)
        tol = iec_tolerance_m(d)
        size_name = f"{_fmt_mm(d)} mm"
        edge = near and near[0] in (METRIC_SIZES_MM[0], METRIC_SIZES_MM[-1])
    od_max = d + inc
    dm = d * 1e3
    key = round(dm, 3)
    if series == "metric" and key in IEC_MIN_INCREASE_MM and ins in METRIC_INSULATIONS:
        nominal = d + 0.5 * (IEC_MIN_INCREASE_MM[key][grade] * 1e-3 + inc)
    else:
        nominal = d + NOMINAL_FRACTION * inc
    if od_m is not None:
        if not (math.isfinite(od_m) and od_m > 0):
            raise InputError("measured od must be a positive length", key="od")
        if od_m < d:
            raise InputError(f"measured od {od_m * 1e3:.4g} mm is less than the bare diameter "
                             f"{d * 1e3:.4g} mm", key="od")
        nominal, src = od_m, "measured"
        od_max = max(od_max, od_m)
    return Wire(name=f"{size_name} {ins}", size_name=size_name, bare_m=d, bare_tol_m=tol,
                od_m=nominal, od_max_m=od_max, insulation=ins, material=mat, od_source=src,
                series=series, edge_of_catalog=bool(edge), thermal_class_c=thermal_class_c)


def _fmt_mm(d_m: float) -> str:
    """A metric size in mm with three decimals as the IEC tables write it: 0.063, 0.100, 1.120;
    a custom size keeps a fourth decimal if it has one (0.0635)."""
    text = f"{d_m * 1e3:.4f}"
    return text[:-1] if text.endswith("0") else text


def parse_wire(text: str) -> tuple[str, str | None]:
    """Split '42 AWG heavy' or '0.063 mm grade 2' into (size, insulation or None)."""
    if not isinstance(text, str) or not text.strip():
        raise InputError("a wire is written like '42 AWG heavy' or '0.063 mm grade 2'",
                         key="wire")
    t = " ".join(text.split())
    m = re.match(r"^(?P<size>.*?)\s*(?P<ins>single(?: build)?|heavy(?: build)?|"
                 r"triple(?: build)?|grade ?[123])?$", t, re.IGNORECASE)
    assert m is not None  # the pattern matches any string
    size, ins = m.group("size"), m.group("ins")
    return size, ins


def awg_sizes() -> list[str]:
    """Every AWG size name in the catalog, thickest first."""
    return [f"{n} AWG" for n in AWG_RANGE]


def metric_sizes() -> list[str]:
    """Every metric size name in the catalog, thickest first."""
    return [f"{_fmt_mm(s * 1e-3)} mm" for s in reversed(METRIC_SIZES_MM)]
