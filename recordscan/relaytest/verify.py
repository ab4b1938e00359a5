"""Verify an adaptive-reclose relay's extinction detection against known truth.

A relay under test sees a playback record and asserts a *reclose permit* (extinction
detected) at some instant. For each case the verifier decides one of:

``premature_permit``
    a permit while the arc still burned (before the final extinction, including between
    restrikes) or at any time on a permanent fault — the dangerous failure;
``missed_permit``
    no permit by ``latest_permit_s`` although the arc went out in time — an avoidable
    three-pole trip;
``correct_permit``
    a permit after the final extinction and by ``latest_permit_s``; its latency is
    ``permit − extinction``;
``correct_block``
    no permit on a case where none is expected (permanent fault, arc outliving the dead
    time);
``no_response``
    the case is in the manifest but the relay's responses do not mention it.

Responses come either as a CSV of operate times or as COMTRADE records captured during
playback with the permit output as a digital channel (role ``permit``). A relay's own record
may have another sample rate and a time offset: it is aligned on the fault inception.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from recordscan.errors import FormatError, RoleError
from recordscan.relaytest.manifest import TruthCase

VERDICT_ORDER = (
    "premature_permit",
    "missed_permit",
    "no_response",
    "correct_permit",
    "correct_block",
)


@dataclass(frozen=True)
class RelayResponse:
    """What the relay did in one case, on the playback time axis.

    Attributes
    ----------
    case : str
        Case identifier.
    permit_intervals_s : tuple of (float, float or None)
        Intervals during which the permit was asserted (end None = still asserted at the end).
    source : str
        ``"csv"`` or the path of the relay's record.
    offset_s : float
        Shift added to the relay's times to put them on the playback axis.
    resolution_s : float
        Time resolution of the response (sample interval of the relay record; 0 for CSV).
    """

    case: str
    permit_intervals_s: tuple[tuple[float, float | None], ...]
    source: str = "csv"
    offset_s: float = 0.0
    resolution_s: float = 0.0

    @property
    def first_permit_s(self) -> float | None:
        """Earliest permit assertion, or None."""
        return min((a for a, _ in self.permit_intervals_s), default=None)


@dataclass(frozen=True)
class AcceptanceLimits:
    """Pass/fail limits the tester sets.

    Attributes
    ----------
    max_latency_cycles : float
        Largest acceptable detection latency, in power-frequency cycles.
    max_premature : int
        Largest acceptable number of premature permits (normally 0).
    max_missed : int
        Largest acceptable number of missed permits.
    max_no_response : int
        Largest acceptable number of cases without any response.
    """

    max_latency_cycles: float = 3.0
    max_premature: int = 0
    max_missed: int = 0
    max_no_response: int = 0


@dataclass(frozen=True)
class CaseVerdict:
    """The verdict on one case."""

    case: str
    expected: str
    verdict: str
    first_permit_s: float | None
    latency_s: float | None
    latency_cycles: float | None
    detail: str
    truth: TruthCase
    response: RelayResponse | None

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form."""
        return {
            "case": self.case,
            "expected": self.expected,
            "verdict": self.verdict,
            "first_permit_s": self.first_permit_s,
            "latency_s": self.latency_s,
            "latency_cycles": self.latency_cycles,
            "detail": self.detail,
            "inception_s": self.truth.inception_s,
            "secondary_arc_start_s": self.truth.secondary_arc_start_s,
            "extinction_s": self.truth.extinction_s,
            "restrike_s": list(self.truth.restrike_s),
            "latest_permit_s": self.truth.latest_permit_s,
            "permanent": self.truth.permanent,
            "permit_intervals_s": [list(iv) for iv in self.response.permit_intervals_s]
            if self.response
            else [],
            "alignment_offset_s": self.response.offset_s if self.response else None,
            "source": self.response.source if self.response else None,
            "notes": self.truth.notes,
        }


@dataclass(frozen=True)
class VerificationReport:
    """Verdicts of all cases, totals, latency statistics and the pass/fail table."""

    verdicts: tuple[CaseVerdict, ...]
    limits: AcceptanceLimits
    unknown_cases: tuple[str, ...] = ()
    guidance: tuple[str, ...] = ()
    counts: Mapping[str, int] = field(default_factory=dict)
    latency_stats_s: Mapping[str, float | None] = field(default_factory=dict)
    criteria: tuple[tuple[str, str, str, bool], ...] = ()

    @property
    def passed(self) -> bool:
        """True when every acceptance criterion is met."""
        return all(ok for *_rest, ok in self.criteria)

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form (premature permits listed first)."""
        ordered = sorted(self.verdicts, key=lambda v: (VERDICT_ORDER.index(v.verdict), v.case))
        return {
            "passed": self.passed,
            "counts": dict(self.counts),
            "latency_s": dict(self.latency_stats_s),
            "criteria": [
                {"criterion": c, "limit": lim, "measured": m, "passed": ok}
                for c, lim, m, ok in self.criteria
            ],
            "limits": {
                "max_latency_cycles": self.limits.max_latency_cycles,
                "max_premature": self.limits.max_premature,
                "max_missed": self.limits.max_missed,
                "max_no_response": self.limits.max_no_response,
            },
            "unknown_cases": list(self.unknown_cases),
            "guidance": list(self.guidance),
            "cases": [v.to_dict() for v in ordered],
        }


def judge_case(truth: TruthCase, response: RelayResponse | None) -> CaseVerdict:
    """Decide the verdict of one case (see module docstring)."""
    expected = truth.expected
    cycle_s = 1.0 / truth.frequency_hz
    if response is None:
        return CaseVerdict(
            truth.case,
            expected,
            "no_response",
            None,
            None,
            None,
            "the relay's responses do not mention this case",
            truth,
            None,
        )
    first = response.first_permit_s
    ext = truth.extinction_s
    arc_from = truth.inception_s
    # 1. dangerous: a permit while the fault path still conducts
    if truth.permanent:
        if first is not None and first >= arc_from:
            return CaseVerdict(
                truth.case,
                expected,
                "premature_permit",
                first,
                None,
                None,
                f"permit at {first:.4f} s on a permanent fault",
                truth,
                response,
            )
    else:
        burn_end = math.inf if ext is None else ext
        for a, b in response.permit_intervals_s:
            end = math.inf if b is None else b
            if a < burn_end and end > arc_from:
                where = _where_in_arc(truth, max(a, arc_from))
                return CaseVerdict(
                    truth.case,
                    expected,
                    "premature_permit",
                    first,
                    None,
                    None,
                    f"permit at {max(a, arc_from):.4f} s while the arc burned ({where})",
                    truth,
                    response,
                )
    # 2. block cases
    if expected == "block":
        late = "" if first is None else f"; permit at {first:.4f} s came after the extinction"
        return CaseVerdict(
            truth.case,
            expected,
            "correct_block",
            first,
            None,
            None,
            "no permit while the fault path conducted" + late,
            truth,
            response,
        )
    # 3. permit expected
    assert ext is not None
    limit = truth.latest_permit_s if truth.latest_permit_s is not None else math.inf
    after = [a for a, _ in response.permit_intervals_s if a >= ext]
    first_ok = min(after, default=None)
    if first_ok is None or first_ok > limit:
        what = "no permit" if first_ok is None else f"permit only at {first_ok:.4f} s"
        return CaseVerdict(
            truth.case,
            expected,
            "missed_permit",
            first_ok,
            None,
            None,
            f"{what}; the arc went out at {ext:.4f} s and the permit was due by {limit:.4f} s",
            truth,
            response,
        )
    lat = first_ok - ext
    return CaseVerdict(
        truth.case,
        expected,
        "correct_permit",
        first_ok,
        lat,
        lat / cycle_s,
        f"permit {lat * 1e3:.1f} ms ({lat / cycle_s:.2f} cycles) after the final extinction",
        truth,
        response,
    )


def _where_in_arc(truth: TruthCase, t: float) -> str:
    rs = sorted(truth.restrike_s)
    if truth.secondary_arc_start_s is not None and t < truth.secondary_arc_start_s:
        return "primary fault not yet cleared"
    before = [r for r in rs if r <= t]
    if not rs:
        return "secondary arc"
    if not before:
        return f"before restrike 1 of {len(rs)}"
    k = len(before)
    if k < len(rs):
        return f"between restrikes {k} and {k + 1}"
    return f"after restrike {k}, before the final extinction"


def verify(
    cases: Sequence[TruthCase],
    responses: Mapping[str, RelayResponse],
    *,
    limits: AcceptanceLimits = AcceptanceLimits(),
) -> VerificationReport:
    """Judge every case and total the results.

    Parameters
    ----------
    cases : sequence of TruthCase
        The truth (manifest).
    responses : Mapping of str to RelayResponse
        The relay's responses by case id; missing cases count as ``no_response``.
    limits : AcceptanceLimits
        Pass/fail limits.

    Returns
    -------
    VerificationReport
    """
    by_case = {c.case: c for c in cases}
    verdicts = tuple(judge_case(c, responses.get(c.case)) for c in cases)
    counts = {k: sum(v.verdict == k for v in verdicts) for k in VERDICT_ORDER}
    counts["cases"] = len(verdicts)
    lat = np.array([v.latency_s for v in verdicts if v.latency_s is not None], dtype=float)
    lat_cyc = np.array([v.latency_cycles for v in verdicts if v.latency_cycles is not None])
    stats: dict[str, float | None] = {"n": float(lat.size)}
    for name, q in (("min", 0), ("median", 50), ("p90", 90), ("p95", 95), ("max", 100)):
        stats[name] = float(np.percentile(lat, q)) if lat.size else None
    stats["mean"] = float(lat.mean()) if lat.size else None
    worst_cyc = float(lat_cyc.max()) if lat_cyc.size else None
    n_slow = int(np.sum(lat_cyc > limits.max_latency_cycles)) if lat_cyc.size else 0
    criteria = (
        (
            "premature permits",
            f"≤ {limits.max_premature}",
            str(counts["premature_permit"]),
            counts["premature_permit"] <= limits.max_premature,
        ),
        (
            "missed permits",
            f"≤ {limits.max_missed}",
            str(counts["missed_permit"]),
            counts["missed_permit"] <= limits.max_missed,
        ),
        (
            "cases without response",
            f"≤ {limits.max_no_response}",
            str(counts["no_response"]),
            counts["no_response"] <= limits.max_no_response,
        ),
        (
            "detection latency",
            f"≤ {limits.max_latency_cycles:g} cycles in every case",
            "—" if worst_cyc is None else f"worst {worst_cyc:.2f} cycles, {n_slow} case(s) over",
            n_slow == 0,
        ),
    )
    freqs = sorted({c.frequency_hz for c in cases})
    guidance = tuple(
        f"Derived floor: a detector with a full-cycle window needs at least one cycle after "
        f"the extinction for its window to fill: {1e3 / f:.1f} ms at {f:g} Hz (derived, "
        "not a measured relay property)."
        for f in freqs
    )
    unknown = tuple(sorted(set(responses) - set(by_case)))
    return VerificationReport(verdicts, limits, unknown, guidance, counts, stats, criteria)


# ---------------------------------------------------------------------------- responses in


def responses_from_csv(path: str | Path, cases: Sequence[TruthCase]) -> dict[str, RelayResponse]:
    """Read relay operate times from CSV.

    Columns: ``case``, ``permit_s`` (empty = no permit), optional ``reset_s`` (permit
    dropped) and ``inception_s`` (the fault inception on the relay's own clock, used to align
    it to the playback). Several rows per case give several permit assertions.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise FormatError(f"{p}: cannot read responses: {exc.strerror or exc}") from None
    reader = csv.DictReader(io.StringIO(text))
    if (
        reader.fieldnames is None
        or "case" not in reader.fieldnames
        or ("permit_s" not in reader.fieldnames)
    ):
        raise FormatError(f"{p}: responses CSV needs the columns 'case' and 'permit_s'")
    truth = {c.case: c for c in cases}
    raw: dict[str, list[tuple[float, float | None]]] = {}
    offsets: dict[str, float] = {}
    for n, row in enumerate(reader, start=2):
        case = (row.get("case") or "").strip()
        if not case:
            raise FormatError(f"{p}: line {n} has no case id")
        raw.setdefault(case, [])
        try:
            if (row.get("inception_s") or "").strip() and case in truth:
                offsets[case] = truth[case].inception_s - float(row["inception_s"])
            if (row.get("permit_s") or "").strip():
                reset = (row.get("reset_s") or "").strip()
                raw[case].append((float(row["permit_s"]), float(reset) if reset else None))
        except ValueError:
            raise FormatError(f"{p}: line {n} has a non-numeric time") from None
    out = {}
    for case, ivs in raw.items():
        off = offsets.get(case, 0.0)
        shifted = tuple(sorted((a + off, None if b is None else b + off) for a, b in ivs))
        out[case] = RelayResponse(case, shifted, source=str(p), offset_s=off)
    return out


def permit_intervals(t_s: np.ndarray, permit: np.ndarray) -> tuple[tuple[float, float | None], ...]:
    """Asserted intervals of a sampled bool signal (rising edge → falling edge)."""
    x = np.asarray(permit, dtype=bool)
    if x.size == 0:
        return ()
    d = np.diff(x.astype(np.int8))
    rises = list(np.flatnonzero(d == 1) + 1)
    falls = list(np.flatnonzero(d == -1) + 1)
    if x[0]:
        rises.insert(0, 0)
    out: list[tuple[float, float | None]] = []
    for r in rises:
        f = next((f for f in falls if f > r), None)
        out.append((float(t_s[r]), None if f is None else float(t_s[f])))
    return tuple(out)


def response_from_record(
    record: Any, truth: TruthCase, *, detected_inception_s: float | None
) -> RelayResponse:
    """Build a response from a relay's captured record (digital role ``permit``).

    Parameters
    ----------
    record : Record
        The relay's record, roles assigned.
    truth : TruthCase
        The case truth (for the alignment target).
    detected_inception_s : float or None
        Fault inception found in the relay's record; None = no shift (already aligned).
    """
    from recordscan.core.roles import RECLOSE_PERMIT

    ch = record.digital_by_role(RECLOSE_PERMIT)
    if ch is None:
        raise RoleError(
            f"{record.provenance.path or 'record'}: no digital channel has the role "
            f"'{RECLOSE_PERMIT}'; map the relay's permit output in a recorder profile"
        )
    off = 0.0 if detected_inception_s is None else truth.inception_s - detected_inception_s
    ivs = permit_intervals(np.asarray(record.t_s), np.asarray(ch.values))
    shifted = tuple((a + off, None if b is None else b + off) for a, b in ivs)
    dt = float(np.median(np.diff(record.t_s))) if record.n_samples > 1 else 0.0
    return RelayResponse(
        truth.case, shifted, source=record.provenance.path, offset_s=off, resolution_s=dt
    )


def match_case(name: str, case_ids: Iterable[str]) -> str | None:
    """Find the case whose id is in a file name (longest id wins)."""
    stem = Path(name).stem.lower()
    hits = [c for c in case_ids if c.lower() in stem]
    return max(hits, key=len) if hits else None
