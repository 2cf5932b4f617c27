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

import numpy as np

from sensorcheck.finger import FINGER_DEFAULTS, FINGER_SOURCES, Finger, validate_finger

__all__ = ["FINGER_DEFAULTS", "FINGER_SOURCES", "Finger", "validate_finger", "PF", "mutual_f", "self_f",
           "node_charges", "turning_point"]

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


def turning_point(curve: list[tuple[float, float]], baseline: float, rel_tol: float = 0.01) -> float | None:
    """Height (mm) where |signal| peaks before the touch end of the curve (far to near), else None.

    The signal is ``value - baseline``; a turnaround is reported when the magnitude at the
    surface is below the peak by more than ``rel_tol`` of the peak (a parabola through the
    peak and its neighbours refines the height on a log scale).
    """
    if len(curve) < 3:
        return None
    h = np.array([p[0] for p in curve])
    s = np.abs(np.array([p[1] for p in curve]) - baseline)
    k = int(np.argmax(s))
    if k == len(s) - 1 or s[-1] >= s[k] * (1.0 - rel_tol):
        return None
    if k == 0:
        return float(h[0])
    x = np.log(h[k - 1 : k + 2] + 0.05)
    y = s[k - 1 : k + 2]
    den = (x[0] - x[1]) * (x[0] - x[2]) * (x[1] - x[2])
    if den == 0:
        return float(h[k])
    a = (x[2] * (y[1] - y[0]) + x[1] * (y[0] - y[2]) + x[0] * (y[2] - y[1])) / den
    b = (x[2] ** 2 * (y[0] - y[1]) + x[1] ** 2 * (y[2] - y[0]) + x[0] ** 2 * (y[1] - y[2])) / den
    if a >= 0:
        return float(h[k])
    xv = float(np.clip(-b / (2 * a), min(x[0], x[2]), max(x[0], x[2])))
    return float(np.exp(xv) - 0.05)
