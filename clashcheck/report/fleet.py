"""Fleet reports: a table per aircraft, or JSON; the finding sentences are built here."""

from __future__ import annotations

import datetime as _dt
from typing import Any

from ..analysis.drift import Finding
from ..fleet.pipeline import AircraftResult, FleetResult, VerdictChange
from ..fleet.records import ModeRecord
from .common import CAUTIONS, JSON_SCHEMA_VERSION, cautions_block, dump_json, num

__all__ = ["finding_sentence", "verdict_sentence", "render_table", "render_json", "FEATURE_WORDS"]

#: How each charted feature is named in a sentence.
FEATURE_WORDS = {
    "frequency_hz": "",
    "damping": "damping ratio ",
    "viscous_damping": "viscous damping ",
    "friction_drop_per_cycle": "friction drop per cycle ",
}


def _day(d: _dt.datetime | None) -> str:
    if d is None:
        return "-"
    return d.strftime("%Y-%m-%d") if (d.hour, d.minute, d.second) == (0, 0, 0) else d.strftime("%Y-%m-%d %H:%M")


def _signed_pct(x: float) -> str:
    return f"{'+' if x >= 0 else '−'}{abs(100 * x):.1f} %"


def _value(feature: str, x: float) -> str:
    if feature == "frequency_hz":
        return f"{x:.0f}" if x >= 100 else f"{x:.1f}"
    return f"{x:.3g}"


def finding_sentence(fd: Finding) -> str:
    """One sentence for a drift finding.

    Parameters
    ----------
    fd : Finding
        The finding.

    Returns
    -------
    str
        E.g. "arm flap, roll: 171 → 160 Hz (−6.4 %) since 2026-11-14; the baseline's
        limit is −1.1 %".
    """
    unit = " Hz" if fd.feature == "frequency_hz" else ""
    since = (f"since {_day(fd.since)}" if fd.recordings_outside > 1
             else f"at {_day(fd.since)}")
    return (f"{fd.mode}, {fd.axis}: {FEATURE_WORDS.get(fd.feature, fd.feature + ' ')}"
            f"{_value(fd.feature, fd.baseline_value)} → {_value(fd.feature, fd.latest_value)}{unit} "
            f"({_signed_pct(fd.change_fraction)}) {since} "
            f"({fd.recordings_outside} recording{'s' if fd.recordings_outside > 1 else ''} outside); "
            f"the baseline's limit is {_signed_pct(fd.limit_fraction)}")


def verdict_sentence(v: VerdictChange) -> str:
    """One sentence on the build's verdict under baseline and latest modes.

    Parameters
    ----------
    v : VerdictChange
        The verdicts.

    Returns
    -------
    str
        E.g. "build verdict under the latest modes: clash (baseline modes: watch); worse for arm flap".
    """
    text = f"build verdict under the latest modes: {v.latest} (baseline modes: {v.baseline})"
    if v.modes:
        text += "; worse for " + ", ".join(f"{n} ({a} → {b})" for n, a, b in v.modes)
    return text


def _status(ac: AircraftResult) -> str:
    d = ac.drift
    if d.status == "baseline":
        n = len(d.baseline_recordings)
        return f"building baseline ({n} of {d.baseline_count} recordings, then one more)"
    return "FLAGGED" if ac.flagged else "no change found"


def _mode_line(label: str | None, m: ModeRecord) -> str:
    z = f"ζ {m.damping:.3f}" if m.damping is not None else f"ζ < {m.damping_high:.3f}"
    extra = ""
    if m.friction_drop_per_cycle:  # a friction figure where the analysis found friction
        extra = f", friction drop {m.friction_drop_per_cycle:.3g}/cycle"
    name = f"{label} ({m.name})" if label else m.name
    return f"    {name}: {m.frequency_hz:.1f} Hz, {m.axis}, {z}{extra}"


def render_table(result: FleetResult) -> str:
    """The fleet report as text: per aircraft its status, latest modes, findings, verdicts.

    Parameters
    ----------
    result : FleetResult
        The assessed fleet.

    Returns
    -------
    str
        Text ending in a newline.
    """
    run = result.run
    s = result.settings
    lines = [
        f"Fleet: {result.manifest}",
        f"Store: {result.store}",
        f"This run: {run.analysed} recording(s) analysed ({run.failed} failed), {run.reused} already stored.",
        f"Baseline: first {s.baseline_count} recordings (after an aircraft's latest event); "
        f"design false-alarm rate {100 * s.false_alarm_rate:.0f} % per aircraft check.",
        "",
    ]
    for ac in result.aircraft:
        lines.append(f"{ac.id} [{ac.build_name}]: {_status(ac)}")
        d = ac.drift
        if d.baseline_event is not None:
            lines.append(f"  baseline restarts after {_day(d.baseline_event[0])}: {d.baseline_event[1]}")
        if ac.latest_recording is not None:
            lines.append(f"  latest: {ac.latest_recording} ({_day(ac.latest_date)})")
            lines += [_mode_line(label, m) for label, m in ac.latest_modes]
        for fd in d.findings:
            lines.append("  finding: " + finding_sentence(fd))
        if ac.verdict is not None:
            lines.append(("  finding: " if ac.verdict.worse else "  ") + verdict_sentence(ac.verdict))
        for name, err in ac.errors:
            lines.append(f"  failed: {name}: {err}")
        lines.append("")
    flagged = [ac.id for ac in result.aircraft if ac.flagged]
    lines.append(f"Flagged: {', '.join(flagged) if flagged else 'none'} "
                 f"({len(flagged)} of {len(result.aircraft)} aircraft).")
    lines += cautions_block()
    return "\n".join(lines) + "\n"


def _finding_json(fd: Finding) -> dict[str, Any]:
    return {
        "kind": "drift",
        "mode": fd.mode,
        "axis": fd.axis,
        "feature": fd.feature,
        "baseline_value": num(fd.baseline_value),
        "latest_value": num(fd.latest_value),
        "change_fraction": num(fd.change_fraction),
        "limit_fraction": num(fd.limit_fraction),
        "since": fd.since.isoformat(),
        "since_recording": fd.since_recording,
        "recordings_outside": fd.recordings_outside,
        "rule": fd.rule,
        "text": finding_sentence(fd),
    }


def _mode_json(label: str | None, m: ModeRecord) -> dict[str, Any]:
    return {
        "name": m.name,
        "track": label,
        "frequency_hz": num(m.frequency_hz),
        "damping": num(m.damping),
        "damping_low": num(m.damping_low),
        "damping_high": num(m.damping_high),
        "axis": m.axis,
        "confidence": num(m.confidence),
        "viscous_damping": num(m.viscous_damping),
        "friction_drop_per_cycle": num(m.friction_drop_per_cycle),
    }


def _aircraft_json(ac: AircraftResult) -> dict[str, Any]:
    d = ac.drift
    findings = [_finding_json(fd) for fd in d.findings]
    if ac.verdict is not None and ac.verdict.worse:
        findings.append({"kind": "verdict", "baseline_verdict": ac.verdict.baseline,
                         "latest_verdict": ac.verdict.latest,
                         "modes": [{"mode": n, "baseline_verdict": a, "latest_verdict": b}
                                   for n, a, b in ac.verdict.modes],
                         "text": verdict_sentence(ac.verdict)})
    return {
        "id": ac.id,
        "build": ac.build_path,
        "flagged": ac.flagged,
        "status": d.status,
        "recordings": ac.recordings,
        "latest_recording": ac.latest_recording,
        "latest_date": ac.latest_date.isoformat() if ac.latest_date else None,
        "latest_modes": [_mode_json(label, m) for label, m in ac.latest_modes],
        "findings": findings,
        "verdict_baseline": ac.verdict.baseline if ac.verdict else None,
        "verdict_latest": ac.verdict.latest if ac.verdict else None,
        "baseline": {
            "recordings": list(d.baseline_recordings),
            "start": d.baseline_start.isoformat() if d.baseline_start else None,
            "event": ({"date": d.baseline_event[0].isoformat(), "what": d.baseline_event[1]}
                      if d.baseline_event else None),
        },
        "tracks": [
            {"mode": tr.label, "axis": tr.axis, "reference_frequency_hz": num(tr.reference_frequency_hz),
             "found_in_latest": tr.latest is not None,
             "limits": [{"feature": lim.feature, "baseline_value": num(lim.baseline_value),
                         "half_width_fraction": num(lim.half_width_fraction), "baseline_values": lim.n,
                         "test_rate": num(lim.test_rate)} for lim in tr.limits]}
            for tr in d.tracks
        ],
        "tests": d.tests,
        "errors": [{"recording": name, "error": err} for name, err in ac.errors],
    }


def render_json(result: FleetResult) -> str:
    """The fleet report as JSON (``schema_version``, ``aircraft[]``...).

    Parameters
    ----------
    result : FleetResult
        The assessed fleet.

    Returns
    -------
    str
        JSON text ending in a newline.
    """
    s = result.settings
    return dump_json({
        "schema_version": JSON_SCHEMA_VERSION,
        "manifest": result.manifest,
        "store": result.store,
        "run": {"analysed": result.run.analysed, "failed": result.run.failed, "reused": result.run.reused,
                "elapsed_s": num(result.run.elapsed_s)},
        "baseline_count": s.baseline_count,
        "false_alarm_rate": s.false_alarm_rate,
        "aircraft": [_aircraft_json(ac) for ac in result.aircraft],
        "flagged": [ac.id for ac in result.aircraft if ac.flagged],
        "cautions": list(CAUTIONS),
    })
