"""Boundary-element (method of moments) electrostatics: panels, integrals, capacitance matrices.

Method
------
Piecewise-constant surface charge density on flat panels (triangles and quadrilaterals),
point collocation at the panel centroids.  The potential at a point of a panel's uniform unit
charge density is the integral of ``G(r, r')`` over the panel, where ``G`` is the layered-media
Green's function of :mod:`sensorcheck.physics.greens` (a sum of real images).

* Near terms (the panel itself and neighbours closer than ``NEAR_ETA`` panel sizes, for every
  image that comes that close): the exact integral of ``1/R`` over a flat polygon, summed edge by
  edge (D. R. Wilton et al., IEEE Trans. Antennas Propag. 32 (1984) 276; the form with the
  signed edge distances of R. D. Graglia, IEEE TAP 41 (1993) 1448).  It holds on the panel
  itself (the self term) and off it.
* Far terms: the centroid value plus the second-moment correction
  ``(m2/4) (R^2 - 3 (R.n)^2) / R^5`` (Taylor expansion of 1/R over the panel, with ``m2`` the
  mean squared distance of the panel from its centroid): fourth-order accurate in size/distance.
* Between two flat planes of copper (the board), the images far from both planes are summed
  once into a radial function ``g(rho)`` tabulated on a fine grid, so a board of N panels costs
  O(N^2) interpolations rather than O(N^2 x images).  Between the finger and a copper plane the
  same is done in two dimensions (rho, z of the finger point).

The capacitance (Maxwell) matrix ``C[k, l]`` is the charge on conductor k with conductor l at
1 V and all others at 0 V (SI, farads); :class:`BoardSystem` factorises the board block once and
adds a floating body (the finger) by a Schur complement, so each finger position only costs the
finger's rows and columns.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
from scipy.spatial.distance import cdist
from scipy.interpolate import RectBivariateSpline

from sensorcheck.physics.greens import Images, LayeredMedium
from sensorcheck.physics.operator import BoardOperator

MAX_CORNERS = 8  # panels are flat polygons of 3 to 8 corners (centroid inside)
NEAR_ETA = 1.5  # exact integration closer than this many panel sizes (from the panel centroid)


# --------------------------------------------------------------------------------------------
# panels


@dataclass(slots=True)
class Panels:
    """Flat panels, (n, 8, 3) corners in metres (fewer corners: the last one repeated)."""

    verts: np.ndarray
    conductor: np.ndarray  # (n,) int conductor index
    centroid: np.ndarray = field(init=False)
    normal: np.ndarray = field(init=False)
    area: np.ndarray = field(init=False)
    size: np.ndarray = field(init=False)
    m2: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        v = np.asarray(self.verts, dtype=float)
        if v.ndim != 3 or v.shape[2] != 3 or v.shape[1] < 3 or v.shape[1] > MAX_CORNERS:
            raise ValueError("panels must be (n, 3..8, 3) corner arrays")
        if v.shape[1] < MAX_CORNERS:
            v = np.concatenate([v, np.repeat(v[:, -1:], MAX_CORNERS - v.shape[1], axis=1)], axis=1)
        self.verts = v
        self.conductor = np.asarray(self.conductor, dtype=int).reshape(-1)
        nxt = np.roll(v, -1, axis=1)
        nrm = np.cross(v, nxt).sum(axis=1)  # Newell's method: twice the vector area
        nlen = np.linalg.norm(nrm, axis=1)
        if np.any(nlen <= 0):
            raise ValueError("degenerate panel (zero area)")
        self.normal = nrm / nlen[:, None]
        # fan triangles (v0, vk, vk+1)
        a = v[:, 0][:, None, :]
        b, c = v[:, 1:-1], v[:, 2:]
        ta = 0.5 * np.einsum("ijk,ik->ij", np.cross(b - a, c - a), self.normal)  # signed areas
        area = ta.sum(axis=1)
        tc = (a + b + c) / 3.0
        cen = np.einsum("ij,ijk->ik", ta, tc) / area[:, None]
        self.area = area
        self.centroid = cen
        m = cen[:, None, :]
        mids = ((a + b) / 2 - m, (b + c) / 2 - m, (c + a) / 2 - m)
        tri_m2 = sum(np.sum(x * x, axis=2) for x in mids) / 3.0  # midpoint rule: exact for quadratics
        self.m2 = np.einsum("ij,ij->i", ta, tri_m2) / area
        self.size = 2.0 * np.max(np.linalg.norm(v - cen[:, None, :], axis=2), axis=1)

    def __len__(self) -> int:
        return int(self.area.size)

    def subset(self, idx: np.ndarray) -> "Panels":
        return Panels(self.verts[idx], self.conductor[idx])

    @staticmethod
    def concat(parts: list["Panels"]) -> "Panels":
        return Panels(np.concatenate([p.verts for p in parts]), np.concatenate([p.conductor for p in parts]))


# --------------------------------------------------------------------------------------------
# integrals


def polygon_integral(obs: np.ndarray, verts: np.ndarray) -> np.ndarray:
    """Exact ``int 1/|r - r'| dA'`` over flat polygons ``verts`` (m, k, 3) seen from ``obs`` (m, 3)."""
    v = verts
    nxt = np.roll(v, -1, axis=1)
    nrm = np.cross(v, nxt).sum(axis=1)
    nrm /= np.linalg.norm(nrm, axis=1)[:, None]
    d = np.einsum("ij,ij->i", obs - v[:, 0], nrm)
    proj = obs - d[:, None] * nrm
    edge = nxt - v
    elen = np.linalg.norm(edge, axis=2)
    scale = np.max(elen, axis=1, keepdims=True)
    valid = elen > 1e-12 * scale
    lhat = edge / np.where(valid, elen, 1.0)[:, :, None]
    uhat = np.cross(lhat, nrm[:, None, :])
    rel = v - proj[:, None, :]
    relp = nxt - proj[:, None, :]
    lm = np.einsum("ijk,ijk->ij", rel, lhat)
    lp = np.einsum("ijk,ijk->ij", relp, lhat)
    p0 = np.einsum("ijk,ijk->ij", rel, uhat)
    ad = np.abs(d)[:, None]
    r0sq = p0 * p0 + ad * ad
    rm = np.sqrt(lm * lm + r0sq)
    rp = np.sqrt(lp * lp + r0sq)
    tiny = (1e-14 * scale) ** 2
    ok = valid & (r0sq > tiny)
    fp = np.where(lp >= 0, rp + lp, r0sq / np.maximum(rp - lp, 1e-300))
    fm = np.where(lm >= 0, rm + lm, r0sq / np.maximum(rm - lm, 1e-300))
    with np.errstate(divide="ignore", invalid="ignore"):
        ln = np.where(ok, np.log(np.where(ok, fp, 1.0) / np.where(ok, fm, 1.0)), 0.0)
    at = np.arctan2(p0 * lp, r0sq + ad * rp) - np.arctan2(p0 * lm, r0sq + ad * rm)
    terms = np.where(valid, p0 * ln - ad * at, 0.0)
    return terms.sum(axis=1)


def _far(rx: np.ndarray, ry: np.ndarray, rz: np.ndarray, nz_dot: np.ndarray, m2: np.ndarray) -> np.ndarray:
    """1/R plus the panel second-moment correction; ``nz_dot`` = R.n (projection on the panel normal)."""
    r2 = rx * rx + ry * ry + rz * rz
    inv = 1.0 / np.sqrt(r2)
    inv2 = inv * inv
    return inv + (m2 / 4.0) * (1.0 - 3.0 * nz_dot * nz_dot * inv2) * inv2 * inv


def _image_verts(verts: np.ndarray, s: float, t: float) -> np.ndarray:
    out = verts.copy()
    out[..., 2] = s * verts[..., 2] + t
    return out


def general_block(obs: np.ndarray, src: Panels, images: Images, *, exact_all: bool = True) -> np.ndarray:
    """P[i, j] = sum_n A_n int_{panel j, image n} 1/R, for arbitrary panels (loops over images)."""
    m, n = len(obs), len(src)
    out = np.zeros((m, n))
    ox, oy, oz = (obs[:, k][:, None] for k in range(3))
    size2 = (NEAR_ETA * src.size) ** 2
    for amp, s, t in zip(images.amplitude, images.s, images.t):
        cz = s * src.centroid[:, 2] + t
        rx = ox - src.centroid[None, :, 0]
        ry = oy - src.centroid[None, :, 1]
        rz = oz - cz[None, :]
        r2 = rx * rx + ry * ry + rz * rz
        near = r2 < size2[None, :]
        nx, ny, nzz = src.normal[:, 0], src.normal[:, 1], s * src.normal[:, 2]
        rn = rx * nx[None, :] + ry * ny[None, :] + rz * nzz[None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            val = src.area[None, :] * _far(rx, ry, rz, rn, src.m2[None, :])
        val[near] = 0.0
        ii, jj = np.nonzero(near)
        if ii.size:
            val[ii, jj] = polygon_integral(obs[ii], _image_verts(src.verts[jj], s, t))
        out += amp * val
    return out


def pair_values(obs: np.ndarray, src: Panels, images: Images) -> np.ndarray:
    """``sum_n A_n int_{panel k, image n} 1/R`` seen from ``obs[k]``: one value per (point, panel) pair.

    The pairwise form of :func:`general_block`, with the same rule: the exact polygon integral
    for every image closer than ``NEAR_ETA`` panel sizes, the centroid value plus the
    second-moment correction beyond.  It serves the few close pairs of two otherwise
    tabulated blocks (the finger over the board: :meth:`BoardSystem.body_coupling`).
    """
    out = np.zeros(len(obs))
    size2 = (NEAR_ETA * src.size) ** 2
    for amp, s, t in zip(images.amplitude, images.s, images.t):
        r = obs - src.centroid
        r[:, 2] = obs[:, 2] - (s * src.centroid[:, 2] + t)
        r2 = np.einsum("ij,ij->i", r, r)
        near = r2 < size2
        rn = r[:, 0] * src.normal[:, 0] + r[:, 1] * src.normal[:, 1] + r[:, 2] * s * src.normal[:, 2]
        val = np.zeros(len(obs))
        far = ~near
        val[far] = src.area[far] * _far(r[far, 0], r[far, 1], r[far, 2], rn[far], src.m2[far])
        if np.any(near):
            val[near] = polygon_integral(obs[near], _image_verts(src.verts[near], s, t))
        out += amp * val
    return out


BODY_IMAGE_TOL = 1e-4  # images of a body on itself below this fraction of the direct term are lumped (pruned)


def pruned(images: Images, rel_tol: float) -> Images:
    """The images whose amplitude is at least ``rel_tol`` of the largest, the others lumped.

    The images below the tolerance are not dropped: those of each direction (``s``) become one
    image of their summed amplitude at their amplitude-weighted mean place.  Dropped, they took
    0.4 % of the direct term away from a finger's own block over a thin overlay (many small
    images of rays bouncing in the stack), and a finger 0.07 mm from copper turns that into a
    2.7 % error in the touch delta; lumped (below 1e-4: 54 of 106 images kept over 1.6 mm FR-4
    under PMMA), 0.1 %, and their total charge stays where it was on average.
    """
    big = np.abs(images.amplitude) >= rel_tol * np.max(np.abs(images.amplitude))
    amp, s, t = [images.amplitude[big]], [images.s[big]], [images.t[big]]
    for sign in (-1.0, 1.0):
        rest = ~big & (images.s == sign)
        if np.any(rest):
            w = np.abs(images.amplitude[rest])
            amp.append(np.array([images.amplitude[rest].sum()]))
            s.append(np.array([sign]))
            t.append(np.array([float(np.sum(w * images.t[rest]) / np.sum(w))]))
    return Images(np.concatenate(amp), np.concatenate(s), np.concatenate(t))


def _merge_plane_images(images: Images, z_src: float) -> tuple[np.ndarray, np.ndarray]:
    """Images of a source plane: (amplitude, z_img) with equal z_img merged."""
    zi = images.s * z_src + images.t
    key = np.round(zi / 1e-12).astype(np.int64)
    uniq, inv = np.unique(key, return_inverse=True)
    amp = np.zeros(uniq.size)
    np.add.at(amp, inv, images.amplitude)
    zimg = np.zeros(uniq.size)
    np.add.at(zimg, inv, zi)
    cnt = np.bincount(inv)
    return amp, zimg / cnt


#: tables cached per process (keyed by their inputs, the range rounded up to RANGE_STEP): the
#: same pair of copper planes, or the same finger height, recurs in every window of a board
_TABLE_CACHE: dict[tuple[object, ...], object] = {}
TABLE_CACHE_MAX = 400
#: a table's range is rounded up to a power of this factor, so that windows of about the same
#: size share one table (a wider range on the same number of nodes: the tables' interpolation
#: error, far below the mesh's, changes by a few parts in a million)
RANGE_STEP = 2.0 ** 0.25


def _range_up(rho_max: float) -> float:
    return float(RANGE_STEP ** np.ceil(np.log(rho_max) / np.log(RANGE_STEP)))


def _cached(key: tuple[object, ...], make: "Callable[[], object]") -> object:
    hit = _TABLE_CACHE.get(key)
    if hit is None:
        if len(_TABLE_CACHE) >= TABLE_CACHE_MAX:
            _TABLE_CACHE.pop(next(iter(_TABLE_CACHE)))  # the oldest first
        hit = _TABLE_CACHE[key] = make()
    return hit


def _radial_table(amp: np.ndarray, dz: np.ndarray, rho_max: float, n: int = 20000) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """:func:`_radial_table_of` over a range rounded up (:data:`RANGE_STEP`), cached per process."""
    r = _range_up(rho_max)
    key = ("radial", amp.tobytes(), dz.tobytes(), r, n)
    return _cached(key, lambda: _radial_table_of(amp, dz, r, n))  # type: ignore[return-value]


def _radial_table_of(amp: np.ndarray, dz: np.ndarray, rho_max: float, n: int = 20000) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """Tabulate g(rho) = sum A/R and l(rho) = sum A (rho^2 - 2 dz^2)/R^5 on u = log(rho^2 + d0^2).

    Made a few hundred grid rows at a time (the temporaries stay in cache) with 1/R^5 as products
    of 1/R and 1/R^2 rather than a power: about ten times faster than one pass with ``**``, the
    same sums to rounding (tests/physics/test_operator.py).
    """
    d0 = float(np.min(np.abs(dz)))
    u = np.linspace(np.log(d0 * d0), np.log(rho_max * rho_max * 1.01 + d0 * d0), n)
    rho2 = np.exp(u) - d0 * d0
    rho2 = np.maximum(rho2, 0.0)
    g = np.empty(n)
    lap = np.empty(n)
    dz2 = dz * dz
    step = max(1, _TABLE_BLOCK // max(1, dz.size))
    for k in range(0, n, step):
        r2 = rho2[k:k + step, None] + dz2[None, :]
        inv2 = np.divide(1.0, r2, out=r2)
        inv = np.sqrt(inv2)
        g[k:k + step] = inv @ amp
        inv *= inv2
        inv *= inv2
        inv *= rho2[k:k + step, None] - 2.0 * dz2[None, :]
        lap[k:k + step] = inv @ amp
    return u, g, lap, d0


#: grid rows x images made at once by _radial_table_of
_TABLE_BLOCK = 262_144


def _lerp2(x: np.ndarray, grid: np.ndarray, f1: np.ndarray, f2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Linear interpolation of two tables on the same uniform grid (faster than np.interp).

    ``x`` is overwritten (it becomes the fractional position); the tables' dtype is kept.
    """
    step = (grid[-1] - grid[0]) / (grid.size - 1)
    x -= grid[0]
    x *= 1.0 / step
    np.maximum(x, 0.0, out=x)
    i = x.astype(np.intp)
    np.minimum(i, grid.size - 2, out=i)
    x -= i
    a1 = f1[i]
    d1 = f1[i + 1]
    d1 -= a1
    d1 *= x
    a1 += d1
    a2 = f2[i]
    d2 = f2[i + 1]
    d2 -= a2
    d2 *= x
    a2 += d2
    return a1, a2


def plane_block(obs: np.ndarray, z_obs: float, src: Panels, z_src: float, images: Images,
                rho_max: float | None = None) -> np.ndarray:
    """P block between two horizontal planes of panels (obs points all at z_obs, src at z_src).

    ``rho_max``: the in-plane distance the far-image table must span (default: this block's
    largest); a block assembled in parts passes the whole block's, so every part reads one table.
    """
    amp, zimg = _merge_plane_images(images, z_src)
    dz = z_obs - zimg
    size_ref = float(np.median(src.size))
    close = np.abs(dz) < 1.0 * size_ref
    close[np.argmin(np.abs(dz))] = True
    rho2 = cdist(obs[:, :2], src.centroid[:, :2], "sqeuclidean")
    size2 = (NEAR_ETA * src.size) ** 2
    ii, jj = np.nonzero(rho2 < size2[None, :])  # near in the plane: a superset for every image
    m2q = (src.m2 / 4.0)[None, :]
    area = src.area[None, :]
    out: np.ndarray | None = None
    for a, dzk, zk in zip(amp[close], dz[close], zimg[close]):
        r2 = rho2 + dzk * dzk
        r2[ii, jj] = 1.0
        inv = np.sqrt(r2, out=r2)
        np.divide(1.0, inv, out=inv)
        # area * (1/R + m2/4 (rho^2 - 2 dz^2)/R^5): with R.n = dz on a horizontal plane
        if dzk == 0.0:
            val = inv * inv
        else:
            val = rho2 - 2.0 * dzk * dzk
            val *= inv
            val *= inv
            val *= inv
            val *= inv
        val *= m2q
        val += 1.0
        val *= inv
        val *= area
        del inv, r2
        vv = src.verts[jj].copy()
        vv[..., 2] = zk
        val[ii, jj] = polygon_integral(obs[ii], vv)
        if out is None:
            val *= a
            out = val
        else:
            val *= a
            out += val
    assert out is not None
    if np.any(~close):
        if rho_max is None:
            rho_max = float(np.sqrt(rho2.max())) + 1e-12
        u, g, lap, d0 = _radial_table(amp[~close], dz[~close], rho_max)
        uq = rho2.astype(np.float32)
        uq += np.float32(d0 * d0)
        np.log(uq, out=uq)
        gi, li = _lerp2(uq, u, g.astype(np.float32), lap.astype(np.float32))
        li *= m2q.astype(np.float32)
        li += gi
        li *= area.astype(np.float32)
        out += li
    return out


def plane_groups(panels: Panels, tol: float = 1e-12) -> tuple[dict[float, np.ndarray], np.ndarray]:
    """Horizontal panels grouped by z (z -> indices), and the indices of the other panels."""
    horiz = np.abs(np.abs(panels.normal[:, 2]) - 1.0) < 1e-9
    zs = panels.centroid[:, 2]
    groups: dict[float, np.ndarray] = {}
    if np.any(horiz):
        zh = zs[horiz]
        key = np.round(zh / max(tol, 1e-15)).astype(np.int64)
        idx_h = np.nonzero(horiz)[0]
        for k in np.unique(key):
            sel = idx_h[key == k]
            groups[float(np.mean(zs[sel]))] = sel
    return groups, np.nonzero(~horiz)[0]


def assemble(panels: Panels, medium: LayeredMedium) -> np.ndarray:
    """The full collocation matrix P (V per C/m^2) for any set of panels."""
    n = len(panels)
    p = np.zeros((n, n))
    groups, other = plane_groups(panels)
    layer = medium.layer_of(panels.centroid[:, 2])
    for zo, io in groups.items():
        lo = int(layer[io[0]])
        for zs_, js in groups.items():
            ls = int(layer[js[0]])
            p[np.ix_(io, js)] = plane_block(panels.centroid[io], zo, panels.subset(js), zs_, medium.images(ls, lo))
    # everything that involves a non-horizontal panel: general blocks by layer pair
    if other.size:
        allidx = np.arange(n)
        for ls in np.unique(layer[other]):
            js = other[layer[other] == ls]
            for lo in np.unique(layer):
                io = allidx[layer == lo]
                p[np.ix_(io, js)] = general_block(panels.centroid[io], panels.subset(js), medium.images(int(ls), int(lo)))
        for zs_, js in groups.items():
            ls = int(layer[js[0]])
            for lo in np.unique(layer[other]):
                io = other[layer[other] == lo]
                p[np.ix_(io, js)] = general_block(panels.centroid[io], panels.subset(js), medium.images(ls, int(lo)))
    return p


def incidence(panels: Panels, n_conductors: int) -> np.ndarray:
    s = np.zeros((len(panels), n_conductors))
    s[np.arange(len(panels)), panels.conductor] = 1.0
    return s


def capacitance_matrix(panels: Panels, medium: LayeredMedium, n_conductors: int | None = None) -> np.ndarray:
    """Maxwell capacitance matrix (F) of the conductors numbered in ``panels.conductor``."""
    k = int(panels.conductor.max()) + 1 if n_conductors is None else n_conductors
    p = assemble(panels, medium)
    s = incidence(panels, k)
    sigma = sla.lu_solve(sla.lu_factor(p, overwrite_a=True, check_finite=False), s, check_finite=False)
    return (s * panels.area[:, None]).T @ sigma


# --------------------------------------------------------------------------------------------
# the board block, factorised once, and a floating body added by a Schur complement


@dataclass(slots=True)
class BoardSystem:
    """Board conductors (horizontal copper planes only) with the factorised collocation matrix."""

    panels: Panels
    medium: LayeredMedium
    n_conductors: int
    op: BoardOperator = field(init=False, repr=False)  # the factorised board block (physics/operator.py)
    x: np.ndarray = field(init=False, repr=False)  # A^-1 S
    c0: np.ndarray = field(init=False)  # Maxwell matrix without the body (F)
    groups: dict[float, np.ndarray] = field(init=False, repr=False)

    def __post_init__(self) -> None:
        groups, other = plane_groups(self.panels)
        if other.size:
            raise ValueError("board conductors must be horizontal copper")
        self.groups = groups
        self.op = BoardOperator(self.panels, self.medium, groups, plane_block)
        s = incidence(self.panels, self.n_conductors)
        self.x = self.op.solve(s)
        self.c0 = (s * self.panels.area[:, None]).T @ self.x

    # ---- coupling between the board and a body in one layer above the board (the finger)
    def _coupling_table(self, z_plane: float, z_lo: float, z_hi: float, rho_max: float, obs_layer: int) -> tuple[RectBivariateSpline, RectBivariateSpline, float, float]:
        rho_max = _range_up(rho_max)
        key = self._coupling_key(z_plane, z_lo, z_hi, rho_max, obs_layer)
        return _cached(key, lambda: self._make_coupling_table(z_plane, z_lo, z_hi, rho_max, obs_layer))  # type: ignore[return-value]

    def _coupling_key(self, z_plane: float, z_lo: float, z_hi: float, rho_max: float, obs_layer: int) -> tuple[object, ...]:
        m = self.medium
        return ("coupling", m.eps_r, m.interfaces_m, m.ground_below, m.tol, round(z_plane, 12), round(z_lo, 12),
                round(z_hi, 12), rho_max, obs_layer)

    def _make_coupling_table(self, z_plane: float, z_lo: float, z_hi: float, rho_max: float, obs_layer: int) -> tuple[RectBivariateSpline, RectBivariateSpline, float, float]:
        ls = int(self.medium.layer_of(z_plane)[0])
        amp, zimg = _merge_plane_images(self.medium.images(ls, obs_layer), z_plane)
        d0 = float(z_lo - zimg.max())
        if d0 <= 0:
            raise ValueError("the body must stay above every image of the board")
        u = np.linspace(np.log(d0 * d0), np.log(rho_max**2 * 1.01 + d0 * d0), 160)
        v = np.linspace(np.log(d0), np.log(z_hi - z_lo + d0) + 1e-9, 120)
        rho2 = np.maximum(np.exp(u) - d0 * d0, 0.0)
        zz = z_lo + np.exp(v) - d0
        dz = zz[None, :, None] - zimg[None, None, :]
        r2 = rho2[:, None, None] + dz * dz
        inv = 1.0 / np.sqrt(r2)
        rref = np.sqrt(rho2[:, None] + (zz[None, :] - zimg.max()) ** 2)
        g = (inv @ amp) * rref
        lap = (((rho2[:, None, None] - 2.0 * dz * dz) * inv**5) @ amp) * rref**3
        tg = RectBivariateSpline(u, v, g, kx=3, ky=3)
        tl = RectBivariateSpline(u, v, lap, kx=3, ky=3)
        return tg, tl, d0, float(zimg.max())

    def body_coupling(self, obs: np.ndarray, body: Panels, z_range: tuple[float, float]) -> tuple[np.ndarray, np.ndarray]:
        """(P_bf, P_fb): potentials on the board from body panels, and on the body from board panels."""
        nb, nf = len(self.panels), len(obs)
        p_bf = np.zeros((nb, nf))
        p_fb = np.zeros((nf, nb))
        obs_layer = int(self.medium.layer_of(obs[:, 2].min())[0])
        if np.any(self.medium.layer_of(obs[:, 2]) != obs_layer):
            raise ValueError("the body must lie within one layer")
        horiz = (np.abs(np.abs(body.normal[:, 2]) - 1.0) < 1e-9).astype(float)
        zkey = np.round(obs[:, 2] / 1e-9).astype(np.int64)
        zvals, zinv = np.unique(zkey, return_inverse=True)
        for zp, idx in self.groups.items():
            c = self.panels.centroid[idx]
            rho2 = (obs[:, 0][:, None] - c[None, :, 0]) ** 2 + (obs[:, 1][:, None] - c[None, :, 1]) ** 2
            rho_max = float(np.sqrt(rho2.max())) + 1e-9
            rho_max = _range_up(rho_max)
            tg, tl, d0, ztop = self._coupling_table(zp, z_range[0], z_range[1], rho_max, obs_layer)
            # the spline evaluated once per distinct body height on a fine u grid, then linear in u
            u_lo, u_hi = np.log(d0 * d0), np.log(rho_max**2 * 1.01 + d0 * d0)
            ufine = np.linspace(u_lo, u_hi, 4000)
            tkey = self._coupling_key(zp, z_range[0], z_range[1], rho_max, obs_layer)
            g = np.empty(rho2.shape)
            lap = np.empty(rho2.shape)
            for q in range(zvals.size):
                rows = np.nonzero(zinv == q)[0]
                z = obs[rows[0], 2]
                vz = float(np.log(z - z_range[0] + d0))
                gt, lt = _cached(("fine", tkey, vz), lambda: (tg.ev(ufine, np.full(ufine.shape, vz)),  # type: ignore[misc]
                                                              tl.ev(ufine, np.full(ufine.shape, vz))))
                r2 = rho2[rows]
                uq = np.log(r2 + d0 * d0)
                gi, li = _lerp2(uq, ufine, gt, lt)
                rref = np.sqrt(r2 + (z - ztop) ** 2)
                g[rows] = gi / rref
                lap[rows] = li / rref**3
            a_b = self.panels.area[idx]
            m_b = self.panels.m2[idx]
            p_fb[:, idx] = a_b[None, :] * (g + (m_b[None, :] / 4.0) * lap)
            p_bf[idx, :] = (body.area[:, None] * (g + (body.m2 * horiz)[:, None] / 4.0 * lap)).T
            self._exact_close_pairs(obs, body, zp, idx, obs_layer, p_bf, p_fb)
        return p_bf, p_fb

    def _exact_close_pairs(self, obs: np.ndarray, body: Panels, z_plane: float, idx: np.ndarray, obs_layer: int,
                           p_bf: np.ndarray, p_fb: np.ndarray) -> None:
        """Replace the tabulated values of close body-board pairs by the board's own near integrals.

        The table (:meth:`_make_coupling_table`) is the centroid value plus the second-moment
        correction: right for pairs a few panel sizes apart, badly wrong where the body comes
        within a panel size of the copper (a finger on a thin overlay: panels of 0.8 mm at
        0.07 mm).  Every pair closer than ``NEAR_ETA`` times the larger of the two panel sizes
        to any image is recomputed by :func:`pair_values` in both directions (board panel seen
        from the body's collocation point, body panel seen from the board's), image by image.
        """
        ls = int(self.medium.layer_of(z_plane)[0])
        im_fb = self.medium.images(ls, obs_layer)  # a board panel's images, seen from the body's layer
        im_bf = self.medium.images(obs_layer, ls)  # a body panel's images, seen from the board's layer
        c = self.panels.centroid[idx]
        rho2 = (obs[:, 0][:, None] - c[None, :, 0]) ** 2 + (obs[:, 1][:, None] - c[None, :, 1]) ** 2
        reach2 = (NEAR_ETA * np.maximum(body.size[:, None], self.panels.size[idx][None, :])) ** 2
        # the nearest image height in each direction: a superset of the pairs pair_values integrates exactly
        dz_fb = np.min(np.abs(obs[:, 2][:, None] - (im_fb.s * z_plane + im_fb.t)[None, :]), axis=1)
        dz_bf = np.min(np.abs(z_plane - (im_bf.s[None, :] * obs[:, 2][:, None] + im_bf.t[None, :])), axis=1)
        dz2 = np.minimum(dz_fb, dz_bf) ** 2
        jf, ib = np.nonzero(rho2 + dz2[:, None] < reach2)
        if jf.size == 0:
            return
        gb = idx[ib]
        p_fb[jf, gb] = pair_values(obs[jf], self.panels.subset(gb), im_fb)
        p_bf[gb, jf] = pair_values(self.panels.centroid[gb], body.subset(jf), im_bf)

    def with_body(self, body: Panels, z_range: tuple[float, float], self_key: tuple[object, ...] | None = None,
                  body_at_origin: Panels | None = None) -> np.ndarray:
        """Maxwell matrix (F) of the board conductors plus one floating body (last row/column).

        ``self_key`` names the body's shape and height (not its x, y), and ``body_at_origin`` is the
        same body moved sideways to x = y = 0: the body's own block does not change when it moves
        sideways over the layered medium, so bodies of one key share the block made at the origin
        (the same numbers whichever position came first).
        """
        obs = body.centroid
        obs_layer = int(self.medium.layer_of(obs[:, 2].min())[0])
        m = self.medium

        def own() -> np.ndarray:
            src = body if body_at_origin is None else body_at_origin
            return general_block(src.centroid, src, pruned(m.images(obs_layer, obs_layer), BODY_IMAGE_TOL))

        d = own() if self_key is None or body_at_origin is None else _cached(("body", m.eps_r, m.interfaces_m, m.ground_below, m.tol, *self_key), own)
        b, cc = self.body_coupling(obs, body, z_range)
        w = self.op.solve_recycled(b)  # A^-1 B (physics/operator.py: by the span of earlier positions)
        sch = d - cc @ w
        lu_s = sla.lu_factor(sch, check_finite=False)
        s_b = incidence(self.panels, self.n_conductors)
        sbw = s_b * self.panels.area[:, None]
        left = sbw.T @ w  # K x Nf
        right = cc @ self.x  # Nf x K
        ones = np.ones(len(body))
        sinv_right = sla.lu_solve(lu_s, right, check_finite=False)
        sinv_one = sla.lu_solve(lu_s, ones, check_finite=False)
        k = self.n_conductors
        c = np.zeros((k + 1, k + 1))
        c[:k, :k] = self.c0 + left @ sinv_right
        c[:k, k] = -left @ sinv_one
        c[k, :k] = -body.area @ sinv_right
        c[k, k] = body.area @ sinv_one
        return c
