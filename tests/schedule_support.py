"""Helpers for the schedule tests: plan-shaped objects built from the real models.

The schedule reads only ``plan.coil`` (name, style, source), ``plan.bobbin``,
``plan.wire``, ``plan.model`` and ``plan.turns``; these helpers build exactly
that from winder's own wire, bobbin and winding models, so builder tests can
use hand-chosen turn counts.
"""

from __future__ import annotations

from types import SimpleNamespace

from winder.bobbin import Bobbin, RoundCore
from winder.winding import Style, make_model
from winder.wire import make_wire


def bobbin(width_mm: float = 10.0, height_mm: float = 5.0, ends_mm: float = 0.5,
           core_mm: float = 10.0) -> Bobbin:
    """A round-core test bobbin (invented dimensions)."""
    return Bobbin(name="test bobbin", core=RoundCore(diameter_m=core_mm * 1e-3),
                  window_width_m=width_mm * 1e-3, window_height_m=height_mm * 1e-3,
                  clearance_ends_m=ends_mm * 1e-3)


def plan(turns: int, *, kind: str = "layer", od_mm: float = 1.0, size: str = "0.9 mm",
         width_mm: float = 10.0, height_mm: float = 5.0, ends_mm: float = 0.5,
         pitch_range: tuple[float, float] = (1.0, 3.0), seed: int | None = None,
         taper: float = 0.0, name: str = "test coil") -> SimpleNamespace:
    """A plan-shaped object for ``turns`` turns of a wire with a measured OD of ``od_mm``."""
    b = bobbin(width_mm, height_mm, ends_mm)
    w = make_wire(size, od_m=od_mm * 1e-3)
    style = Style(kind=kind, pitch_range=pitch_range, seed=seed, taper=taper)
    coil = SimpleNamespace(name=name, style=style, source=None, bobbin=b, wire=w)
    return SimpleNamespace(coil=coil, bobbin=b, wire=w, model=make_model(b, w, style),
                           turns=turns)
