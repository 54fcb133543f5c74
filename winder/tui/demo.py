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


# The demo's simulated coil reads this much above the plan (invented): the wire of a
# real spool is rarely exactly nominal, and a reading shows the calibration at work.
DEMO_RESISTANCE_FACTOR = 1.03


class DemoSim:
    """The demo's simulated winder, started when winding starts, for the plan wound.

    Its resistance model is set from the plan (ohm per turn at the planned turns) times
    :data:`DEMO_RESISTANCE_FACTOR`, so readings and calibration behave like a real coil.
    """

    def __init__(self, *, hand: bool, speedup: float):
        self.hand, self.speedup = hand, speedup
        self.sim: Any = None

    def start(self, plan: Any) -> str:
        from winder.link.simproc import start_sim

        if self.sim is None:
            per_turn = float(plan.resistance_ohm) / max(int(plan.turns), 1)
            self.sim = start_sim(mode="counter" if self.hand else "controller",
                                 speedup=self.speedup,
                                 extra=["--ohm-per-turn", f"{per_turn:.9g}",
                                        "--resistance-factor", f"{DEMO_RESISTANCE_FACTOR:g}"])
        return self.sim.device

    @property
    def device(self) -> str:
        """The simulator's device path (once started)."""
        return self.sim.device

    def truth(self) -> dict:
        return self.sim.truth()

    def control(self, command: str) -> dict:
        return self.sim.control(command)

    def close(self) -> None:
        if self.sim is not None:
            self.sim.close()


def demo_app(*, coil: str = "sense-6k2", speedup: float = 1.0, hand: bool = False,
             workdir: Path | None = None) -> tuple[Any, Any, Any]:
    """(app, setup, sim): the demo app, not yet run. The caller closes ``sim`` (a
    :class:`DemoSim`, started when the plan view's Enter starts winding).

    ``hand`` simulates a turn counter on a hand-cranked spindle instead of a motor
    winder: no motor, so no caution; the monitor shows where the wire should be.
    """
    from winder.profile import load_coil
    from winder.tui.app import WinderApp
    from winder.tui.wind import WindSetup

    if not (0 < speedup <= 1000):
        raise InputError("speedup must be more than 0 and at most 1000", where="--speedup")
    path = example_coil_path(coil)
    loaded = load_coil(path)
    work = Path(workdir) if workdir is not None else Path(tempfile.mkdtemp(prefix="winder-demo-"))
    sim = DemoSim(hand=hand, speedup=speedup)
    setup = WindSetup(sim.start, session_dir=work / "session", original=loaded,
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
