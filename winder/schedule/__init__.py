"""Traverse and turn schedule: passes in millimetres and machine steps (layer 2).

Public API::

    from winder.schedule import build_schedule, load_machine, DEFAULT_MACHINE
    sched = build_schedule(plan, machine)        # Schedule
    sched.passes[i]                              # Pass (mm from the start flange, rpm, ...)
    sched.pass_at(turns) -> (pass index, guide position mm)
    schedule_steps(sched) -> [PassSteps]         # machine steps, rounding carried forward
    render(sched, "table" | "yaml" | "json" | "csv" | "gcode") -> str
"""

from winder.schedule.builder import build_schedule
from winder.schedule.export import FORMATS, render, schedule_dict
from winder.schedule.machine import (
    DEFAULT_MACHINE,
    KINDS,
    Machine,
    Spindle,
    Traverse,
    load_machine,
    machine_from_dict,
    machine_from_mapping,
)
from winder.schedule.passes import HOMEWARD, OUTWARD, Pass, Schedule
from winder.schedule.steps import PassSteps, StepAccumulator, schedule_steps, to_steps

__all__ = [
    "DEFAULT_MACHINE", "FORMATS", "HOMEWARD", "KINDS", "OUTWARD", "Machine", "Pass",
    "PassSteps", "Schedule", "Spindle", "StepAccumulator", "Traverse", "build_schedule",
    "load_machine", "machine_from_dict", "machine_from_mapping", "render", "schedule_dict",
    "schedule_steps", "to_steps",
]
