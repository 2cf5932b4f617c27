"""Findings per board, before and after: what a reviewer reads on real boards.

Checks the corpus boards that have a config in ``tests/corpus/configs`` (b01, b02, b03, b04, b06,
b07; a board whose config is missing is skipped and said so) and the two demo boards, and prints
a table: per board the findings of a previous run (``--before DIR``, JSON reports written by
``--dump DIR`` of this script at the older revision), the places they cover now (one finding per
place, as before grouping), the findings now (one per cause), and the errors / warnings / notes.

Every finding of the previous run that is not among the findings now is listed with what became
of it: merged into a finding of one cause (its fingerprint is among that finding's ``members``),
still found at another place (same rule and sensor), or not found now (an estimate that cleared
it, or a change to explain by hand in the closing note).

    .venv/bin/python bench/bench_verdicts.py                       # geometry only (fast)
    .venv/bin/python bench/bench_verdicts.py --estimates           # with field-solver estimates (slow)
    .venv/bin/python bench/bench_verdicts.py --dump /tmp/now       # write the JSON reports
    .venv/bin/python bench/bench_verdicts.py --before /tmp/old     # compare with an older run

The older run: ``git worktree add /tmp/old-sc <rev>`` and run this script from there with
``--dump`` (or dump ``sensorcheck check ... --report json:DIR/<board>.json`` by hand; the file
names are the board ids below).  Needs ``../shared`` for the corpus boards.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections import Counter
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT.parent / "shared" / "corpus"
CONFIGS = ROOT / "tests" / "corpus" / "configs"
BOARDS: dict[str, str] = {
    "b01": "b01-slider-proto",
    "b02": "b02-buttons-4layer",
    "b03": "b03-wheel",
    "b04": "b04-keys-4layer",
    "b06": "b06-keyboard",
    "b07": "b07-slider-inch",
}
DEMOS = ("tm1-flawed", "tm1-clean")


def _targets(config_dir: Path, only: list[str] | None) -> tuple[list[tuple[str, Path, Path]], list[str]]:
    """(board id, fabrication folder, config) to check, and the lines saying what was skipped."""
    out: list[tuple[str, Path, Path]] = []
    skipped: list[str] = []
    for bid, folder in BOARDS.items():
        if only and bid not in only:
            continue
        fab = CORPUS / folder / "fab"
        cfg = config_dir / f"{folder}.toml"
        if not fab.is_dir():
            skipped.append(f"{bid}: skipped, {fab} is absent (no ../shared here)")
        elif not cfg.is_file():
            skipped.append(f"{bid}: skipped, no config {cfg}")
        else:
            out.append((bid, fab, cfg))
    for demo in DEMOS:
        if not only or demo in only:
            out.append((demo, ROOT / "boards" / demo, ROOT / "boards" / demo / "sensorcheck.toml"))
    return out, skipped


#: the design and estimates of the last check (kept by wrapping the estimate stage, so a cleared
#: finding can be explained by the numbers that cleared it)
_LAST: dict[str, Any] = {}


def _check(fab: Path, cfg: Path, estimates: bool) -> dict[str, Any]:
    import sensorcheck.physics.schedule as schedule
    from sensorcheck.check import CheckOptions, check_board
    from sensorcheck.report.json_report import report_data

    real = schedule.estimate_design

    def keep(design: Any, *a: Any, **kw: Any) -> Any:
        out = real(design, *a, **kw)
        _LAST.update(design=design, estimates=out)
        return out

    _LAST.clear()
    schedule.estimate_design = keep  # type: ignore[assignment]
    try:
        result = check_board(fab, CheckOptions(config_file=cfg, estimate=estimates))
    finally:
        schedule.estimate_design = real  # type: ignore[assignment]
    return report_data([result])


def _cleared_by(old: dict[str, Any]) -> str | None:
    """The estimate's numbers behind a rule-of-thumb finding that is not reported now (None: no estimate)."""
    from sensorcheck.rules.common import fmt, role
    from sensorcheck.rules.effects import CopperReader, copper_effect, crosstalk_percent

    design, ests = _LAST.get("design"), _LAST.get("estimates")
    if design is None or not ests:
        return None
    rule, nets = old["rule_id"], list(old.get("nets") or [])
    layer = (old.get("location") or {}).get("layer")
    sensors = list(old.get("sensors") or []) or [old.get("sensor")]
    by_name = {s.name: s for s in design.sensors}
    owner = {n: s.name for s in design.sensors for n in s.nets}
    reader = CopperReader(design)
    out: list[str] = []
    if rule == "electrode.neighbour-spacing":
        # the pairs of the finding's sensors the estimates give a crosstalk for: the worst of them
        pairs = [(a, b) for i, a in enumerate(sensors) for b in sensors[i + 1:]] if len(sensors) > 1 else [
            (sensors[0], owner[n]) for n in nets if n in owner and owner[n] != sensors[0]]
        found = [c for a, b in pairs if (c := crosstalk_percent(ests, a, b)) is not None]
        if not found:
            return "no crosstalk estimate for its sensors"
        worst = max(found, key=lambda c: c[0])
        return f"worst crosstalk of {len(found)} pair(s): {worst[1]}"
    for name in sensors:
        s = by_name.get(name)
        est = ests.get(name)
        if s is None:
            continue
        if est is None:
            out.append(f"{name}: no estimate")
            continue
        if rule == "routing.rx-parallel-tx" and len(nets) == 2:
            rx, tx = (nets if nets[0] in s.nets else nets[::-1])
            g = reader.bound_pf(est, [tx], excitation="rx")
            out.append(f"{rx}-{tx} couple {1000 * (g or 0):.1f} fF, {100 * (g or 0) / abs(est.touch_delta_pf):.1f} % of "
                       f"{name}'s delta {1000 * est.touch_delta_pf:+.1f} fF")
            continue
        if rule == "routing.foreign-copper-in-zone":
            eff = copper_effect(reader, est, [n for n in nets if n not in s.nets], [layer] if layer else None,
                                s.zone_margin_mm, "that copper", 10.0)
        elif rule == "routing.trace-under-electrode":
            tr = [n for n in nets if n not in s.nets]
            eff = copper_effect(reader, est, tr, [layer] if layer else None, None, "the trace", 10.0)
            c = crosstalk_percent({name: est}, name, owner.get(tr[0], "")) if tr else None
            if c:
                out.append(c[1])
        elif rule == "routing.aggressor-near-sensor":
            ag = [n for n in nets if role(design, n) == "aggressor"]
            eff = copper_effect(reader, est, ag, None, None, "the aggressor", 10.0)
        elif rule == "hatch.fill-near-sensor" and layer:
            lay = design.board.layer(layer)
            skip = {n for x in design.sensors for n in x.nets}
            eff = copper_effect(reader, est, [n for n in lay.by_net if n not in skip], [layer], 10.0, "the fill", 10.0)
        elif rule == "hatch.ground-under-self" and layer:
            eff = copper_effect(reader, est, [n for n in nets if n not in s.nets], [layer], 0.0, "the copper under", 10.0)
        else:
            return None
        if eff is None:
            out.append(f"{name}: the estimate does not cover it")
        elif eff[0]:
            out.append(eff[1])
        else:
            out.append(f"NOT cleared ({fmt(eff[2], 1)} % > {fmt(eff[3], 0)} %): still reported, grouped with other "
                       f"places of the rule now (its value is the physical one)")
    return "; ".join(out) if out else None


def _findings(report: dict[str, Any]) -> list[dict[str, Any]]:
    return [f for b in report["boards"] for f in b["findings"]]


def _counts(findings: list[dict[str, Any]]) -> Counter[str]:
    c: Counter[str] = Counter()
    for f in findings:
        c["problem" if f["kind"] != "finding" else f["severity"]] += 1
    return c


def _fate(old: dict[str, Any], now: list[dict[str, Any]]) -> str | None:
    """What became of a finding of the older run: None when it is still there as it was."""
    fp = old["fingerprint"]
    for f in now:
        if f["fingerprint"] == fp:
            return None
    for f in now:
        if fp in (f.get("members") or []):
            return f"merged into {f['rule_id']} {f['fingerprint']} ({f.get('places', 1)} places)"
    same = [f for f in now if f["rule_id"] == old["rule_id"] and f.get("sensor") == old.get("sensor")]
    if same:
        loc = same[0]["location"]
        at = f"({loc['x_mm']:.2f}, {loc['y_mm']:.2f}) mm" if loc.get("x_mm") is not None else "no place"
        return f"still found, now at {at} [{same[0]['severity']}] (fingerprint {same[0]['fingerprint']})"
    cleared = [f for f in now if f["rule_id"] == old["rule_id"] and "estimate" in f["message"]
               and old.get("sensor") in (f.get("sensors") or [f.get("sensor")])]
    if cleared:
        return f"decided by the estimate: {cleared[0]['message'][:100]}"
    why = _cleared_by(old)
    if why is not None:
        return why if why.startswith(("NOT", "no crosstalk")) else f"cleared by the estimate: {why}"
    return "not found now"


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--estimates", action="store_true", help="run the field solver too (minutes per corpus board)")
    p.add_argument("--before", type=Path, help="folder of JSON reports of an older run (<board id>.json)")
    p.add_argument("--dump", type=Path, help="write this run's JSON reports here (<board id>.json)")
    p.add_argument("--config-dir", type=Path, default=CONFIGS, help="where the corpus configs are")
    p.add_argument("--boards", nargs="*", help="only these board ids (b01 ... b07, tm1-flawed, tm1-clean)")
    p.add_argument("--list", action="store_true", help="list every finding of the older run that is not there now")
    p.add_argument("--now", type=Path, help="read this run's reports from a --dump folder instead of checking again")
    args = p.parse_args(argv)
    targets, skipped = _targets(args.config_dir, args.boards)
    rows: list[tuple[str, ...]] = []
    gone: list[str] = []
    for bid, fab, cfg in targets:
        now_file = args.now / f"{bid}.json" if args.now else None
        if now_file is not None and not now_file.is_file():
            skipped.append(f"{bid}: skipped, no {now_file}")
            continue
        report = (json.loads(now_file.read_text(encoding="utf-8")) if now_file is not None
                  else _check(fab, cfg, args.estimates))
        now = _findings(report)
        if args.dump:
            args.dump.mkdir(parents=True, exist_ok=True)
            (args.dump / f"{bid}.json").write_text(json.dumps(report, indent=1, sort_keys=True), encoding="utf-8")
        c = _counts(now)
        places = sum(int(f.get("places", 1)) for f in now)
        before = "-"
        old_file = args.before / f"{bid}.json" if args.before else None
        if old_file is not None and old_file.is_file():
            old = _findings(json.loads(old_file.read_text(encoding="utf-8")))
            before = str(len(old))
            for f in old:
                fate = _fate(f, now)
                if fate is not None and (args.list or not fate.startswith("merged")):
                    gone.append(f"  {bid}: {f['rule_id']} [{f['severity']}] {f.get('sensor') or '-'}: "
                                f"{f['message'][:90]} -> {fate}")
        rows.append((bid, before, str(places), str(len(now)), str(c["error"]), str(c["warning"]), str(c["note"]),
                     str(c["problem"])))
        print(f"checked {bid}", file=sys.stderr)
    head = ("board", "before", "places now", "findings now", "errors", "warnings", "notes", "tool errors")
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(head)]
    mode = "with estimates" if args.estimates else "geometry only (--no-estimate)"
    print(f"Findings per board, {mode}")
    print("  ".join(h.ljust(w) for h, w in zip(head, widths)))
    print("  ".join("-" * w for w in widths))
    for r in rows:
        print("  ".join(v.rjust(w) if i else v.ljust(w) for i, (v, w) in enumerate(zip(r, widths))))
    for line in skipped:
        print(line)
    if gone:
        print("\nFindings of the older run not among the findings now (merged ones only with --list):")
        print("\n".join(gone))
    return 0


if __name__ == "__main__":
    sys.exit(main())
