"""The playback-set manifest: one row of truth per test case.

A manifest is written beside every playback set (``manifest.json`` and ``manifest.csv``) and
read back by the verifier. Times are seconds from the first sample of the case's playback
record.

Fields of a case
----------------
case : str
    Case identifier (unique in the set).
file : str
    Playback record, relative to the manifest.
frequency_hz : float
    Nominal frequency.
permanent : bool
    A permanent (bolted) fault: the relay must never permit a reclose.
inception_s : float
    True fault inception (used to align a relay's own record to the playback).
secondary_arc_start_s : float or None
    Last pole opening of the faulted phase.
restrike_s : list of float
    True restrike instants.
extinction_s : float or None
    True final extinction (None for permanent faults or arcs that outlive the record).
latest_permit_s : float or None
    The latest instant at which a reclose permit still lets the breaker reclose within the
    allowed dead time (``secondary_arc_start_s + max_dead_time_s − close_time_s``).
expected : str
    ``"permit"`` (the arc goes out in time: a permit is expected after ``extinction_s``) or
    ``"block"`` (permanent fault, or an arc that outlives ``latest_permit_s``).
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

from recordscan.errors import FormatError

MANIFEST_SCHEMA = 1


@dataclass(frozen=True)
class TruthCase:
    """The known truth of one playback case (see module docstring for the fields)."""

    case: str
    file: str
    frequency_hz: float
    inception_s: float
    permanent: bool = False
    secondary_arc_start_s: float | None = None
    restrike_s: tuple[float, ...] = ()
    extinction_s: float | None = None
    latest_permit_s: float | None = None
    sample_rate_hz: float | None = None
    notes: str = ""
    extra: Mapping[str, Any] = field(default_factory=dict)

    @property
    def expected(self) -> str:
        """``"permit"`` or ``"block"``."""
        if self.permanent or self.extinction_s is None:
            return "block"
        if self.latest_permit_s is not None and self.extinction_s > self.latest_permit_s:
            return "block"
        return "permit"

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form, with ``expected`` added."""
        d = asdict(self)
        d["restrike_s"] = list(self.restrike_s)
        d["extra"] = dict(self.extra)
        d["expected"] = self.expected
        return d


_FLOAT_OR_NONE = ("secondary_arc_start_s", "extinction_s", "latest_permit_s", "sample_rate_hz")


def case_from_dict(d: Mapping[str, Any], *, where: str = "manifest") -> TruthCase:
    """Build a :class:`TruthCase` from a JSON or CSV row, with clear errors."""
    try:
        restrikes = d.get("restrike_s") or ()
        if isinstance(restrikes, str):
            restrikes = [x for x in restrikes.replace(",", ";").split(";") if x.strip()]
        kw: dict[str, Any] = {
            "case": str(d["case"]),
            "file": str(d.get("file") or ""),
            "frequency_hz": float(d["frequency_hz"]),
            "inception_s": float(d["inception_s"]),
            "permanent": str(d.get("permanent", False)).strip().lower() in ("1", "true", "yes"),
            "restrike_s": tuple(float(x) for x in restrikes),
            "notes": str(d.get("notes") or ""),
            "extra": dict(d.get("extra") or {}) if isinstance(d.get("extra"), Mapping) else {},
        }
        for key in _FLOAT_OR_NONE:
            v = d.get(key)
            kw[key] = None if v in (None, "", "null", "None") else float(v)
    except KeyError as exc:
        raise FormatError(f"{where}: case is missing the field {exc.args[0]!r}") from None
    except (TypeError, ValueError) as exc:
        raise FormatError(f"{where}: case {d.get('case')!r} has a bad value: {exc}") from None
    return TruthCase(**kw)


def manifest_json(cases: Sequence[TruthCase], *, meta: Mapping[str, Any] | None = None) -> str:
    """Serialise a manifest to JSON text."""
    doc = {"schema": MANIFEST_SCHEMA, **dict(meta or {}), "cases": [c.to_dict() for c in cases]}
    return json.dumps(doc, indent=1, allow_nan=False)


CSV_COLUMNS = (
    "case",
    "file",
    "expected",
    "permanent",
    "frequency_hz",
    "sample_rate_hz",
    "inception_s",
    "secondary_arc_start_s",
    "restrike_s",
    "extinction_s",
    "latest_permit_s",
    "notes",
)


def manifest_csv(cases: Sequence[TruthCase]) -> str:
    """Serialise a manifest to CSV text (restrikes joined with ';')."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=CSV_COLUMNS, lineterminator="\n")
    w.writeheader()
    for c in cases:
        d = c.to_dict()
        d["restrike_s"] = ";".join(f"{t:.6f}" for t in c.restrike_s)
        w.writerow({k: ("" if d.get(k) is None else d.get(k)) for k in CSV_COLUMNS})
    return buf.getvalue()


def load_manifest(path: str | Path) -> tuple[list[TruthCase], dict[str, Any]]:
    """Read ``manifest.json`` or ``manifest.csv``.

    Returns
    -------
    cases : list of TruthCase
    meta : dict
        Top-level fields of a JSON manifest other than ``cases`` (empty for CSV).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise FormatError(f"{p}: cannot read manifest: {exc.strerror or exc}") from None
    if p.suffix.lower() == ".json":
        try:
            doc = json.loads(text)
        except ValueError as exc:
            raise FormatError(f"{p}: not valid JSON: {exc}") from None
        if not isinstance(doc, dict) or not isinstance(doc.get("cases"), list):
            raise FormatError(f"{p}: a manifest needs a 'cases' list")
        meta = {k: v for k, v in doc.items() if k != "cases"}
        return [case_from_dict(c, where=str(p)) for c in doc["cases"]], meta
    rows = list(csv.DictReader(io.StringIO(text)))
    if not rows:
        raise FormatError(f"{p}: manifest has no cases")
    return [case_from_dict(r, where=str(p)) for r in rows], {}
