"""The engine: registry and docs, profiles, severity overrides, missing inputs, failure isolation, waivers."""

from __future__ import annotations

import argparse
import json
import re

import pytest

from sensorcheck.errors import ConfigError
from sensorcheck.rules import engine
from sensorcheck.rules.engine import (
    DOC_HEADINGS,
    catalogue,
    doc_sections,
    known_rules,
    load_profile,
    registry,
    render_catalogue,
    run_rules,
)
from sensorcheck.findings import Waiver

from .test_gap import mutual_node, self_button

ID_RE = re.compile(r"^[a-z]+\.[a-z0-9]+(-[a-z0-9]+)*$")


def test_every_rule_is_documented_under_the_same_headings() -> None:
    reg = registry()
    assert len(reg) >= 25
    for rid, cls in reg.items():
        assert ID_RE.match(rid), rid
        assert rid.split(".")[0] == cls.family()
        secs = doc_sections(cls)
        assert list(secs) == list(DOC_HEADINGS), (rid, list(secs))
        assert all(secs[h] for h in DOC_HEADINGS), rid
        assert cls.default_severity in ("error", "warning", "note")
        for name, p in cls.params.items():
            assert p.source in ("standard", "handbook", "paper", "common practice", "derived"), (rid, name)
            assert p.unit and p.doc


def test_no_vendor_is_named_in_the_catalogue() -> None:
    text = render_catalogue("markdown").lower()
    assert "vg-" not in text  # the reference notes' tags become "common practice" in what users read
    assert "vendor guidance, anonymous" in text


def test_known_rules_types_and_catalogue() -> None:
    kr = known_rules()
    assert kr["gap.tx-rx-vs-overlay"]["ratio"] is float
    assert kr["trace.via-count"]["max_vias"] is int
    infos = {i.id: i for i in catalogue()}
    assert infos["gap.tx-rx-vs-overlay"].parameters["ratio"] == (0.6, "1", "common practice")


@pytest.mark.parametrize("fmt", ["text", "markdown", "json"])
def test_render_catalogue(fmt: str) -> None:
    out = render_catalogue(fmt)  # type: ignore[arg-type]
    for rid in registry():
        assert rid in out
    if fmt == "json":
        data = json.loads(out)
        assert {r["id"] for r in data["rules"]} == set(registry())


def test_rules_command(capsys: pytest.CaptureFixture[str]) -> None:
    from sensorcheck.commands import rules as cmd

    assert cmd.run(argparse.Namespace(format="json")) == 0
    assert json.loads(capsys.readouterr().out)["rules"]


def test_default_profile_is_the_code_defaults() -> None:
    prof = load_profile("default")
    assert set(prof) == set(registry())
    for rid, (sev, params) in prof.items():
        assert sev == registry()[rid].default_severity
        # keep_errors (the opt-in that keeps a rule's hard cases as errors) is not a parameter
        assert {k: v for k, v in params.items() if k != "keep_errors"} == {}


def test_strict_profile_is_stricter() -> None:
    prof = load_profile("strict")
    reg = registry()
    for rid, (_, params) in prof.items():
        for name, value in params.items():
            d = reg[rid].params[name].default
            if name.startswith(("max_", "warn_", "close_mm")):
                assert value <= d or name == "close_mm", (rid, name)
            if name.startswith("min_"):
                assert value >= d, (rid, name)


def test_profile_errors_name_file_and_key(tmp_path) -> None:
    bad = tmp_path / "p.toml"
    bad.write_text('[rules."gap.tx-rx-vs-overlay"]\nratoi = 0.5\n')
    with pytest.raises(ConfigError) as ei:
        load_profile(str(bad))
    assert "ratoi" in str(ei.value) and str(bad) in str(ei.value)
    bad.write_text('[rules."gap.tx-rx-vs-overlay"]\nratio = "x"\n')
    with pytest.raises(ConfigError, match="expected a float"):
        load_profile(str(bad))
    bad.write_text('[rules."gap.tx-rx-vs-overlai"]\n')
    with pytest.raises(ConfigError, match="did you mean gap.tx-rx-vs-overlay"):
        load_profile(str(bad))
    with pytest.raises(ConfigError, match="not found"):
        load_profile("no-such-profile")


def _ids(run, sev=None):
    return [f.rule_id for f in run.findings if sev is None or f.severity == sev]


def test_run_rules_end_to_end_and_deterministic() -> None:
    design = mutual_node(0.4)
    a = run_rules(design)
    b = run_rules(mutual_node(0.4))
    assert [f.fingerprint for f in a.findings] == [f.fingerprint for f in b.findings]
    assert len({f.fingerprint for f in a.findings}) == len(a.findings)
    assert "gap.tx-rx-vs-overlay" in _ids(a, "warning")
    assert "gap.tx-rx-vs-overlay" in a.rules_run
    # no estimates given: each estimate rule says so once
    notes = [f for f in a.findings if f.rule_id == "signal.turnaround"]
    assert len(notes) == 1 and notes[0].severity == "note" and "estimates" in notes[0].message


def test_missing_overlay_gives_one_note_per_rule() -> None:
    design = mutual_node(0.4)
    design.config.overlay = None
    run = run_rules(design)
    for rid in ("gap.tx-rx-vs-overlay", "electrode.size-vs-contact", "electrode.neighbour-spacing"):
        fs = [f for f in run.findings if f.rule_id == rid]
        assert len(fs) == 1 and fs[0].severity == "note"
        assert "overlay" in fs[0].message and "[[overlay.layers]]" in fs[0].message


def test_severity_override_and_off() -> None:
    design = mutual_node(0.4)
    design.config.severities["gap.tx-rx-vs-overlay"] = "error"
    run = run_rules(design)
    assert "gap.tx-rx-vs-overlay" in _ids(run, "error")
    design.config.severities["gap.tx-rx-vs-overlay"] = "off"
    run = run_rules(design)
    assert "gap.tx-rx-vs-overlay" not in _ids(run) and "gap.tx-rx-vs-overlay" not in run.rules_run
    assert any("gap.tx-rx-vs-overlay is off" in n for n in run.notes)


def test_config_params_override_profile() -> None:
    design = mutual_node(0.4)  # ratio 0.2
    design.config.thresholds["gap.tx-rx-vs-overlay"] = {"ratio": 0.2}
    assert "gap.tx-rx-vs-overlay" not in _ids(run_rules(design))
    design.config.thresholds["gap.tx-rx-vs-overlay"] = {"no_such": 1}
    with pytest.raises(ConfigError):
        run_rules(design)


def test_strict_profile_applies() -> None:
    design = self_button(1.5, 1.5)
    design.config.profile = "strict"
    run = run_rules(design)
    assert "trace.width" in run.rules_run


def test_failing_rule_is_isolated(monkeypatch: pytest.MonkeyPatch) -> None:
    def boom(self, design, estimates, params):
        raise ZeroDivisionError("kaboom")

    monkeypatch.setattr(registry()["area.receiver-vs-ground"], "check", boom)
    run = run_rules(mutual_node(0.4))
    (err,) = [f for f in run.findings if f.kind == "internal-error"]
    assert err.rule_id == "area.receiver-vs-ground" and err.severity == "error" and "kaboom" in err.message
    assert "gap.tx-rx-vs-overlay" in _ids(run, "warning")  # the others still ran


def _gap_finding(design):
    return next(f for f in run_rules(design).findings if f.rule_id == "gap.tx-rx-vs-overlay")


@pytest.mark.parametrize(
    "waiver",
    [
        Waiver(rule="gap.tx-rx-vs-overlay", reason="tested on prototype", sensor="K1"),
        Waiver(rule="gap.*", reason="family glob", net="rx0"),
        Waiver(rule="gap.tx-rx-vs-overlay", reason="by place", layer="top-copper", box_mm=(-10, -10, 10, 10)),
    ],
)
def test_waiver_matches(waiver: Waiver) -> None:
    design = mutual_node(0.4)
    design.config.waivers = [waiver]
    f = _gap_finding(design)
    assert f.waived and f.waived_by is waiver
    assert not any(x.rule_id == "waiver.unused" for x in run_rules(design).findings)


def test_waiver_by_fingerprint_and_non_matching() -> None:
    fp = _gap_finding(mutual_node(0.4)).fingerprint
    design = mutual_node(0.4)
    design.config.waivers = [Waiver(rule="gap.tx-rx-vs-overlay", reason="r", fingerprint=fp)]
    assert _gap_finding(design).waived
    design.config.waivers = [Waiver(rule="gap.tx-rx-vs-overlay", reason="r", sensor="K9", index=3)]
    run = run_rules(design)
    assert not _gap_finding(design).waived
    (note,) = [f for f in run.findings if f.rule_id == "waiver.unused"]
    assert "waiver #4" in note.message and note.severity == "note"


def test_expired_waiver_stops_waiving() -> None:
    design = mutual_node(0.4)  # config.today is 2026-06-01 in the builders
    design.config.waivers = [Waiver(rule="gap.tx-rx-vs-overlay", reason="old", sensor="K1", expires="2026-05-31")]
    run = run_rules(design)
    assert not _gap_finding(design).waived
    (note,) = [f for f in run.findings if f.rule_id == "waiver.expired"]
    assert "expired on 2026-05-31" in note.message and "no longer waives" in note.message
    design.config.waivers = [Waiver(rule="gap.tx-rx-vs-overlay", reason="ok", sensor="K1", expires="2026-06-01")]
    assert _gap_finding(design).waived  # expires today: still valid


def test_progress_reports_each_rule() -> None:
    seen: list[str] = []
    run_rules(mutual_node(1.2), progress=seen.append)
    assert len(seen) == len([c for c in registry().values() if not c.engine_only])
    assert engine.RuleRun


def test_missing_roles_are_said_once() -> None:
    design = self_button(1.5, 1.5)
    design.roles.pop("GND")  # nobody named the ground net
    run = run_rules(design)
    for rid, what in (("gap.electrode-ground-vs-overlay", "no ground nets"),
                      ("routing.aggressor-near-sensor", "no aggressor nets"),
                      ("routing.aggressor-parallel", "no aggressor nets")):
        (f,) = [f for f in run.findings if f.rule_id == rid]
        assert f.severity == "note" and what in f.message and "[roles]" in f.message


@pytest.mark.parametrize(
    "change, rule, text",
    [
        (lambda d: setattr(d.board, "stackup", None), "hatch.ground-under-self", "[stackup]"),
        (lambda d: setattr(d.board, "outline", None), "fab.board-edge-near-sensor", "outline"),
        (lambda d: d.config.controller.clear(), "trace.parasitic-budget", "max_parasitic_pf"),
    ],
)
def test_missing_inputs_notes(change, rule: str, text: str) -> None:
    design = self_button(1.5, 1.5)
    change(design)
    (f,) = [f for f in run_rules(design).findings if f.rule_id == rule]
    assert f.severity == "note" and text in f.message


def test_every_rule_has_good_and_bad_cases_in_the_tests() -> None:
    # each rule id must be exercised by name in a test module of this folder (besides this one)
    from pathlib import Path

    here = Path(__file__).parent
    text = "\n".join(p.read_text() for p in here.glob("test_*.py") if p.name != "test_engine.py")
    missing = [rid for rid, cls in registry().items() if not cls.engine_only and f'"{rid}"' not in text]
    assert missing == []


def test_profile_can_extend_another(tmp_path) -> None:
    mine = tmp_path / "mine.toml"
    mine.write_text('profile = "strict"\n[rules."trace.width"]\nmax_width_mm = 0.3\nseverity = "error"\n')
    prof = load_profile(str(mine))
    assert prof["trace.width"] == ("error", {"max_width_mm": 0.3})  # own value over strict's 0.18
    assert prof["trace.length"][1] == {"max_length_mm": 100.0}  # inherited from strict
    loop = tmp_path / "loop.toml"
    loop.write_text('profile = "loop.toml"\n')
    with pytest.raises(ConfigError, match="circle"):
        load_profile(str(loop))


def test_with_the_config_loader(tmp_path) -> None:
    # the real sensorcheck.toml path: the loader validates against known_rules() and merges the profile;
    # the engine applies it again underneath (idempotent) and honours the waiver and its expiry
    from sensorcheck.design.config import load_config

    cfg_file = tmp_path / "sensorcheck.toml"
    cfg_file.write_text(
        'profile = "strict"\n'
        '[[overlay.layers]]\nmaterial = "pmma"\nthickness_mm = 2.0\n'
        '[rules."gap.tx-rx-vs-overlay"]\nseverity = "error"\n'
        '[rules."trace.width"]\nmax_width_mm = 0.3\n'
        '[[waivers]]\nrule = "gap.tx-rx-vs-overlay"\nsensor = "K1"\nreason = "measured on the prototype"\n'
        "expires = 2020-01-01\n"
    )
    cfg = load_config(cfg_file, known_rules=known_rules())
    design = mutual_node(0.4)
    cfg.today = design.config.today
    design.config = cfg
    settings = engine.effective_settings(cfg)
    assert settings["trace.width"][1]["max_width_mm"] == 0.3  # config over the strict profile's 0.18
    assert settings["trace.length"][1]["max_length_mm"] == 100.0  # from the strict profile
    run = run_rules(design)
    gap = next(f for f in run.findings if f.rule_id == "gap.tx-rx-vs-overlay")
    assert gap.severity == "error" and not gap.waived  # the waiver expired in 2020
    assert any(f.rule_id == "waiver.expired" for f in run.findings)
    with pytest.raises(ConfigError):
        bad = tmp_path / "bad.toml"
        bad.write_text('[rules."gap.tx-rx-vs-overlay"]\nratoi = 1.0\n')
        load_config(bad, known_rules=known_rules())
