"""Build a relay playback set from a plan: COMTRADE records at secondary values + manifest.

For each case of a :class:`~recordscan.relaytest.plan.Plan` the event is simulated
(:func:`recordscan.synth.generate.simulate`), the local terminal's record is cut down to what
a test set plays back (line voltages, phase and residual currents, trip and pole-status
outputs) with the plan's VT and CT ratios — the channels carry ``Scaling(ps="S", primary,
secondary)`` so the COMTRADE writer stores secondary values with the ratio in the cfg — and
written as ``case-NNN.cfg``/``.dat`` (or ``.cff``). The truth of every case goes into
``manifest.json`` and ``manifest.csv`` (:mod:`recordscan.relaytest.manifest`), with
instants in seconds from the first sample of the case's playback record. A case that
cannot be simulated is listed in the manifest's ``failed_cases`` and the set goes on.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from recordscan.core import roles as R
from recordscan.core.files import atomic_write_text
from recordscan.core.record import AnalogChannel, Record, StatusChannel
from recordscan.errors import RecordScanError
from recordscan.relaytest.manifest import TruthCase, manifest_csv, manifest_json
from recordscan.relaytest.plan import Plan, PlanCase

__all__ = ["CaseFailure", "PlaybackSet", "build_playback_set", "playback_record", "truth_case"]

#: analog roles a test set plays back
PLAYBACK_ANALOG = (*R.V_LINE.values(), *R.I_LINE.values(), R.I_RESIDUAL)
#: digital roles kept (the breaker's trip and pole status that the relay sees)
PLAYBACK_DIGITAL = (*R.TRIP.values(), *R.POLE_CLOSED.values())
_VOLTAGE_ROLES = frozenset(R.V_LINE.values())
_CURRENT_ROLES = frozenset((*R.I_LINE.values(), R.I_RESIDUAL))
TIME_REFERENCE = "seconds from the first sample of each case's playback record"


@dataclass(frozen=True)
class CaseFailure:
    """A case that could not be simulated or written."""

    case: str
    origin: str
    error: str


@dataclass(frozen=True)
class PlaybackSet:
    """What :func:`build_playback_set` wrote.

    Attributes
    ----------
    out_dir : pathlib.Path
        The set's folder.
    cases : tuple of TruthCase
        Truth of every written case (the manifest rows).
    failures : tuple of CaseFailure
        Cases that could not be simulated.
    files : tuple of pathlib.Path
        Every file written (records, scenario echoes, manifests).
    manifest_json_path, manifest_csv_path : pathlib.Path
        The manifests.
    """

    out_dir: Path
    cases: tuple[TruthCase, ...]
    failures: tuple[CaseFailure, ...]
    files: tuple[Path, ...]
    manifest_json_path: Path
    manifest_csv_path: Path

    @property
    def n_permit(self) -> int:
        """Cases where a permit is expected."""
        return sum(c.expected == "permit" for c in self.cases)

    @property
    def n_block(self) -> int:
        """Cases where the relay must block (permanent fault or arc outliving the dead time)."""
        return sum(c.expected == "block" for c in self.cases)

    def summary(self) -> dict[str, Any]:
        """Plain-JSON summary (counts, files, failures)."""
        return {
            "out": str(self.out_dir),
            "cases": len(self.cases),
            "expected_permits": self.n_permit,
            "expected_blocks": self.n_block,
            "permanent_faults": sum(c.permanent for c in self.cases),
            "cases_with_restrikes": sum(bool(c.restrike_s) for c in self.cases),
            "failed": [dataclasses.asdict(f) for f in self.failures],
            "manifest_json": str(self.manifest_json_path),
            "manifest_csv": str(self.manifest_csv_path),
            "n_files": len(self.files),
        }


def playback_record(record: Record, plan: Plan, case: PlanCase) -> Record:
    """Cut a simulated local record down to the playback channels at secondary values.

    Voltage channels get the VT ratio and current channels the CT ratio as
    ``Scaling(ps="S", primary=…, secondary=…)`` (values stay primary SI inside; the writer
    divides by the ratio). The reclose command and three-pole trip outputs of the
    simulated breaker are dropped: the reclose is the relay's to decide.
    """
    inst = case.scenario.instruments
    assert inst.vt_primary_v is not None and inst.vt_secondary_v is not None
    analog: list[AnalogChannel] = []
    for role in PLAYBACK_ANALOG:
        ch = record.analog_by_role(role)
        if ch is None:
            continue
        if role in _VOLTAGE_ROLES:
            p, s = inst.vt_primary_v, inst.vt_secondary_v
        else:
            p, s = inst.ct_primary_a, inst.ct_secondary_a
        scaling = dataclasses.replace(ch.scaling, primary=float(p), secondary=float(s), ps="S")
        analog.append(dataclasses.replace(ch, scaling=scaling))
    digital: list[StatusChannel] = [
        ch for role in PLAYBACK_DIGITAL if (ch := record.digital_by_role(role)) is not None
    ]
    out = record.with_channels(analog=analog, digital=digital, step="playback channels")
    header = (
        f"Relay playback case {case.case} of plan {plan.name!r} (recordscan). "
        f"{case.describe()}. Secondary values: VT {inst.vt_primary_v * math.sqrt(3) / 1e3:g} kV"
        f"/{inst.vt_secondary_v * math.sqrt(3):g} V, CT {inst.ct_primary_a:g}/"
        f"{inst.ct_secondary_a:g} A. Simulated, fictional data; truth in manifest.json."
    )
    return dataclasses.replace(out, header_text=header)


def _clean(obj: Any) -> Any:
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, np.generic):
        return _clean(obj.item())
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def truth_case(
    case: PlanCase, truth: dict[str, Any], *, file: str, frequency_hz: float, rate_hz: float
) -> TruthCase:
    """The manifest row of one simulated case.

    ``latest_permit_s`` is :meth:`PlanCase.latest_permit_s` of the true secondary-arc
    start (``secondary_arc_start_s + max_dead_time_s − close_time_s``).
    """
    sa = truth.get("secondary_arc_start_s")
    latest = None if sa is None else case.latest_permit_s(float(sa))
    restrikes = tuple(float(t) for t in truth.get("restrike_s") or ())
    ext = truth.get("extinction_s")
    permanent = bool(truth.get("permanent"))
    if permanent:
        outcome = "permanent fault: the relay must block"
    elif ext is None:
        outcome = "the arc burns to the end of the record: the relay must block"
    elif latest is not None and ext > latest:
        outcome = "the arc outlives the dead time: the relay must block"
    else:
        outcome = "the arc goes out in time: permit expected"
    notes = f"{case.describe()}; {len(restrikes)} restrike(s); {outcome}"
    extra = {
        "origin": case.origin,
        "label": case.label,
        "settings": dict(case.settings),
        "line": case.line_name,
        "max_dead_time_s": case.max_dead_time_s,
        "close_time_s": case.close_time_s,
        "vt": case.scenario.instruments.vt,
        "scenario_seed": case.scenario.seed,
        "secondary_arc_current_rms_a": truth.get("secondary_arc_current_rms_a"),
        "recovery_voltage_rms_v": truth.get("recovery_voltage_rms_v"),
        "extinctions_s": list(truth.get("extinctions_s") or ()),
    }
    return TruthCase(
        case=case.case,
        file=file,
        frequency_hz=float(frequency_hz),
        inception_s=float(truth["fault_inception_s"]),
        permanent=permanent,
        secondary_arc_start_s=None if sa is None else float(sa),
        restrike_s=restrikes,
        extinction_s=None if (ext is None or permanent) else float(ext),
        latest_permit_s=latest,
        sample_rate_hz=float(rate_hz),
        notes=notes,
        extra=_clean(extra),
    )


def _meta(plan: Plan, failures: list[CaseFailure]) -> dict[str, Any]:
    from recordscan import __version__

    pb = plan.playback
    return _clean(
        {
            "plan": plan.name,
            "plan_file": plan.source_path,
            "description": plan.description,
            "seed": plan.seed,
            "recordscan_version": __version__,
            "time_reference": TIME_REFERENCE,
            "playback": {
                "vt_primary_kv": None if pb.vt_primary_ll_v is None else pb.vt_primary_ll_v / 1e3,
                "vt_secondary_v": pb.vt_secondary_ll_v,
                "vt_ratio_note": "line-to-line ratings; phase channels use primary/√3 : "
                "secondary/√3",
                "ct_primary_a": pb.ct_primary_a,
                "ct_secondary_a": pb.ct_secondary_a,
                "rate_hz": pb.rate_hz,
                "revision": pb.revision,
                "format": pb.data_format,
                "cff": pb.cff,
                "pre_fault_s": pb.pre_fault_s,
            },
            "latest_permit_rule": "secondary_arc_start_s + max_dead_time_s - close_time_s",
            "n_planned": len(plan.cases),
            "failed_cases": [dataclasses.asdict(f) for f in failures],
        }
    )


def build_playback_set(
    plan: Plan,
    out_dir: str | Path,
    *,
    progress: Callable[[int, int, str], None] | None = None,
) -> PlaybackSet:
    """Simulate every case of a plan and write the playback set.

    Parameters
    ----------
    plan : Plan
        From :func:`recordscan.relaytest.plan.load_plan`.
    out_dir : path
        Folder for the records, ``scenarios/case-NNN.toml`` (each case's scenario, to
        re-run one with ``recordscan simulate``) and ``manifest.json``/``manifest.csv``.
    progress : callable, optional
        Called as ``progress(done, total, case_id)`` after each case.

    Returns
    -------
    PlaybackSet
    """
    from recordscan.io import write
    from recordscan.synth.generate import simulate
    from recordscan.synth.scenario_toml import scenario_to_toml

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    pb = plan.playback
    cases: list[TruthCase] = []
    failures: list[CaseFailure] = []
    files: list[Path] = []
    total = len(plan.cases)
    for k, case in enumerate(plan.cases, start=1):
        try:
            event = simulate(case.scenario)
            rec = playback_record(event.records["local"], plan, case)
            paths = [
                Path(p)
                for p in write(
                    rec,
                    out / f"{case.case}.cfg",
                    revision=pb.revision,
                    data_format=pb.data_format,
                    cff=pb.cff,
                )
            ]
            if event.truth.get("fault_inception_s") is None:
                raise RecordScanError("the simulated event has no fault inception")
            cases.append(
                truth_case(
                    case,
                    event.truth,
                    file=paths[0].name,
                    frequency_hz=rec.frequency_hz,
                    rate_hz=pb.rate_hz,
                )
            )
            files.extend(paths)
            sc_path = out / "scenarios" / f"{case.case}.toml"
            _write_text(sc_path, scenario_to_toml(case.scenario, base_dir=sc_path.parent))
            files.append(sc_path)
        except (RecordScanError, ArithmeticError, np.linalg.LinAlgError) as exc:
            failures.append(CaseFailure(case.case, case.origin, f"{type(exc).__name__}: {exc}"))
        if progress is not None:
            progress(k, total, case.case)
    j_path = out / "manifest.json"
    c_path = out / "manifest.csv"
    _write_text(j_path, manifest_json(cases, meta=_meta(plan, failures)) + "\n")
    _write_text(c_path, manifest_csv(cases))
    files += [j_path, c_path]
    return PlaybackSet(out, tuple(cases), tuple(failures), tuple(files), j_path, c_path)


def _write_text(path: Path, text: str) -> None:
    """Write through a temporary file and a rename (never half-written)."""
    atomic_write_text(path, text)
