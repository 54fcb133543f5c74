"""``winder demo``: a shipped example coil wound on the simulated winder.

The simulator runs as a subprocess on a pseudo-terminal (``winder sim --pty``,
started by :func:`winder.link.simproc.start_sim`); the session is created in a
temporary directory. Everything else is the real path: the planner, the
schedule, the link driver, the session runner and journal.
"""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path
from typing import Any

from winder.errors import InputError


def example_coil_path(name: str) -> Path:
    """The shipped example coil ``name`` (with or without .yaml)."""
    from winder.profile import examples_dir

    coils = examples_dir() / "coils"
    path = coils / (name if name.endswith(".yaml") else f"{name}.yaml")
    if not path.exists():
        known = ", ".join(sorted(p.stem for p in coils.glob("*.yaml")))
        raise InputError(f"no example coil {name!r}; shipped: {known}", where="--coil")
    return path


def demo_app(*, coil: str = "sense-6k2", speedup: float = 1.0, hand: bool = False,
             workdir: Path | None = None) -> tuple[Any, Any, Any]:
    """(app, setup, sim): the demo app, not yet run. The caller closes ``sim``.

    ``hand`` simulates a turn counter on a hand-cranked spindle instead of a motor
    winder: no motor, so no caution; the monitor shows where the wire should be.
    """
    from winder.link.simproc import start_sim
    from winder.profile import load_coil
    from winder.tui.app import WinderApp
    from winder.tui.wind import WindSetup

    if not (0 < speedup <= 1000):
        raise InputError("speedup must be more than 0 and at most 1000", where="--speedup")
    path = example_coil_path(coil)
    loaded = load_coil(path)
    work = Path(workdir) if workdir is not None else Path(tempfile.mkdtemp(prefix="winder-demo-"))
    sim = start_sim(mode="counter" if hand else "controller", speedup=speedup)
    setup = WindSetup(sim.device, session_dir=work / "session", original=loaded,
                      original_path=path)
    what = "hand winding on a simulated counter" if hand else "demo on the simulated winder"
    app = WinderApp(coil=loaded, start_wind=setup, title=f"{loaded.name} · {what}")
    return app, setup, sim


def run_demo(*, coil: str = "sense-6k2", speedup: float = 1.0, keep: bool = False,
             hand: bool = False) -> int:
    """Run the demo in this terminal; returns the exit code."""
    from winder.tui.app import run_app

    work = Path(tempfile.mkdtemp(prefix="winder-demo-"))
    sim = None
    try:
        app, setup, sim = demo_app(coil=coil, speedup=speedup, hand=hand, workdir=work)
        rc = run_app(app)
        sess = setup.session
        if sess is not None:
            st = sess.state
            print(f"demo: {st.state} at {st.turns:g} turns, {len(st.readings)} reading(s)"
                  + ("." if hand else "; the simulated motor is stopped."))
        if keep:
            print(f"demo session kept in {work / 'session'}")
        return rc
    finally:
        if sim is not None:
            sim.close()
        if not keep:
            shutil.rmtree(work, ignore_errors=True)
