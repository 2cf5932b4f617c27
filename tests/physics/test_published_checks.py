"""The field solver against published capacitance values (each source and tolerance beside its check).

Default meshes must be within 0.5 % of each value; the convergence test shows the error falling
as the mesh is refined.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import ellipk
from shapely.geometry import Point, box

from sensorcheck.physics.bem import Panels, capacitance_matrix
from sensorcheck.physics.greens import EPS0, LayeredMedium
from sensorcheck.physics.mesh import MeshSpec, box_panels, flat_panels, sphere_panels

FREE = LayeredMedium.free_space()
TOL = 0.005  # 0.5 %: the bound on the default-mesh error
DISK_SPEC = MeshSpec(0.1, 0.3, 0.3)  # for a unit radius


def _c(panels: np.ndarray, medium: LayeredMedium = FREE) -> np.ndarray:
    conductor = np.zeros(len(panels), dtype=int)
    return capacitance_matrix(Panels(panels, conductor), medium)


def _two_terminal(c: np.ndarray) -> float:
    """Capacitance between conductors 0 and 1 (series view of the Maxwell matrix)."""
    return float((c[0, 0] * c[1, 1] - c[0, 1] * c[1, 0]) / (c[0, 0] + c[1, 1] + c[0, 1] + c[1, 0]))


def _disk(spec: MeshSpec = DISK_SPEC, z: float = 0.0) -> np.ndarray:
    return flat_panels(Point(0, 0).buffer(1.0, quad_segs=128), z, spec)


def test_thin_disk_is_8_eps0_a() -> None:
    # exact: C = 8 eps0 a for a thin circular disk in free space (any electrostatics text, e.g. Jackson)
    c = _c(_disk())[0, 0]
    assert c == pytest.approx(8 * EPS0, rel=TOL, abs=0.0)


def test_unit_square_plate_read_1997() -> None:
    # F. H. Read, J. Comput. Phys. 133 (1997) 1-5: C = 0.3667874 x 4 pi eps0 (1 m side)
    c = _c(flat_panels(box(-0.5, -0.5, 0.5, 0.5), 0.0, MeshSpec(0.05, 0.15, 0.3)))[0, 0]
    assert c == pytest.approx(0.3667874 * 4 * np.pi * EPS0, rel=TOL, abs=0.0)


def test_sphere_is_4_pi_eps0_a() -> None:
    # exact: C = 4 pi eps0 a (flat panels inscribed in the sphere: the error is the polyhedron's)
    c = _c(sphere_panels(1.0, 3))[0, 0]
    assert c == pytest.approx(4 * np.pi * EPS0, rel=TOL, abs=0.0)


def test_unit_cube_read_1997() -> None:
    # F. H. Read 1997 (and Hwang and Mascagni 2004): C = 0.6606785 x 4 pi eps0 (1 m edge)
    c = _c(box_panels(1.0, MeshSpec(0.05, 0.2, 0.4)))[0, 0]
    assert c == pytest.approx(0.6606785 * 4 * np.pi * EPS0, rel=TOL, abs=0.0)


@pytest.mark.parametrize("d_over_a, ref_pf", [(0.5, 94.9018), (0.1, 327.0057)])
def test_two_coaxial_disks_love_1949(d_over_a: float, ref_pf: float) -> None:
    # E. R. Love, Q. J. Mech. Appl. Math. 2 (1949) 428: two equal coaxial disks (a = 1 m),
    # two-terminal capacitance, values from the reference note (Love's equation solved numerically)
    v = _disk(MeshSpec(0.05, 0.1 if d_over_a < 0.2 else 0.25, 0.3))  # interior panels no wider than the gap
    both = np.concatenate([v, v + np.array([0.0, 0.0, d_over_a])])
    cond = np.r_[np.zeros(len(v), dtype=int), np.ones(len(v), dtype=int)]
    c = capacitance_matrix(Panels(both, cond), FREE)
    assert _two_terminal(c) == pytest.approx(ref_pf * 1e-12, rel=TOL, abs=0.0)


@pytest.mark.parametrize("h_over_a, ref_pf", [(0.25, 189.8037), (0.05, 654.0114)])
def test_disk_over_ground_plane_love_1949(h_over_a: float, ref_pf: float) -> None:
    # Love 1949 with kappa = 2h/a: a disk at height h over a perfect ground plane (a = 1 m);
    # the plane is the layered medium's perfect reflector (an image of opposite sign)
    ground = LayeredMedium(eps_r=(1.0, 1.0), interfaces_m=(0.0,), ground_below=True)
    c = _c(_disk(MeshSpec(0.05, 0.1 if h_over_a < 0.1 else 0.25, 0.3), z=h_over_a), ground)[0, 0]
    assert c == pytest.approx(ref_pf * 1e-12, rel=TOL, abs=0.0)


def _strips_per_length(medium: LayeredMedium, spec: MeshSpec, w: float = 1e-3, s: float = 0.5e-3, length: float = 8e-3) -> float:
    """(C(2L) - C(L)) / L for two coplanar strips: the ends cancel (long-strip difference)."""

    def c_of(ll: float) -> float:
        a = flat_panels(box(-ll / 2, s / 2, ll / 2, s / 2 + w), 0.0, spec)
        b = flat_panels(box(-ll / 2, -s / 2 - w, ll / 2, -s / 2), 0.0, spec)
        cond = np.r_[np.zeros(len(a), dtype=int), np.ones(len(b), dtype=int)]
        return _two_terminal(capacitance_matrix(Panels(np.concatenate([a, b]), cond), medium))

    return (c_of(2 * length) - c_of(length)) / length


def _coplanar_strips_closed_form(eps_eff: float, w: float = 1e-3, s: float = 0.5e-3) -> float:
    # conformal mapping (e.g. Gupta et al., Microstrip Lines and Slotlines, 1996):
    # C = eps0 eps_eff K(k')/K(k), k = s/(s + 2w); scipy's ellipk takes the parameter m = k^2
    k = s / (s + 2 * w)
    return EPS0 * eps_eff * float(ellipk(1 - k * k) / ellipk(k * k))


def test_coplanar_strips_free_space_conformal_mapping() -> None:
    # w = 1 mm, s = 0.5 mm: 16.829 pF/m (reference note); checked against the elliptic integrals
    ref = _coplanar_strips_closed_form(1.0)
    assert ref == pytest.approx(16.829e-12, rel=1e-4, abs=0.0)
    assert _strips_per_length(FREE, MeshSpec(0.2e-3, 0.4e-3, 0.3)) == pytest.approx(ref, rel=TOL, abs=0.0)


def test_coplanar_strips_on_dielectric_half_space() -> None:
    # strips on the surface of an eps_r 4.4 half-space: eps_eff = (1 + 4.4)/2 exactly
    # (conformal mapping; 45.438 pF/m in the reference note) -- exercises the interface images
    half = LayeredMedium(eps_r=(1.0, 4.4), interfaces_m=(0.0,))
    ref = _coplanar_strips_closed_form(2.7)
    assert ref == pytest.approx(45.438e-12, rel=1e-4, abs=0.0)
    assert _strips_per_length(half, MeshSpec(0.2e-3, 0.4e-3, 0.3)) == pytest.approx(ref, rel=TOL, abs=0.0)


def test_disk_on_dielectric_half_space_image_closed_form() -> None:
    # a thin disk on the surface of a dielectric half-space: its charge sees the mean permittivity
    # (the image of a charge on the interface coincides with it, factor 2/(1 + eps_r)), so
    # C = 8 eps0 a (1 + eps_r)/2 exactly (image charges, e.g. Jackson section 4.4)
    half = LayeredMedium(eps_r=(1.0, 6.0), interfaces_m=(0.0,))
    assert _c(_disk(), half)[0, 0] == pytest.approx(8 * EPS0 * 3.5, rel=TOL, abs=0.0)


def test_convergence_disk_error_falls_with_refinement() -> None:
    # exact 8 eps0 a; each finer mesh (edge band and interior halved) must be closer
    errors = []
    for f in (1.0, 2.0, 4.0):
        spec = MeshSpec(0.2 / f, 0.5 / f, 0.3)
        errors.append(abs(_c(_disk(spec))[0, 0] / (8 * EPS0) - 1))
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 0.002
