"""The board block's dense operator: assembled row block by row block straight into the array the
factorisation works in, factorised in place, stored in single precision; and the memory budget
that follows from it (how many worker processes fit in the free memory).

Why this shape
--------------
The board block ``A`` (collocation potentials between the board's own panels,
:func:`sensorcheck.physics.bem.plane_block`) is dense: ``n^2`` entries.  Assembled as a whole, as
:func:`sensorcheck.physics.bem.assemble` does, every plane pair's block holds four ``float64``
temporaries of its own size (distances, inverse distances, values, the sum over images), and the
LU factorisation of a C-ordered matrix copies it into Fortran order first: about six copies of
``n^2 x 8`` bytes at the peak (5.1 GB at 9 908 panels).  Here

* the rows are assembled in blocks of at most :data:`CHUNK_ENTRIES` entries, so the temporaries
  are bounded whatever ``n``;
* each block is written into one Fortran-ordered array, which LAPACK's ``getrf`` factorises in
  place (no copy);
* that array is ``float32`` (:data:`STORAGE`): half the memory, and the factorisation and the
  triangular solves run at single-precision speed (about twice the double-precision rate).

Accuracy of single precision (what checks it)
---------------------------------------------
The entries are computed in double precision and rounded once to single (a relative error of
6e-8 per entry); the right-hand sides are rounded the same way.  The error of a solve is then
about ``cond(A) x 6e-8``.  Capacitances are weighted sums of the solved charge, which averages
the error further: tests/physics/test_operator.py compares, on the test designs, the Maxwell
matrix without and with a finger (every term the estimates are made of) of this operator with a
``float64`` dense direct solve of the same matrix, and bounds the difference (1e-5 relative, the
measured ones are about 1e-7); bench/bench_board.py compares every estimate against a reference
made in double precision.  :data:`STORAGE` = ``np.float64`` gives back the double-precision
operator (same code path, one copy fewer than before).

Memory per worker (issue 15)
----------------------------
:func:`worker_bytes` states the budget of one worker process solving a window of ``n`` panels:
the operator (``n^2`` x 4 bytes), the assembly block's temporaries, the finger solves, and the
process itself.  :func:`workers_for_memory` chooses how many workers fit in the free memory.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import Any, Protocol

import numpy as np
import scipy.linalg as sla

from sensorcheck.physics.greens import LayeredMedium


class PanelSet(Protocol):
    """What the operator reads of :class:`sensorcheck.physics.bem.Panels` (named structurally: bem
    builds the operator, so this module does not import it)."""

    centroid: np.ndarray

    def __len__(self) -> int: ...

    def subset(self, idx: np.ndarray) -> Any: ...


#: one block between two planes: ``block(obs, z_obs, src, z_src, images, rho_max=...)``
#: (:func:`sensorcheck.physics.bem.plane_block`)
PlaneBlock = Callable[..., np.ndarray]

#: storage (and factorisation) precision of the board block; see the module docstring
STORAGE: type[np.floating] = np.float32
#: matrix entries assembled at once (the rows of one block); the temporaries take about
#: :data:`BYTES_PER_CHUNK_ENTRY` bytes each (counted from plane_block: four float64 arrays, five
#: float32 arrays and one index array of the block's shape), so about 150 MB at this size
CHUNK_ENTRIES = 2_000_000
BYTES_PER_CHUNK_ENTRY = 4 * 8 + 5 * 4 + 8
#: a worker process before it solves anything: the interpreter, numpy/scipy/shapely, the design
#: (measured: about 180 MB resident for b06 after the import and the design are in; rounded up)
PROCESS_BYTES = 300 * 1024 * 1024
#: recycled solves (:meth:`BoardOperator.solve_recycled`): directions of a right-hand side below
#: this fraction of its largest column are dropped (the float32 rounding of the right-hand side
#: itself is 6e-8 per entry)
RECYCLE_TOL = 1e-7
#: the basis stops growing at this fraction of the panels: beyond it, projecting on the basis
#: costs about what a direct solve does (projection 6 n r m flops against 2 n^2 m)
RECYCLE_MAX_FRACTION = 0.3
#: and at this many directions whatever the panels, which bounds its memory (the corpus windows
#: need 400 to 600: tests/physics/test_operator.py counts a window's)
RECYCLE_MAX_RANK = 1500
#: finger panels of one solve (a fine finger has about 300; the hand-sized plate more)
BODY_PANELS = 600


class BoardOperator:
    """The board block, assembled and LU-factorised in place in :data:`STORAGE` precision.

    ``solve(b)`` gives ``A^-1 b`` in float64 for ``b`` of shape (n,) or (n, m).
    ``solve_recycled(b)`` gives the same for the finger's coupling blocks, by a basis of the
    earlier right-hand sides (see there).  ``factorisations``, ``solved_columns`` (columns put
    through the triangular solves) and ``rank`` (of the recycled basis) count the work done, for
    tests that bound work, not time.
    """

    def __init__(self, panels: PanelSet, medium: LayeredMedium, groups: dict[float, np.ndarray], block: PlaneBlock,
                 dtype: type[np.floating] = STORAGE, chunk_entries: int = CHUNK_ENTRIES) -> None:
        self.n = len(panels)
        self.dtype = np.dtype(dtype)
        a = assemble_planes(panels, medium, groups, block, dtype=dtype, chunk_entries=chunk_entries)
        lu, piv = sla.lu_factor(a, overwrite_a=True, check_finite=False)
        if not np.shares_memory(lu, a):  # the point of the Fortran-ordered storage: no second copy
            raise AssertionError("LU factorisation copied the board block")
        self.lu = (lu, piv)
        self.factorisations = 1
        self.solved_columns = 0
        self.recycle_tol = RECYCLE_TOL
        self._q = np.zeros((self.n, 0))  # orthonormal basis of the earlier right-hand sides
        self._z = np.zeros((self.n, 0), dtype=self.dtype)  # A^-1 of it, in storage precision

    @property
    def rank(self) -> int:
        return int(self._q.shape[1])

    @property
    def nbytes(self) -> int:
        return int(self.lu[0].nbytes)

    def solve(self, b: np.ndarray) -> np.ndarray:
        rhs = np.array(b, dtype=self.dtype, order="F", copy=True)
        self.solved_columns += 1 if rhs.ndim == 1 else rhs.shape[1]
        x = sla.lu_solve(self.lu, rhs, overwrite_b=True, check_finite=False)
        return np.asarray(x, dtype=np.float64)

    def solve_recycled(self, b: np.ndarray) -> np.ndarray:
        """``A^-1 b`` for ``b`` (n, m), through the span of the earlier right-hand sides.

        The finger's coupling blocks of one window (every finger position and height) are smooth
        potentials on the board from sources above it, and the blocks of nearby positions share
        most of their span.  So ``b`` is projected on an orthonormal basis ``Q`` of what was solved
        before (``A^-1 Q`` kept), and only what is new in it goes through the triangular solves:
        the residual ``b - Q Q^T b``'s principal directions above :data:`RECYCLE_TOL` of ``b``'s
        largest column (from the residual's Gram matrix), orthonormalised and appended to ``Q``.
        What is dropped is below that tolerance in every column.  Once the basis holds
        :data:`RECYCLE_MAX_FRACTION` of ``n`` (or :data:`RECYCLE_MAX_RANK`) directions it stops
        growing and ``b`` is solved directly.
        """
        b = np.asarray(b, dtype=np.float64)
        if b.ndim != 2 or self.rank >= min(RECYCLE_MAX_FRACTION * self.n, RECYCLE_MAX_RANK):
            return self.solve(b)
        scale = float(np.sqrt(np.max(np.einsum("ij,ij->j", b, b)))) if b.size else 0.0
        if scale == 0.0:
            return np.zeros_like(b)
        q, z = self._q, self._z
        c = q.T @ b
        r = b - q @ c  # orthogonal to Q up to rounding, far below the tolerance
        ev, vec = np.linalg.eigh(r.T @ r)
        keep = ev > (self.recycle_tol * scale) ** 2
        if np.any(keep):
            new = r @ vec[:, keep]
            new -= q @ (q.T @ new)
            qn, _ = np.linalg.qr(new)
            zn = self.solve(qn).astype(self.dtype)
            self._q = q = np.concatenate([q, qn], axis=1)
            self._z = z = np.concatenate([z, zn], axis=1)
            c = np.concatenate([c, qn.T @ r], axis=0)
        return np.asarray(z @ c.astype(self.dtype), dtype=np.float64)


def assemble_planes(panels: PanelSet, medium: LayeredMedium, groups: dict[float, np.ndarray], block: PlaneBlock, *,
                    dtype: type[np.floating] = STORAGE, chunk_entries: int = CHUNK_ENTRIES) -> np.ndarray:
    """The collocation matrix of horizontal board panels (grouped by plane: ``groups``), Fortran-ordered.

    The same entries as :func:`sensorcheck.physics.bem.assemble` (``block`` is its plane_block;
    each plane pair's interpolation tables span that pair's whole block, as there), made at most
    ``chunk_entries`` at a time.
    """
    n = len(panels)
    a = np.empty((n, n), dtype=dtype, order="F")
    layer = medium.layer_of(panels.centroid[:, 2])
    for zo, io in groups.items():
        lo = int(layer[io[0]])
        for zs, js in groups.items():
            ls = int(layer[js[0]])
            src = panels.subset(js)
            images = medium.images(ls, lo)
            rho_max = _block_rho_max(panels.centroid[io, :2], src.centroid[:, :2])
            step = max(1, chunk_entries // max(1, len(js)))
            for k in range(0, len(io), step):
                rows = io[k:k + step]
                a[np.ix_(rows, js)] = block(panels.centroid[rows], zo, src, zs, images, rho_max=rho_max)
    return a


def _block_rho_max(obs_xy: np.ndarray, src_xy: np.ndarray) -> float:
    """The largest in-plane distance between two point sets (what plane_block sizes its table by).

    Exact: the farthest pair of two sets lies on their convex hulls' corners, so the corners of
    both sets' hulls are compared (a few hundred points, not n x m).
    """
    return float(np.sqrt(_max_sq_dist(_hull_points(obs_xy), _hull_points(src_xy)))) + 1e-12


def _hull_points(xy: np.ndarray) -> np.ndarray:
    if len(xy) <= 8:
        return xy
    from scipy.spatial import ConvexHull, QhullError

    try:
        return xy[ConvexHull(xy).vertices]
    except QhullError:  # collinear or coincident points: every point is a candidate
        return xy


def _max_sq_dist(a: np.ndarray, b: np.ndarray) -> float:
    from scipy.spatial.distance import cdist

    return float(cdist(a, b, "sqeuclidean").max())


# --------------------------------------------------------------------------------------------
# memory budget per worker


def operator_bytes(n_panels: int, dtype: type[np.floating] = STORAGE) -> int:
    """Bytes of the factorised board block of ``n_panels`` panels (stored once, factorised in place)."""
    return int(n_panels) * int(n_panels) * np.dtype(dtype).itemsize


def worker_bytes(n_panels: int, dtype: type[np.floating] = STORAGE, chunk_entries: int = CHUNK_ENTRIES) -> int:
    """The stated memory budget of one worker solving a window of ``n_panels`` panels.

    The operator, the assembly block's temporaries (bounded by ``chunk_entries``), the recycled
    basis and its solutions (float64 and storage precision, at most :data:`RECYCLE_MAX_RANK`
    columns), the finger solves (right-hand side and solution, residual, the coupling blocks
    both ways: six ``n x BODY_PANELS`` float64 arrays) and the process itself.
    """
    itemsize = np.dtype(dtype).itemsize
    chunk = min(chunk_entries, n_panels * n_panels) * BYTES_PER_CHUNK_ENTRY
    rank = int(min(RECYCLE_MAX_FRACTION * n_panels, RECYCLE_MAX_RANK))
    basis = n_panels * rank * (8 + itemsize)
    body = 6 * n_panels * BODY_PANELS * 8
    return operator_bytes(n_panels, dtype) + chunk + basis + body + PROCESS_BYTES


def available_bytes() -> int | None:
    """Memory the system can give without swapping (Linux ``MemAvailable``), or None where unknown."""
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemAvailable:"):
                return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES")) * int(os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return None


def workers_for_memory(wanted: int, n_panels: int, free_bytes: int | None) -> int:
    """How many of ``wanted`` workers fit in ``free_bytes`` when each may solve ``n_panels`` panels
    (at least one: a single worker is what a run without a pool would use anyway)."""
    if free_bytes is None or wanted <= 1:
        return max(1, wanted)
    return max(1, min(wanted, free_bytes // worker_bytes(n_panels)))
