"""Rows for the planning core: planner, resistance curve, gauge chooser, schedule.

Figures are CPU seconds of this process per call (medians; see
:func:`winder.bench.measure.per_call`). Budgets marked "ours" are not from the
issue: interactive actions (a re-plan as a field changes, a gauge table) get
50 ms, well inside the 100 ms at which a response stops feeling immediate
(common practice, no source); a per-tick computation of the monitor gets 5 ms,
a quarter of one 50 Hz frame.
"""

from __future__ import annotations

from dataclasses import replace

from winder.bench import Row, missing, verdict
from winder.bench.measure import fmt_time, per_call

INTERACTIVE_S = 0.050    # ours
TICK_S = 0.005           # ours
SCHEDULE_S = 0.050       # issue budget


def _coil(name: str):
    from winder.profile import examples_dir, load_coil

    return load_coil(examples_dir() / "coils" / name)


def planner_row(quick: bool) -> Row:
    """``make_plan`` of the 8 ohm driver coil solved for fill (layer winding)."""
    gone = missing("winder.planner", "winder.profile")
    if gone:
        return Row("planner", "", gone, verdict="n/a")
    from winder.planner import Target, make_plan

    coil = replace(_coil("driver-8ohm.yaml"), target=Target("fill"))
    r = per_call(lambda: make_plan(coil), repeats=3 if quick else 9)
    plan = make_plan(coil)
    med = r["median_s"]
    return Row("planner", "", f"{fmt_time(med)} per plan ({plan.turns} turns, "
               f"{plan.layers} layers)", f"<= {fmt_time(INTERACTIVE_S)} (ours)",
               verdict(med <= INTERACTIVE_S), value=med, unit="s", extra=r)


def resistance_row(quick: bool) -> Row:
    """``resistance_ohm`` over 20,001 turn counts (0..20,000) in one numpy call."""
    gone = missing("winder.winding", "winder.profile")
    if gone:
        return Row("resist", "", gone, verdict="n/a")
    import numpy as np

    from winder.winding import Style, make_model

    coil = _coil("sense-6k2.yaml")
    turns = np.arange(20_001, dtype=float)
    figures = {}
    for kind in ("layer", "orthocyclic", "scatter"):
        model = make_model(coil.bobbin, coil.wire, Style(kind, packing=coil.style.packing
                                                         if kind == "scatter" else None))
        figures[kind] = per_call(lambda m=model: m.resistance_ohm(turns, 20.0),
                                 repeats=3 if quick else 9)["median_s"]
    cold = per_call(lambda: make_model(coil.bobbin, coil.wire, Style("layer"))
                    .resistance_ohm(turns, 20.0), repeats=3 if quick else 7)["median_s"]
    worst = max(figures.values())
    fig = ", ".join(f"{k} {fmt_time(v)}" for k, v in figures.items())
    return Row("resist", "", f"{fig} per 20,001-point curve", f"<= {fmt_time(TICK_S)} (ours)",
               verdict(worst <= TICK_S),
               note=f"{coil.wire.name} on {coil.bobbin.name}; layer model made fresh each "
                    f"call (its layer table built too): {fmt_time(cold)}",
               value=worst, unit="s", extra={**figures, "layer_cold": cold})


def gauges_row(quick: bool) -> Row:
    """``rank_gauges`` for a 6.2 kohm target over AWG and metric in every style.

    The budget applies to one ranking (one series in one style: what ``winder
    gauges`` or the plan view computes for one answer); the slowest is reported
    with the total of all six.
    """
    gone = missing("winder.gauges", "winder.profile")
    if gone:
        return Row("gauges", "", gone, verdict="n/a")
    from winder.gauges import SERIES, rank_gauges
    from winder.winding import Style

    coil = _coil("sense-6k2.yaml")
    styles = [Style("layer"), Style("orthocyclic"), Style("scatter", packing=0.8)]
    each: dict[str, float] = {}
    options = 0
    for series in SERIES:
        for st in styles:
            options += len(rank_gauges(coil.bobbin, 6200.0, series=series, style=st))
            each[f"{series} {st.kind}"] = per_call(
                lambda se=series, st=st: rank_gauges(coil.bobbin, 6200.0, series=se, style=st),
                repeats=3 if quick else 7, min_sample_s=0.0)["median_s"]
    worst_key = max(each, key=each.__getitem__)
    worst = each[worst_key]
    return Row("gauges", "", f"slowest {fmt_time(worst)} ({worst_key}); all {len(each)} "
               f"{fmt_time(sum(each.values()))} ({options} options)",
               f"<= {fmt_time(INTERACTIVE_S)} each (ours)", verdict(worst <= INTERACTIVE_S),
               note=", ".join(f"{k} {fmt_time(v)}" for k, v in each.items()),
               value=worst, unit="s", extra=each)


def schedule_row(quick: bool) -> Row:
    """``build_schedule`` of a 10,000-turn scatter coil.

    The coil of ``python -m winder.schedule.bench``: the shipped 6.2 kohm sensing
    coil (42 AWG heavy, scatter) set to 10,000 turns with end taper 0.3.
    """
    gone = missing("winder.schedule", "winder.planner")
    if gone:
        return Row("schedule", "", gone, verdict="n/a")
    from winder.planner import Target, make_plan
    from winder.schedule import build_schedule, schedule_steps

    coil = _coil("sense-6k2.yaml")
    coil = replace(coil, target=Target("turns", 10_000.0),
                   style=replace(coil.style, taper=0.3, seed=12345))
    plan = make_plan(coil, force=True)
    r = per_call(lambda: build_schedule(plan), repeats=3 if quick else 15, min_sample_s=0.0)
    sched = build_schedule(plan)
    steps = per_call(lambda: schedule_steps(sched), repeats=3, min_sample_s=0.0)["median_s"]
    med = r["median_s"]
    return Row("schedule", "", f"{fmt_time(med)} ({plan.turns} turns, {len(sched.passes)} "
               "passes)", f"< {fmt_time(SCHEDULE_S)}", verdict(med < SCHEDULE_S), value=med,
               unit="s", note=f"then machine steps: {fmt_time(steps)}",
               extra={**r, "steps_s": steps})
