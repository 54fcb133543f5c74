"""winder: a winding-machine companion.

Plan a coil (wire, turns, layers, build, resistance), turn the plan into a
traverse and turn schedule, drive or follow the winder over a serial link,
monitor, resume after interruptions and keep records.
"""

__version__ = "0.1.0"
