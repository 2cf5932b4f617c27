"""The board block's operator (physics/operator.py): single-precision storage, blocked assembly,
recycled finger solves and the memory budget, each against the dense double-precision direct
solve (LAPACK through scipy.linalg.solve on bem.assemble's matrix), with the work counted.

Outside references: the dense direct solve (LAPACK ``gesv``), the Maxwell capacitance of an
isolated square plate (0.3607 x 4 pi eps0 a for side a, within 1 %; E. Goto, Y. Shi and N. Yoshida,
J. Comput. Phys. 100 (1992) 105, 0.3607... from Richardson extrapolation of boundary elements;
quoted from memory), and a brute-force sum over images for the radial tables.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg as sla
from scipy.spatial.distance import cdist

from sensorcheck.physics import operator
from sensorcheck.physics.bem import (
    BODY_IMAGE_TOL,
    BoardSystem,
    Panels,
    _radial_table_of,
    assemble,
    general_block,
    incidence,
    plane_block,
    plane_groups,
    pruned,
)
from sensorcheck.physics.greens import LayeredMedium
from sensorcheck.physics.operator import (
    BoardOperator,
    assemble_planes,
    operator_bytes,
    worker_bytes,
    workers_for_memory,
)

EPS0 = 8.8541878128e-12


def _grid(side: int, width_m: float, z_m: float, conductor: np.ndarray | int = 0) -> Panels:
    h = width_m / side
    xs = (np.arange(side) - side / 2.0) * h
    x, y = (a.ravel() for a in np.meshgrid(xs, xs, indexing="ij"))
    corners = np.stack([np.stack([x, y], 1), np.stack([x + h, y], 1), np.stack([x + h, y + h], 1), np.stack([x, y + h], 1)], 1)
    verts = np.concatenate([corners, np.full(corners.shape[:2] + (1,), z_m)], axis=2)
    cond = np.full(len(x), conductor) if np.isscalar(conductor) else conductor
    return Panels(verts, cond)


def _window() -> tuple[Panels, LayeredMedium]:
    """A 20 mm window: a 6 mm electrode ringed by ground on the top copper, a ground plane below."""
    top = _grid(24, 20e-3, 1.6e-3)
    r = np.hypot(top.centroid[:, 0], top.centroid[:, 1])
    top = Panels(top.verts, np.where(r < 3e-3, 0, np.where(r < 4e-3, 2, 1)))
    bottom = _grid(16, 20e-3, 0.0, 2)
    medium = LayeredMedium(eps_r=(1.0, 2.8, 4.4, 1.0), interfaces_m=(2.6e-3, 1.6e-3, 0.0), tol=1e-6)
    return Panels.concat([top, bottom]), medium


def _dense_maxwell(panels: Panels, medium: LayeredMedium, k: int) -> np.ndarray:
    """The reference: float64 whole matrix, LAPACK gesv."""
    s = incidence(panels, k)
    sigma = sla.solve(assemble(panels, medium), s)
    return (s * panels.area[:, None]).T @ sigma


def _dense_with_body(system: BoardSystem, body: Panels, z_range: tuple[float, float]) -> np.ndarray:
    """The reference for BoardSystem.with_body: the same blocks (board, board-body coupling both
    ways, the body's own) in one float64 matrix, solved directly with the body as conductor K."""
    m = system.medium
    layer = int(m.layer_of(body.centroid[:, 2].min())[0])
    b, cc = system.body_coupling(body.centroid, body, z_range)
    d = general_block(body.centroid, body, pruned(m.images(layer, layer), BODY_IMAGE_TOL))
    full = np.block([[assemble(system.panels, m), b], [cc, d]])
    k = system.n_conductors
    both = Panels.concat([system.panels, Panels(body.verts, np.full(len(body), k))])
    s = incidence(both, k + 1)
    return (s * both.area[:, None]).T @ sla.solve(full, s)


def _finger(x: float, y: float, z: float, r: float = 4e-3, length: float = 10e-3, sides: int = 12, rows: int = 4) -> Panels:
    """A closed cylinder (the finger) standing at (x, y) with its bottom at z."""
    th = np.linspace(0, 2 * np.pi, sides + 1)
    zs = z + np.linspace(0, length, rows + 1)
    quads = []
    for i in range(sides):
        for j in range(rows):
            a, b = th[i], th[i + 1]
            quads.append([[x + r * np.cos(a), y + r * np.sin(a), zs[j]], [x + r * np.cos(b), y + r * np.sin(b), zs[j]],
                          [x + r * np.cos(b), y + r * np.sin(b), zs[j + 1]], [x + r * np.cos(a), y + r * np.sin(a), zs[j + 1]]])
    for zc, sgn in ((z, -1), (z + length, 1)):
        for i in range(sides):
            a, b = th[i], th[i + 1]
            tri = [[x, y, zc], [x + r * np.cos(a), y + r * np.sin(a), zc], [x + r * np.cos(b), y + r * np.sin(b), zc]]
            quads.append((tri if sgn > 0 else tri[::-1]) + [tri[-1] if sgn > 0 else tri[0]])
    return Panels(np.array(quads), np.zeros(len(quads), dtype=int))


def test_blocked_assembly_is_the_whole_matrix_entry_by_entry() -> None:
    panels, medium = _window()
    groups, _ = plane_groups(panels)
    whole = assemble(panels, medium)
    blocked = assemble_planes(panels, medium, groups, plane_block, dtype=np.float64, chunk_entries=5000)  # dozens of row blocks
    assert blocked.flags.f_contiguous
    np.testing.assert_allclose(blocked, whole, rtol=1e-13, atol=0.0)


def test_the_farthest_pair_from_the_hulls_is_the_farthest_pair() -> None:
    rng = np.random.default_rng(3)
    a, b = rng.normal(size=(400, 2)), rng.normal(size=(300, 2)) + 2.0
    assert operator._block_rho_max(a, b) == pytest.approx(float(np.sqrt(cdist(a, b, "sqeuclidean").max())) + 1e-12, rel=1e-15)


def test_single_precision_operator_gives_the_double_precision_maxwell_matrix() -> None:
    panels, medium = _window()
    ref = _dense_maxwell(panels, medium, 3)
    system = BoardSystem(panels, medium, 3)
    assert system.op.dtype == np.float32 and system.op.factorisations == 1
    assert system.op.nbytes == operator_bytes(len(panels)) == len(panels) ** 2 * 4  # one float32 copy, factorised in place
    assert np.max(np.abs(system.c0 - ref)) <= 1e-5 * np.max(np.abs(ref))


def test_finger_through_the_recycled_basis_matches_the_dense_direct_solve() -> None:
    """Every finger position of an approach and a sideways search: the Maxwell matrix with the
    finger (a floating body) from the float32 operator, its recycled solves and the Schur
    complement, against the whole float64 matrix of the same blocks solved directly."""
    panels, medium = _window()
    system = BoardSystem(panels, medium, 3)
    positions = [(0.0, 0.0, 2.62e-3 + h) for h in (8e-3, 4e-3, 2e-3, 1e-3, 0.5e-3, 0.0)]
    positions += [(dx, dy, 2.62e-3) for dx, dy in ((1.5e-3, 0.0), (-1.5e-3, 0.0), (0.0, 1.5e-3))]
    columns = 0
    worst = 0.0
    signal_err, signal = [], []
    c_alone = _dense_maxwell(panels, medium, 3)[0, 0]
    for x, y, z in positions:
        body = _finger(x, y, z)
        columns += len(body)
        c = system.with_body(body, (2.62e-3, 2.62e-3 + 30e-3))
        ref = _dense_with_body(system, body, (2.62e-3, 2.62e-3 + 30e-3))
        worst = max(worst, float(np.max(np.abs(c - ref)) / np.max(np.abs(ref))))
        signal.append(ref[0, 0] - c_alone)  # the touch signal (the electrode's change)
        signal_err.append(abs((c[0, 0] - system.c0[0, 0]) - signal[-1]))
    assert worst <= 1e-5
    # the signal at every position within 1e-4 of its swing (approach.py interpolates to 1e-2 of it)
    assert max(signal_err) <= 1e-4 * max(abs(v) for v in signal)
    # counted work: fewer columns went through the triangular solves than the positions had panels
    op = system.op
    assert op.rank < columns
    assert op.solved_columns - 3 < 0.8 * columns  # 3: the conductors' own solve


def test_recycled_solve_against_direct_on_a_fixed_sequence_counts_its_rank() -> None:
    panels, medium = _window()
    groups, _ = plane_groups(panels)
    system = BoardSystem(panels, medium, 3)
    op64 = BoardOperator(panels, medium, groups, plane_block, dtype=np.float64)  # the recycling alone, without float32
    dense = assemble(panels, medium)
    for h in (6e-3, 3e-3, 1.5e-3, 0.0, 1.5e-3):  # the last one repeats: nothing new to solve
        body = _finger(0.5e-3, 0.0, 2.62e-3 + h)
        b, _ = system.body_coupling(body.centroid, body, (2.62e-3, 2.62e-3 + 30e-3))
        direct = sla.solve(dense, b)
        scale = np.max(np.abs(direct))
        before = op64.solved_columns
        w64 = op64.solve_recycled(b)
        added = op64.solved_columns - before
        assert np.max(np.abs(w64 - direct)) <= 1e-5 * scale  # the dropped directions (1e-7 of b) through A^-1
        # float32 factors and recycling together: about cond(A) x 6e-8
        assert np.max(np.abs(system.op.solve_recycled(b) - direct)) <= 1e-4 * scale
    assert added == 0  # the repeated height was wholly in the basis
    assert op64.rank == op64.solved_columns < 5 * b.shape[1]


def test_recycling_stops_growing_at_its_cap(monkeypatch: pytest.MonkeyPatch) -> None:
    panels, medium = _window()
    monkeypatch.setattr(operator, "RECYCLE_MAX_RANK", 40)
    system = BoardSystem(panels, medium, 3)
    body = _finger(0.0, 0.0, 2.62e-3)
    b, _ = system.body_coupling(body.centroid, body, (2.62e-3, 2.62e-3 + 30e-3))
    system.op.solve_recycled(b)
    rank = system.op.rank
    assert rank >= 40
    w = system.op.solve_recycled(b * 1.5 + 1e-3 * np.roll(b, 7, axis=0))  # new directions, but the basis is full
    assert system.op.rank == rank
    np.testing.assert_allclose(w, sla.solve(assemble(panels, medium), b * 1.5 + 1e-3 * np.roll(b, 7, axis=0)), rtol=0, atol=2e-5 * np.abs(w).max())


def test_isolated_square_plate_capacitance() -> None:
    """0.3607 x 4 pi eps0 a (Goto et al. 1992; from memory), here within 1.5 % on a 20 x 20 grid."""
    a = 10e-3
    plate = _grid(20, a, 0.0)
    medium = LayeredMedium(eps_r=(1.0,), interfaces_m=(), tol=1e-6)
    c = BoardSystem(plate, medium, 1).c0[0, 0]
    assert c == pytest.approx(0.3607 * 4 * np.pi * EPS0 * a, rel=0.015)


def test_radial_table_is_the_brute_force_image_sum() -> None:
    rng = np.random.default_rng(5)
    amp, dz = rng.normal(size=300) * 1e9, np.sort(rng.uniform(0.3e-3, 0.1, 300)) * rng.choice([-1, 1], 300)
    u, g, lap, d0 = _radial_table_of(amp, dz, 0.04, n=700)
    rho2 = np.maximum(np.exp(u) - d0 * d0, 0.0)
    r = np.sqrt(rho2[:, None] + dz[None, :] ** 2)
    np.testing.assert_allclose(g, (amp / r).sum(axis=1), rtol=1e-12, atol=1e-12 * np.abs(g).max())
    want = (amp * (rho2[:, None] - 2 * dz[None, :] ** 2) / r**5).sum(axis=1)
    np.testing.assert_allclose(lap, want, rtol=1e-11, atol=1e-12 * np.abs(want).max())


def test_memory_budget_per_worker_at_the_panel_limit() -> None:
    """Issue 15 item 4: at most 4 GB per worker at 12 000 panels (the stated sizes, counted)."""
    n = 12_000
    assert operator_bytes(n) == n * n * 4
    assert worker_bytes(n) <= 4 * 2**30
    # the stated parts: every one grows with n, none with the square except the operator
    assert worker_bytes(2 * n) - worker_bytes(n) < 4.5 * operator_bytes(n)


@pytest.mark.parametrize(("free_workers", "wanted", "expected"), [(3.5, 8, 3), (10, 2, 2), (0.2, 4, 1), (1.0, 1, 1)])
def test_workers_from_free_memory(free_workers: float, wanted: int, expected: int) -> None:
    per = worker_bytes(12_000)
    assert workers_for_memory(wanted, 12_000, int(free_workers * per)) == expected


def test_unknown_free_memory_keeps_the_workers_asked() -> None:
    assert workers_for_memory(4, 12_000, None) == 4
