"""The finger model and the circuit around the capacitance matrix.

The finger is a conductor: a flat-ended cylinder of the contact diameter, standing vertically,
its flat end toward the overlay.  It is not a perfect ground.  It reaches earth through the body
(``body_capacitance_pf``), and the device's own circuit ground reaches earth through
``device_ground_coupling_pf`` (None: an earthed product, its ground *is* earth).  For a battery
product on a table both are in the return path, which is what makes a large receiver's signal
turn around as the finger comes close (the direct finger-to-receiver coupling overtakes).

The finger record, its defaults with their sources and its sanity check live on the ground floor,
:mod:`sensorcheck.finger` (the config validates against them); they are re-exported here.
"""

from __future__ import annotations

from typing import Literal

import numpy as np

from sensorcheck.finger import FINGER_DEFAULTS, FINGER_SOURCES, Finger, validate_finger
from sensorcheck.physics.estimate import Turn

__all__ = ["FINGER_DEFAULTS", "FINGER_SOURCES", "Finger", "validate_finger", "PF", "mutual_f", "self_f",
           "node_charges", "turning_point", "turnarounds", "turn_indices", "TURN_REL_TOL"]

PF = 1e-12


def node_charges(
    c: np.ndarray,
    drive: np.ndarray,
    *,
    floating: int | None,
    body_f: float,
    device_f: float | None,
) -> np.ndarray:
    """Charges (C) on every node for a drive pattern (V, relative to the device ground).

    ``c``: Maxwell matrix (F) over the board conductors and, when ``floating`` is given, the
    finger (index ``floating``).  The finger floats, tied to earth by ``body_f``; when
    ``device_f`` is given the whole board (device ground and everything driven from it) floats,
    tied to earth by ``device_f``.  Earth is the BEM's zero (infinity).
    """
    n = c.shape[0]
    board = np.ones(n, dtype=bool)
    if floating is not None:
        board[floating] = False
    v0 = np.zeros(n)
    v0[board] = drive
    cols: list[np.ndarray] = []
    if floating is not None:
        e = np.zeros(n)
        e[floating] = 1.0
        cols.append(e)
    if device_f is not None:
        cols.append(board.astype(float))
    if not cols:
        return c @ v0
    m = np.stack(cols, axis=1)  # n x u
    # equations: finger row charge + body_f * V_f = 0 ; sum of board charges + device_f * V_g = 0
    rows: list[np.ndarray] = []
    ext: list[np.ndarray] = []
    if floating is not None:
        r = np.zeros(n)
        r[floating] = 1.0
        rows.append(r)
        ext.append(body_f * np.eye(len(cols))[0])
    if device_f is not None:
        rows.append(board.astype(float))
        ext.append(device_f * np.eye(len(cols))[-1])
    sel = np.stack(rows)  # u x n
    a = sel @ c @ m + np.stack(ext)
    b = -(sel @ c @ v0)
    x = np.linalg.solve(a, b)
    return c @ (v0 + m @ x)


def mutual_f(c: np.ndarray, tx: list[int], rx: list[int], *, floating: int | None, body_f: float, device_f: float | None) -> float:
    """Mutual capacitance (F, positive): charge into the RX nodes per volt on the TX nodes."""
    nb = c.shape[0] - (0 if floating is None else 1)
    drive = np.zeros(nb)
    drive[tx] = 1.0
    q = node_charges(c, drive, floating=floating, body_f=body_f, device_f=device_f)
    return float(-np.sum(q[rx]))


def self_f(
    c: np.ndarray,
    electrode: list[int],
    *,
    shield: list[int] | None = None,
    floating: int | None,
    body_f: float,
    device_f: float | None,
) -> float:
    """Self capacitance (F): charge into the electrode per volt, a driven shield at the same potential."""
    nb = c.shape[0] - (0 if floating is None else 1)
    drive = np.zeros(nb)
    drive[electrode] = 1.0
    if shield:
        drive[shield] = 1.0
    q = node_charges(c, drive, floating=floating, body_f=body_f, device_f=device_f)
    return float(np.sum(q[electrode]))


#: a change of the signal within this share of its swing is no change (numerical noise, interpolation)
TURN_REL_TOL = 0.01


def _x(h: np.ndarray | float) -> np.ndarray | float:
    """The height variable the curve is refined in: log(h + 0.05 mm) (as :mod:`~sensorcheck.physics.approach`)."""
    return np.log(np.asarray(h) + 0.05)


def _extremum_height(h: np.ndarray, s: np.ndarray, k: int) -> float:
    """Height of the extremum of ``s`` at index ``k``: a parabola through it and its neighbours in
    log(h + 0.05), its vertex kept between the neighbours (``h[k]`` where the parabola does not bend
    the way the extremum does, or at the far end of the curve)."""
    if k == 0 or k == len(s) - 1:
        return float(h[k])
    x = _x(h[k - 1 : k + 2])
    y = s[k - 1 : k + 2] * (1.0 if s[k] >= s[k - 1] else -1.0)  # a maximum of y either way
    den = (x[0] - x[1]) * (x[0] - x[2]) * (x[1] - x[2])
    if den == 0:
        return float(h[k])
    a = (x[2] * (y[1] - y[0]) + x[1] * (y[0] - y[2]) + x[0] * (y[2] - y[1])) / den
    b = (x[2] ** 2 * (y[0] - y[1]) + x[1] ** 2 * (y[2] - y[0]) + x[0] ** 2 * (y[1] - y[2])) / den
    if a >= 0:
        return float(h[k])
    xv = float(np.clip(-b / (2 * a), min(x[0], x[2]), max(x[0], x[2])))
    return float(np.exp(xv) - 0.05)


def _crossing_height(h: np.ndarray, s: np.ndarray, i: int) -> float:
    """Height where ``s`` crosses zero between indices ``i - 1`` and ``i`` (linear in log(h + 0.05))."""
    if s[i] == 0.0:
        return float(h[i])
    x0, x1 = float(_x(h[i - 1])), float(_x(h[i]))
    t = s[i - 1] / (s[i - 1] - s[i])
    return float(np.exp(x0 + t * (x1 - x0)) - 0.05)


def turn_indices(values: list[float], baseline: float, rel_tol: float = TURN_REL_TOL) -> list[tuple[int, str]]:
    """The changes of course of a signal sampled far to near: ``(index, kind)`` in curve order.

    ``kind`` "turns": index ``k`` is an extremum of the signal ``value - baseline`` after which it
    moves back by more than ``rel_tol`` of the swing (the largest ``|signal|``); "reverses sign":
    the signal crosses zero between index ``k - 1`` and ``k``, having been beyond ``rel_tol`` of the
    swing on the one side and reaching beyond it on the other.  The far field (zero signal) is the
    start: a signal largest at the farthest height turns there.  Moves within the tolerance are
    not changes (numerical noise, interpolation).
    """
    s = np.asarray(values, dtype=float) - baseline
    n = len(s)
    swing = float(np.max(np.abs(s))) if n else 0.0
    if n < 2 or swing == 0.0:
        return []
    tol = rel_tol * swing
    out: list[tuple[int, str]] = []
    # slope: a zigzag with hysteresis, from the far field's zero
    trend, ext, ext_v = 0, -1, 0.0
    for i in range(n):
        v = float(s[i])
        if trend == 0:
            if abs(v) > tol:
                trend, ext, ext_v = (1 if v > 0 else -1), i, v
        elif (v - ext_v) * trend >= 0:
            ext, ext_v = i, v
        elif abs(v - ext_v) > tol:
            out.append((ext, "turns"))
            trend, ext, ext_v = -trend, i, v
    # sign: the last point beyond the tolerance on one side, then the first beyond it on the other
    last_sign, last_i = 0, -1
    for i in range(n):
        v = float(s[i])
        if abs(v) <= tol:
            continue
        sign = 1 if v > 0 else -1
        if last_sign and sign != last_sign:
            k = next(j for j in range(last_i + 1, i + 1) if s[j] * last_sign <= 0)
            out.append((k, "reverses sign"))
        last_sign, last_i = sign, i
    return sorted(out)


def turnarounds(curve: list[tuple[float, float]], baseline: float, rel_tol: float = TURN_REL_TOL,
                over: Literal["best", "centre"] = "best") -> list[Turn]:
    """Every turn and sign reversal of an approach curve (far to near), highest first.

    See :func:`turn_indices` for what counts; a turn's height is refined by a parabola through the
    extremum and its neighbours in log(h + 0.05), a reversal's by linear interpolation of the
    signal in the same variable.  ``over`` names the curve ("best" or "centre") in the result.
    """
    if len(curve) < 2:
        return []
    h = np.array([p[0] for p in curve], dtype=float)
    s = np.array([p[1] for p in curve], dtype=float) - baseline
    out = []
    for k, kind in turn_indices([p[1] for p in curve], baseline, rel_tol):
        height = _extremum_height(h, s, k) if kind == "turns" else _crossing_height(h, s, k)
        out.append(Turn(height_mm=height, kind=kind, curve=over))  # type: ignore[arg-type]
    return sorted(out, key=lambda t: -t.height_mm)


def turning_point(curve: list[tuple[float, float]], baseline: float, rel_tol: float = TURN_REL_TOL) -> float | None:
    """The highest height (mm) where the signal turns or reverses sign (:func:`turnarounds`), else None."""
    turns = turnarounds(curve, baseline, rel_tol)
    return turns[0].height_mm if turns else None
