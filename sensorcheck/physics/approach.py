"""Approach curves with fewer finger solves: heights solved where the curve bends or turns.

The approach curve is reported at fixed heights (``sensors.approach_heights``: geometric from the
top height down to 0.25 mm, then touching).  Far from the board the curve is flat and smooth in
the logarithm of the height; near it, it bends, and where the signal turns around it peaks.
:func:`adaptive_curve` solves a few of the fixed heights first (every third one, and the touch),
then estimates each unsolved height in ``x = log(h + 0.05 mm)`` (the variable
:func:`sensorcheck.physics.finger.turning_point` uses) by the polynomial through the (up to) two
nearest solved points on each side (a cubic inside the solved range), and its error by the largest difference to the other cubics through four
solved points that hold both solved neighbours (three on one side and one on the other); where
one side has fewer than two solved points (next to an end), the straight line between the two
neighbours is compared as well.  Where that difference exceeds ``rel_tol`` of the signal
swing (the largest ``|value - baseline|`` solved so far), the height in the middle of the gap is
solved too.  Finally the largest ``|signal|``, every
turn and sign reversal (:func:`sensorcheck.physics.finger.turn_indices`) and both their neighbours
are always solved, so that a turning point (a parabola through those three) or a zero crossing
never rests on an interpolated value.
Unsolved heights get the central cubic's value.

The bound, and what checks it: the spread of the interpolants estimates the error of the
central one; tests/physics/test_approach.py checks on the test designs (a mutual button, a self
button, and a receiver whose signal turns around) that every adaptive point lies within 1 % of
the signal swing of the fixed 12-height solve, that the turning point is within 0.1 mm, and that
fewer heights were solved.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from sensorcheck.physics.finger import turn_indices

#: interpolation tolerance as a fraction of the signal swing (see the module docstring)
ADAPT_REL_TOL = 0.01
#: solve every this many fixed heights first
START_EVERY = 3


def _x(h: float) -> float:
    return float(np.log(h + 0.05))


def _interp(xs: list[float], ys: list[float], x: float) -> float:
    """Lagrange polynomial through the points (2 to 4 of them) at x."""
    out = 0.0
    for i, (xi, yi) in enumerate(zip(xs, ys)):
        w = 1.0
        for j, xj in enumerate(xs):
            if j != i:
                w *= (x - xj) / (xi - xj)
        out += w * yi
    return out


def _estimates(heights: list[float], solved: dict[int, float], i: int) -> tuple[float, float]:
    """(value, error estimate) at unsolved index ``i``: the cubic through the two solved points on
    each side, and the largest difference to the cubics through the other stencils that hold the
    two solved neighbours of ``i`` (three on one side and one on the other), and, next to an end
    of the solved range, to the straight line between the neighbours."""
    idx = sorted(solved)
    left = [k for k in idx if k < i]
    right = [k for k in idx if k > i]
    x = _x(heights[i])

    def through(ks: list[int]) -> float:
        return _interp([_x(heights[k]) for k in ks], [solved[k] for k in ks], x)

    value = through(left[-2:] + right[:2])
    others = [through(s) for s in (left[-3:] + right[:1], left[-1:] + right[:3]) if len(s) == 4]
    if len(left) < 2 or len(right) < 2 or not others:  # at an end of the solved range, or no other
        # four-point stencil (two solved on each side, no more): also the straight line
        others.append(through(left[-1:] + right[:1]))
    return value, max(abs(value - o) for o in others)


def adaptive_curve(solve: Callable[[float], float], heights: list[float], baseline: float,
                   rel_tol: float = ADAPT_REL_TOL) -> tuple[list[tuple[float, float]], list[bool]]:
    """The curve at every height of ``heights`` (far to near, the last the touch) and which were solved.

    ``solve(h)`` gives the value at height ``h``.  See the module docstring for the rule.
    """
    n = len(heights)
    if n <= 3:
        return [(h, solve(h)) for h in heights], [True] * n
    solved: dict[int, float] = {}

    def need(i: int) -> None:
        if i not in solved:
            solved[i] = solve(heights[i])

    for i in sorted({*range(0, n, START_EVERY), n - 2, n - 1}):
        need(i)
    for _ in range(4 * n):
        swing = max(abs(v - baseline) for v in solved.values()) or 1e-300
        worst: tuple[float, int] | None = None
        idx = sorted(solved)
        for a, b in zip(idx, idx[1:]):
            if b - a < 2:
                continue
            mid = (a + b) // 2
            err = max(_estimates(heights, solved, i)[1] for i in range(a + 1, b))
            if err > rel_tol * swing and (worst is None or err > worst[0]):
                worst = (err, mid)
        values = _fill(heights, solved)
        k = int(np.argmax([abs(v - baseline) for v in values]))
        # the peak, every turn and every sign reversal (physics.finger.turn_indices) and their
        # neighbours rest on solved values: their heights are refined from them
        marks = {k} | {j for j, _ in turn_indices(values, baseline)}
        around = sorted({j for m in marks for j in (m - 1, m, m + 1) if 0 <= j < n and j not in solved})
        if around:
            for j in around:
                need(j)
            continue
        if worst is None:
            break
        need(worst[1])
    values = _fill(heights, solved)
    return list(zip(heights, values)), [i in solved for i in range(n)]


def _fill(heights: list[float], solved: dict[int, float]) -> list[float]:
    return [solved[i] if i in solved else _estimates(heights, solved, i)[0] for i in range(len(heights))]


def solved_note(n_solved: int, n_curve: int) -> str:
    """The estimate note that says how many heights of the approach curve were solved."""
    return (f"approach: {n_solved} of {n_curve} heights solved, the others interpolated where the curve is "
            f"smooth (within {100 * ADAPT_REL_TOL:g} % of the signal swing, by comparing two interpolants)")
