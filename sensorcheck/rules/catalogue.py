"""The rule families, in catalogue order: the one place that lists them.

The engine reads :data:`FAMILIES` (each module's ``RULES`` tuple holds its rule classes); the
family modules import only :mod:`sensorcheck.rules.base` and :mod:`sensorcheck.rules.common`, so
the package's imports run one way: base -> families -> catalogue -> engine.  A new family module
is added here.
"""

from __future__ import annotations

from types import ModuleType

from sensorcheck.rules import area, electrode, fab, gap, hatch, routing, signal, trace

FAMILIES: tuple[ModuleType, ...] = (gap, area, hatch, routing, trace, electrode, fab, signal)
