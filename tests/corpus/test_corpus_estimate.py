"""Corpus b07's 8-pad slider gets its field-solver model within the default panel budget (issue 10).

Before the coarsening step its model was refused (13 639 panels against 12 000 at the coarsest
mesh).  The budget's last step removes only the grounded copper's detail finer than one edge panel
(physics/coarsen.py); measured when written, against the 13 639-panel mesh solved with a raised
limit: every segment's parasitic capacitance within 0.6 % and the touch delta within 0.3 %.
"""

from __future__ import annotations

from pathlib import Path

from sensorcheck.check import build_design_for
from sensorcheck.limits import DEFAULT_LIMITS
from sensorcheck.physics.sensors import SolverOptions, build_model

CONFIGS = Path(__file__).resolve().parent / "configs"


def test_b07_slider_fits_the_default_panel_budget(shared_dir: Path) -> None:
    d = build_design_for(shared_dir / "corpus" / "b07-slider-inch", CONFIGS / "b07-slider-inch.toml")
    (s,) = d.sensors
    # README: an 8-pad slider; the pads are ordered along the board
    assert s.kind == "slider" and len(s.nets) == 8
    m = build_model(d, s, opts=SolverOptions.from_config(d.config.estimate), limits=DEFAULT_LIMITS)
    assert len(m.system.panels) <= DEFAULT_LIMITS.max_mesh_panels
    assert any("ground copper coarsened" in n for n in m.notes)
    assert {c.name for c in m.conductors if c.kind == "sensor"} == set(s.nets)
