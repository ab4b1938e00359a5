"""Gather a relay's responses (CSV files, captured COMTRADE records) and the truth to compare."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from recordscan.errors import FormatError, RecordScanError
from recordscan.relaytest.manifest import TruthCase, load_manifest
from recordscan.relaytest.verify import (
    AcceptanceLimits,
    RelayResponse,
    VerificationReport,
    match_case,
    response_from_record,
    responses_from_csv,
    verify,
)


def _expand(paths: Sequence[str | Path]) -> tuple[list[Path], list[Path]]:
    csvs: list[Path] = []
    records: list[Path] = []
    for raw in paths:
        p = Path(raw)
        items = sorted(p.rglob("*")) if p.is_dir() else [p]
        if not p.exists():
            raise FormatError(f"{p}: no such file or folder")
        for q in items:
            suf = q.suffix.lower()
            if suf == ".csv" and not q.name.lower().startswith("manifest"):
                csvs.append(q)
            elif suf in (".cfg", ".cff"):
                records.append(q)
    return csvs, records


def truth_from_analysis(path: Path, *, profile: str | None = None) -> tuple[TruthCase, object]:
    """Truth for a relay record without manifest: recordscan's own analysis of the record."""
    from recordscan.analysis import analyse
    from recordscan.io import read

    record = read(path, profile=profile)
    res = analyse(record).to_json_dict(file=str(path), sha256=record.provenance.sha256)
    if res.get("fault_inception_s") is None:
        raise RecordScanError(f"{path}: no fault found in the record, cannot set the truth")
    truth = TruthCase(
        case=path.stem,
        file=str(path),
        frequency_hz=float(record.frequency_hz),
        inception_s=float(res["fault_inception_s"]),
        permanent=False,
        secondary_arc_start_s=res.get("secondary_arc_start_s"),
        restrike_s=tuple(res.get("restrike_s") or ()),
        extinction_s=res.get("extinction_s"),
        latest_permit_s=res.get("reclose_s"),
        notes="truth from recordscan's own analysis of the record (no manifest)",
    )
    return truth, record


def verify_paths(
    paths: Sequence[str | Path],
    *,
    manifest: str | Path | None = None,
    limits: AcceptanceLimits = AcceptanceLimits(),
    profile: str | None = None,
) -> VerificationReport:
    """Verify a relay's responses given as CSV files and/or captured COMTRADE records.

    Parameters
    ----------
    paths : sequence of path
        CSV files of operate times, relay records, or folders holding them.
    manifest : path, optional
        The playback set's manifest (JSON or CSV). Without it, each relay record's truth
        comes from recordscan's own analysis of that record.
    limits : AcceptanceLimits
        Acceptance limits.
    profile : str, optional
        Recorder profile mapping the relay's permit output (role ``permit``).
    """
    from recordscan.analysis import analyse
    from recordscan.io import read

    csvs, records = _expand(paths)
    if not csvs and not records:
        raise FormatError("no CSV files or COMTRADE records among the given paths")
    responses: dict[str, RelayResponse] = {}
    if manifest is not None:
        cases, _meta = load_manifest(manifest)
        ids = [c.case for c in cases]
        by_id = {c.case: c for c in cases}
        for c in csvs:
            responses.update(responses_from_csv(c, cases))
        for r in records:
            case = match_case(r.name, ids)
            if case is None:
                continue
            rec = read(r, profile=profile)
            res = analyse(rec).to_json_dict(file=str(r), sha256=rec.provenance.sha256)
            responses[case] = response_from_record(
                rec, by_id[case], detected_inception_s=res.get("fault_inception_s")
            )
    else:
        if csvs:
            raise FormatError(
                f"{csvs[0]}: CSV operate times need the playback set's manifest (--manifest)"
            )
        cases = []
        for r in records:
            truth, rec = truth_from_analysis(r, profile=profile)
            cases.append(truth)
            responses[truth.case] = response_from_record(rec, truth, detected_inception_s=None)
    return verify(cases, responses, limits=limits)
