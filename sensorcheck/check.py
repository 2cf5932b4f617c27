"""One check of one board, end to end: files -> board -> design -> estimates -> findings -> Result.

This module only wires the stages together; each stage lives in its own package.
"""

from __future__ import annotations

import traceback
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sensorcheck import __version__
from sensorcheck.board.drawing import rings_for_drawing as _rings
from sensorcheck.errors import ConfigError, EmptyInputError, InputError, SensorcheckError
from sensorcheck.findings import (
    NOTHING_CHECKED,
    Finding,
    Location,
    Result,
    SensorSummary,
    assign_fingerprints,
    sort_key,
)

Progress = Callable[[str], None]


@dataclass(slots=True)
class CheckOptions:
    """What the command line (or a test) asks of one check."""

    config_file: Path | None = None
    layer_map: dict[str, str] = field(default_factory=dict)
    estimate: bool | None = None  # None: as the config says (default on)
    with_drawing: bool = False
    timestamp: str | None = None
    baseline: frozenset[str] | None = None
    #: refuse deprecated Gerber constructs and Excellon dialects instead of reading them with a warning
    strict: bool = False
    #: a board with no fabrication data, no copper or no sensor recognised is an error (exit 2)
    #: unless this is set: a CI gate pointed at the wrong folder must not go green
    allow_empty: bool = False
    #: merge findings of one cause into one finding listing its places (the engine's grouping)
    group: bool = True
    #: called with the Design once it is built (``compare`` measures the copper near each sensor from it)
    on_design: Callable[[Any], None] | None = None


def build_design_for(path: str | Path, config_file: Path | None = None, *, layer_map: Mapping[str, str] | None = None,
                     progress: Progress | None = None) -> Any:
    """Read the board at ``path`` and its config; return the Design (used by ``check`` and ``estimate``)."""
    design, _ = _design_and_config(Path(path), config_file, dict(layer_map or {}), progress)
    return design


def board_for(path: Path, config_file: Path | None, layer_map: Mapping[str, str],
              progress: Progress | None = None, strict: bool = False) -> tuple[Any, Any]:
    """Read the config (given, or found beside or above ``path``) and the board as it tells:
    its file map, limits, stackup and confirmed copper-layer count.  Used by ``check``,
    ``estimate`` and ``layers``, so that a config reads the files the same way for all three."""
    from sensorcheck.board.build import load_board
    from sensorcheck.design.config import find_config, load_config
    from sensorcheck.rules.engine import known_rules

    if config_file is None:
        config_file = find_config(path)
    config = load_config(config_file, known_rules=known_rules())
    merged_map = {**config.file_overrides, **layer_map}
    kwargs: dict[str, Any] = {"layer_map": merged_map or None, "progress": progress}
    if strict:
        kwargs["strict"] = True
    limits = getattr(config, "limits", None)
    if limits is not None:
        kwargs["limits"] = limits
    if config.stackup_override is not None:
        kwargs["stackup_override"] = config.stackup_override
    if getattr(config, "copper_layers", None) is not None:
        kwargs["copper_layers"] = config.copper_layers
    return load_board(path, **kwargs), config


def _design_and_config(path: Path, config_file: Path | None, layer_map: dict[str, str],
                       progress: Progress | None, strict: bool = False) -> tuple[Any, Any]:
    from sensorcheck.design.sensors import build_design

    board, config = board_for(path, config_file, layer_map, progress, strict)
    design = build_design(board, config)
    return design, config


def _input_error_finding(err: SensorcheckError | str, file: str | None = None, line: int | None = None) -> Finding:
    if isinstance(err, InputError):
        file, line, text = err.file, err.line, err.describe()
    elif isinstance(err, ConfigError):
        file, text = err.file, err.describe()
    else:
        text = str(err)
    return Finding(
        rule_id="input.unreadable",
        severity="error",
        message=text,
        location=Location(file=file, line=line),
        kind="input-error",
    )


def _internal_error_finding(stage: str, exc: BaseException) -> Finding:
    tb = traceback.extract_tb(exc.__traceback__)
    where = f" at {Path(tb[-1].filename).name}:{tb[-1].lineno}" if tb else ""
    return Finding(
        rule_id=f"internal.{stage}",
        severity="error",
        message=f"internal error in {stage}: {type(exc).__name__}: {exc}{where}",
        kind="internal-error",
    )


def _scan_dict(est: Any) -> dict[str, Any]:
    """Per-node (matrix) and per-segment (slider, wheel) values for the reports: the channels table, the centroid error."""
    from sensorcheck.report.common import scan_json

    out = scan_json(est, lambda x, n=6: None if x is None else round(float(x), n))
    chans = {f"{n['tx']}/{n['rx']}": [n["cm_pf"], n["touch_delta_pf"]] for n in out.get("nodes", [])}
    chans.update({g["net"]: [g["parasitic_pf"], g["touch_delta_pf"]] for g in out.get("segments", [])})
    if chans:
        out["channels"] = chans
    if "position" in out:
        out["position_error_mm"] = out["position"]["max_error_mm"]
    return out


def _summaries(design: Any, estimates: Mapping[str, Any]) -> list[SensorSummary]:
    from sensorcheck.physics.estimate import SensorEstimate

    overlay = design.config.overlay
    out: list[SensorSummary] = []
    for sensor in design.sensors:
        outline = sensor.outline
        values: dict[str, float | str | None] = {
            "electrode_area_mm2": round(float(outline.area), 3),
            "zone_margin_mm": round(float(sensor.zone_margin_mm), 3),
            "electrodes": len(sensor.electrodes),
        }
        for role in ("transmitter", "receiver", "self"):
            els = sensor.electrodes_with(role)  # type: ignore[arg-type]
            if els:
                values[f"{role}_area_mm2"] = round(sum(float(e.geometry.area) for e in els), 3)
        if overlay is not None:
            values["overlay_thickness_mm"] = round(overlay.thickness_mm, 3)
            values["overlay_d_eff_mm"] = round(overlay.d_eff_mm, 4)
        est = estimates.get(sensor.name)
        est_dict: dict[str, Any] | None = None
        if isinstance(est, SensorEstimate):
            from sensorcheck.report.common import turnarounds_json
            from sensorcheck.rules.signal import turning_place

            place, which = turning_place(est)
            est_dict = {
                "model": est.model,
                "kind": est.kind,
                "baseline_pf": est.baseline_pf,
                "touch_delta_pf": est.touch_delta_pf,
                "percent_change": est.percent_change,
                "turning_point_mm": est.turning_point_mm,
                "turnarounds": turnarounds_json(est, round),
                "curve": [[round(h, 4), v] for h, v in est.curve],
                # the approach over the node's centre where it differs from the most sensitive
                # point, and which of the two curves the turning point refers to
                "curve_centre": [[round(h, 4), v] for h, v in est.curve_centre],
                "centre_mm": list(est.centre_mm) if est.centre_mm else None,
                "turning_curve": which if est.turning_point_mm is not None else None,
                "turning_point_at_mm": list(place) if (place and est.turning_point_mm is not None) else None,
                "best_point_mm": list(est.best_point_mm) if est.best_point_mm else None,
                "crosstalk_pf": dict(sorted(est.crosstalk_pf.items())),
                "parasitic_pf": est.parasitic_pf,
                "panels": est.panels,
                "notes": list(est.notes),
            }
            est_dict.update(_scan_dict(est))
        checklist = [
            "Confirm on the prototype, under the real overlay, that a touch gives a clear signal "
            "(estimates are not measurements).",
        ]
        if sensor.kind in ("slider", "wheel"):
            checklist.append("Slide a finger end to end on the prototype: the position must move smoothly, no dead spots.")
        if sensor.kind == "mutual-button":
            checklist.append("Press firmly and hover just above the overlay: the signal must not turn around.")
        checklist.append("Check by eye that no trace or part other than this sensor's lies in its zone on any layer.")
        b = outline.bounds if not outline.is_empty else None
        out.append(
            SensorSummary(
                name=sensor.name,
                kind=sensor.kind,
                layer=sensor.layer,
                nets=tuple(design.labels.get(n, n) for n in sensor.nets),  # unnamed copper: S1.3
                box_mm=tuple(round(v, 3) for v in b) if b else None,  # type: ignore[arg-type]
                values=values,
                outline_rings=_rings(outline),
                zone_rings=_rings(sensor.zone),
                estimate=est_dict,
                checklist=checklist,
            )
        )
    return out


def check_board(path: str | Path, options: CheckOptions | None = None, progress: Progress | None = None) -> Result:
    """Check one board. Never raises for bad input: errors become findings (and exit code 2)."""
    from sensorcheck.rules.engine import catalogue

    options = options or CheckOptions()
    path = Path(path)
    result = Result(
        board=path.name or str(path),
        source=str(path),
        tool_version=__version__,
        config_file=None,
        timestamp=options.timestamp,
        rules=catalogue(),
    )
    try:
        design, config = _design_and_config(path, options.config_file, options.layer_map, progress,
                                            strict=options.strict)
    except SensorcheckError as err:
        if options.allow_empty and isinstance(err, EmptyInputError):
            result.notes.append("The folder is empty: nothing was checked (allowed by --allow-empty).")
            finish(result, options.baseline)
            return result
        if isinstance(err, ConfigError):
            result.config_file = err.file
        result.findings.append(_input_error_finding(err))
        finish(result, options.baseline)
        return result
    except Exception as exc:  # noqa: BLE001 - a bug must become a report entry, never a lost board
        result.findings.append(_internal_error_finding("reading", exc))
        finish(result, options.baseline)
        return result
    board = design.board
    if options.on_design is not None:
        options.on_design(design)
    result.board = board.name or result.board  # the engine fingerprints with the board's own name
    result.config_file = config.file
    if config.file is None:
        result.notes.append("No sensorcheck.toml found: defaults apply; rules that need a value report what is missing.")
    result.notes.extend(design.notes)
    for info in board.files:
        result.files.append(
            {
                "path": info.path,
                "role": info.role,
                "layer": info.layer,
                "identified_by": info.identified_by,
                "error": info.error,
                "note": info.note,
                **({"warnings": list(info.warnings)} if info.warnings else {}),
            }
        )
        if info.error:
            result.findings.append(
                Finding(
                    rule_id="input.unreadable",
                    severity="error",
                    message=info.error,
                    location=Location(file=info.path),
                    kind="input-error",
                )
            )
    if config.overlay is not None:
        result.overlay = {
            "face": config.overlay.face,
            "thickness_mm": round(config.overlay.thickness_mm, 4),
            "d_eff_mm": round(config.overlay.d_eff_mm, 4),
            "layers": [
                {"name": l.name, "kind": l.kind, "thickness_mm": l.thickness_mm, "epsilon_r": l.epsilon_r,
                 "epsilon_source": l.epsilon_source}
                for l in config.overlay.layers
            ],
        }

    # None (not {}): the rules that need estimates then say once that there are none
    estimates: dict[str, Any] | None = None
    unavailable: list[Finding] = []  # estimate.unavailable: a rule of the engine (severity from the config)
    want_estimates = options.estimate if options.estimate is not None else bool(config.estimate.get("enabled", True))
    if want_estimates and design.sensors:
        try:
            from sensorcheck.physics.schedule import estimate_design
            from sensorcheck.physics.sensors import INTERNAL_PREFIX

            failed: list[str] = []
            estimates = estimate_design(design, progress=progress, errors=failed)
            for text in failed:
                name = text.split(": ", 1)[0]
                if INTERNAL_PREFIX in text:
                    result.findings.append(Finding(rule_id="internal.estimate", severity="error", sensor=name,
                                                   message=f"estimate of {text}", kind="internal-error"))
                else:
                    unavailable.append(Finding(
                        rule_id="estimate.unavailable", severity="warning", sensor=name,
                        message=f"no field-solver estimate for {text}; the rules that need one fall back to "
                                "geometry for this sensor",
                        review="Measure this sensor's touch signal on the prototype: the model could not estimate it."))
        except SensorcheckError as err:
            result.findings.append(_input_error_finding(err))
        except Exception as exc:  # noqa: BLE001
            result.findings.append(_internal_error_finding("estimate", exc))

    try:
        from sensorcheck.rules.engine import run_rules

        run = run_rules(design, estimates, progress=progress, extra=unavailable, group=options.group)
        result.findings.extend(run.findings)
        result.rules_run = list(run.rules_run)
        result.notes.extend(run.notes)
    except Exception as exc:  # noqa: BLE001
        result.findings.append(_internal_error_finding("rules", exc))

    try:
        result.sensors = _summaries(design, estimates or {})
    except Exception as exc:  # noqa: BLE001
        result.findings.append(_internal_error_finding("summary", exc))
    if not options.allow_empty and not any(f.kind == "input-error" for f in result.findings):
        # (a file that could not be read already makes the run exit 2 and says which)
        result.findings.extend(_nothing_checked(board, design))
    if options.with_drawing:
        try:
            from sensorcheck.board.drawing import drawing_from_board

            result.drawing = drawing_from_board(board)
        except Exception as exc:  # noqa: BLE001
            result.findings.append(_internal_error_finding("drawing", exc))

    finish(result, options.baseline)
    return result


INIT_HINT = ("run `sensorcheck init PATH` for a starter sensorcheck.toml that names the sensing nets, "
             "check that PATH is the folder (or .zip) of fabrication outputs, or pass --allow-empty "
             "when a board without sensors is expected")


def _nothing_checked(board: Any, design: Any) -> list[Finding]:
    """An input error when the board holds nothing to check: no fabrication data, no copper, or
    no sensor recognised.  Each is exit 2 with the ``init`` hint first: a check that checked
    nothing must never pass."""
    readable = [f for f in board.files if f.role not in (None, "other") and not f.error]
    if not readable:
        what = "no fabrication data was found (no Gerber, drill or netlist file was identified)"
    elif not board.copper_layers():
        what = "no copper layer was found among the fabrication files"
    elif not design.sensors:
        what = "no sensor was recognised on the board"
    else:
        return []
    return [Finding(rule_id=NOTHING_CHECKED, severity="error", kind="input-error",
                    message=f"nothing was checked ({what}): {INIT_HINT}",
                    location=Location(file=board.source))]


def finish(result: Result, baseline: frozenset[str] | None = None) -> None:
    """Fingerprint and sort findings; with a baseline, findings already accepted become notes of the baseline."""
    assign_fingerprints(result.findings, result.board)
    result.findings.sort(key=sort_key)
    if baseline is not None:
        # a grouped finding is in the baseline when it is, or when every place it lists was
        old = [f for f in result.findings if f.kind == "finding" and (
            f.fingerprint in baseline or (f.members and all(m in baseline for m in f.members)))]
        for f in old:
            f.severity = "note"
            f.message = f"[in baseline] {f.message}"
        if old:
            result.notes.append(f"{len(old)} finding(s) are in the baseline and were lowered to notes.")
        result.findings.sort(key=sort_key)


def exit_code(results: Sequence[Result], fail_on: str = "error", exit_zero: bool = False) -> int:
    """0: nothing at or above fail_on; 1: findings at or above it; 2: input or internal errors."""
    from sensorcheck.findings import SEVERITY_ORDER

    if any(f.kind != "finding" for r in results for f in r.findings):
        return 2
    if exit_zero:
        return 0
    threshold = SEVERITY_ORDER[fail_on]
    for r in results:
        for f in r.unwaived():
            if SEVERITY_ORDER[f.severity] >= threshold:
                return 1
    return 0


def _check_one(args: tuple[str, CheckOptions]) -> Result:
    path, options = args
    return check_board(path, options)


def check_boards(paths: Sequence[str | Path], options: CheckOptions, *, workers: int | None = None,
                 progress: Progress | None = None, executor: Any = None) -> list[Result]:
    """Check several boards, in parallel processes when there are several; results in the order given.

    ``executor``: a ``concurrent.futures.Executor`` to run the boards on instead (a Dask cluster,
    :mod:`sensorcheck.cluster`), even for one board.
    """
    if len(paths) == 1 and executor is None:
        return [check_board(paths[0], options, progress)]
    import contextlib
    import os
    from concurrent.futures import ProcessPoolExecutor

    n = workers or min(len(paths), os.cpu_count() or 1)
    jobs = [(str(p), options) for p in paths]
    results: list[Result] = []
    with contextlib.nullcontext(executor) if executor is not None else ProcessPoolExecutor(max_workers=n) as pool:
        for path, fut in zip(paths, [pool.submit(_check_one, j) for j in jobs]):
            try:
                results.append(fut.result())
            except Exception as exc:  # noqa: BLE001 - a crashed worker loses only its own board
                r = Result(board=Path(path).name, source=str(path), tool_version=__version__, config_file=None)
                r.findings.append(_internal_error_finding("worker", exc))
                finish(r)
                results.append(r)
            if progress:
                progress(f"checked {path}")
    return results
