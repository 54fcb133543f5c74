"""Terminal UI: plan view and live winding monitor (layer 5).

Entry points (Textual is imported only when one is called):

* :func:`run_plan` - the plan view for a coil; with ``start_wind`` Enter goes on
  to the caution and the monitor (``winder demo``, ``winder wind``);
* :func:`run_monitor` - the monitor for a winding already set up (``winder resume``).

The monitor acts through a :class:`winder.tui.feed.WindControl` and reads a
:class:`winder.tui.feed.Feed`; :mod:`winder.tui.runner` adapts the session runner.
"""

from __future__ import annotations

from typing import Any


def run_plan(coil: Any, *, start_wind: Any = None, planner: Any = None, title: str = "",
             cautioned: bool = False) -> int:
    """Show the plan view for ``coil``; ``start_wind(coil, plan, schedule) -> WindControl``."""
    from winder.tui.app import WinderApp, run_app

    return run_app(WinderApp(coil=coil, planner=planner, start_wind=start_wind, title=title,
                             cautioned=cautioned))


def run_monitor(control: Any, plan: Any, schedule: Any = None, *, title: str = "",
                cautioned: bool = False, autostart: bool = False) -> int:
    """Show the monitor for ``control`` (a WindControl) winding ``plan``; returns an exit code."""
    from winder.tui.app import WinderApp, run_app

    return run_app(WinderApp(control=control, plan=plan, schedule=schedule, title=title,
                             cautioned=cautioned, autostart=autostart))
