"""Write a :class:`Record` as COMTRADE (2013: all four data formats and .cff; 1999: ASCII and
BINARY).

Values in the record are primary SI. Each analog channel is written in its source unit when
that is a prefixed form of the same SI unit (kV stays kV), else in the SI unit. A channel whose
``scaling.ps`` is ``"S"`` is written in secondary units with its primary/secondary ratio in
the cfg (relay playback files need this). The multiplier ``a`` and offset ``b`` are chosen per
channel so that the values span the integer range (±32767 for BINARY and ASCII, ±2147483647
for BINARY32; the most negative integer is the missing-value marker); FLOAT32 stores the
values divided by a power of two near their peak (b = 0), which is exact and keeps float32
away from overflow and underflow.

Time: the declared sample rates come from the record's uniform segments; the .dat timestamps
carry every gap, and the writer checks that the reader rebuilds the record's time axis from
them (else it falls back to timestamps only, ``nrates = 0``). Files are written to temporary
names and renamed into place, so an error never leaves a half-written record.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from recordscan.core.files import atomic_write_many
from recordscan.core.record import Record
from recordscan.errors import FormatError
from recordscan.io.comtrade.cff import build_cff
from recordscan.io.comtrade.cfg import AnalogSpec, Config, StatusSpec, format_cfg
from recordscan.io.comtrade.convert import build_time
from recordscan.io.comtrade.dat import (
    MISSING_INT,
    TIMESTAMP_MISSING,
    encode_ascii,
    encode_binary,
)
from recordscan.units import split_unit

#: data formats the writer offers for each revision
WRITE_FORMATS: dict[str, tuple[str, ...]] = {
    "2013": ("ASCII", "BINARY", "BINARY32", "FLOAT32"),
    "1999": ("ASCII", "BINARY"),
}
#: largest magnitude of a stored integer (the most negative value is the missing marker)
INT_RANGE: dict[str, int] = {"ASCII": 32767, "BINARY": 32767, "BINARY32": 2**31 - 1}
_MAX_RATE_RUNS = 64


def _rate_runs(record: Record) -> list[tuple[float, int]]:
    """Declared ``(rate, last sample number)`` runs from the record's uniform segments."""
    n = record.n_samples
    per_sample = np.zeros(n, dtype=np.float64)
    for seg in record.segments:
        per_sample[seg.start_idx : seg.stop_idx] = seg.rate_hz
    known = per_sample > 0
    if not known.any():
        return []
    # lone samples between gaps have no rate of their own: borrow the previous one's
    idx = np.where(known, np.arange(n), 0)
    np.maximum.accumulate(idx, out=idx)
    idx[: int(np.argmax(known))] = int(np.argmax(known))
    per_sample = per_sample[idx]
    change = np.flatnonzero(np.diff(per_sample) != 0)
    ends = [*(change + 1).tolist(), n]
    runs: list[tuple[float, int]] = []
    for e in ends:
        # 12 significant digits drop the round-off of rates measured from t_s
        rate = float(f"{float(per_sample[e - 1]):.12g}")
        if runs and runs[-1][0] == rate:
            runs[-1] = (rate, int(e))
        else:
            runs.append((rate, int(e)))
    return runs


def _time_plan(
    record: Record, revision: str
) -> tuple[int, list[tuple[float, int]], np.ndarray, float, float]:
    """Choose nrates, rates, integer timestamps, time unit and timemult."""
    t = np.asarray(record.t_s, dtype=np.float64)
    nano = revision == "2013" and any(
        v is not None and v % 1000 for v in (record.start_ns, record.trigger_ns)
    )
    unit = 1e-9 if nano else 1e-6
    limit = float(TIMESTAMP_MISSING - 1)
    span = float(t[-1] - t[0]) if t.size else 0.0
    timemult = 1.0
    if span / unit > limit:
        timemult = float(math.ceil(span / unit / limit))
    counts = np.rint((t - t[0]) / (unit * timemult))
    runs = _rate_runs(record)
    if runs and len(runs) <= _MAX_RATE_RUNS:
        rebuilt, _, _ = build_time(
            nrates=len(runs),
            rates=tuple(runs),
            unit_s=unit * timemult,
            timestamps=counts,
            name="",
        )
        tol = 0.5 * unit * timemult + 1e-9 * max(1.0, span)
        if float(np.max(np.abs(rebuilt - (t - t[0])))) <= tol:
            return len(runs), runs, counts, unit, timemult
    if t.size > 1 and not (np.diff(counts) > 0).all():
        raise FormatError(
            "record: sample instants closer than the timestamp resolution "
            f"({unit * timemult:g} s) and not uniformly sampled; cannot be written"
        )
    return 0, [(0.0, int(t.size))], counts, unit, timemult


def _phase_text(source: str, canonical: str | None) -> str:
    return source if source else (canonical or "")


def _analog_specs(
    record: Record, data_format: str
) -> tuple[list[AnalogSpec], np.ndarray, np.ndarray]:
    """Per-channel cfg lines and the stored values ``(n, n_analog)`` plus missing mask."""
    n = record.n_samples
    specs: list[AnalogSpec] = []
    stored = np.zeros((n, len(record.analog)), dtype=np.float64)
    missing = np.zeros((n, len(record.analog)), dtype=bool)
    for j, ch in enumerate(record.analog):
        uu, factor = ch.unit, 1.0
        if ch.source_unit.strip():
            base, f = split_unit(ch.source_unit)
            if base == ch.unit and ch.unit in ("V", "A"):
                uu, factor = ch.source_unit.strip(), f
        sc = ch.scaling
        ps = sc.ps.upper() if sc.ps.upper() in ("P", "S") else "P"
        ratio = 1.0
        if ps == "S":
            if sc.primary == 0 or sc.secondary == 0:
                raise FormatError(f"record: channel {ch.name!r} has a zero ratio term")
            ratio = sc.primary / sc.secondary
        values = np.asarray(ch.values, dtype=np.float64) / (factor * ratio)
        miss = ~np.isfinite(values)
        finite = values[~miss]
        if data_format == "FLOAT32":
            # a power of two brings the values near 1 (exact, no overflow or underflow)
            peak = float(np.max(np.abs(finite))) if finite.size else 0.0
            a, b = (2.0 ** math.floor(math.log2(peak)) if peak > 0 else 1.0), 0.0
            x = (values / a).astype(np.float32).astype(np.float64)
            if finite.size and not np.isfinite(x[~miss]).all():
                raise FormatError(f"record: channel {ch.name!r} exceeds the FLOAT32 range")
            lo = float(x[~miss].min()) if finite.size else 0.0
            hi = float(x[~miss].max()) if finite.size else 0.0
        else:
            xmax = INT_RANGE[data_format]
            if finite.size == 0:
                a, b = 1.0, 0.0
            else:
                vlo, vhi = float(finite.min()), float(finite.max())
                if vhi == vlo:
                    a, b = 1.0, vlo
                else:
                    b = 0.5 * (vhi + vlo)
                    a = (vhi - vlo) / (2.0 * xmax)
                    if not math.isfinite(a) or a == 0.0:
                        raise FormatError(f"record: channel {ch.name!r} cannot be scaled")
            x = np.clip(np.rint((values - b) / a), -xmax, xmax)
            lo, hi = -float(xmax), float(xmax)
        x[miss] = 0.0
        stored[:, j] = x
        missing[:, j] = miss
        specs.append(
            AnalogSpec(
                index=j + 1,
                name=ch.name,
                ph=_phase_text(ch.source_phase, ch.phase),
                ccbm=ch.circuit,
                uu=uu,
                a=a,
                b=b,
                skew_us=sc.skew_s * 1e6,
                min_raw=lo,
                max_raw=hi,
                primary=sc.primary,
                secondary=sc.secondary,
                ps=ps,
            )
        )
    return specs, stored, missing


def encode_record(record: Record, *, revision: str, data_format: str) -> tuple[Config, bytes]:
    """Build the cfg model and the encoded .dat bytes for ``record``."""
    if record.n_samples == 0:
        raise FormatError("record: has no samples; nothing to write")
    nrates, rates, counts, unit, timemult = _time_plan(record, revision)
    specs, stored, missing = _analog_specs(record, data_format)
    status = (
        np.column_stack([np.asarray(ch.values, dtype=bool) for ch in record.digital])
        if (record.digital)
        else np.zeros((record.n_samples, 0), dtype=bool)
    )
    if data_format == "ASCII":
        dat = encode_ascii(
            timestamps=counts.astype(np.int64),
            analog=stored.astype(np.int64),
            missing=missing,
            status=status,
        )
    else:
        if data_format == "FLOAT32":
            analog = stored.astype(np.float32)
            analog[missing] = np.nan
        else:
            analog = stored.astype(np.int64)
            analog[missing] = MISSING_INT[data_format]
        dat = encode_binary(
            data_format=data_format,
            timestamps=counts.astype(np.uint32),
            analog=analog,
            status=status,
        )
    cfg = Config(
        station=record.station,
        device=record.device,
        revision=revision,
        analog=tuple(specs),
        status=tuple(
            StatusSpec(
                index=k + 1,
                name=ch.name,
                ph=_phase_text(ch.source_phase, ch.phase),
                ccbm=ch.circuit,
                y=1 if ch.normal_state else 0,
            )
            for k, ch in enumerate(record.digital)
        ),
        lf_hz=float(record.frequency_hz),
        nrates=nrates,
        rates=tuple(rates),
        start_ns=record.start_ns,
        trigger_ns=record.trigger_ns,
        data_format=data_format,
        timemult=timemult,
        time_unit_s=unit,
    )
    return cfg, dat


def write(
    record: Record,
    path: str | os.PathLike[str],
    *,
    revision: str = "2013",
    data_format: str = "BINARY",
    cff: bool = False,
    encoding: str = "utf-8",
) -> list[Path]:
    """Write ``record`` as a COMTRADE record.

    Parameters
    ----------
    record : Record
        The record (primary SI values).
    path : path-like
        Target stem, or a name ending in .cfg/.dat/.cff (the extension is replaced).
    revision : {"2013", "1999"}
        COMTRADE revision.
    data_format : {"BINARY", "ASCII", "BINARY32", "FLOAT32"}
        Data file format (1999: ASCII or BINARY only).
    cff : bool
        Write one .cff file (2013 only) instead of .cfg + .dat (+ .hdr/.inf when the record
        has header/info text).
    encoding : str
        Text encoding of the cfg, hdr and inf.

    Returns
    -------
    list of pathlib.Path
        The files written.

    Raises
    ------
    FormatError
        Unsupported revision/format combination, a name the encoding cannot hold, or values
        the format cannot store. Nothing is written then.
    """
    target = Path(path)
    if target.suffix.lower() in (".cfg", ".dat", ".cff", ".hdr", ".inf"):
        target = target.with_suffix("")
    revision = str(revision)
    data_format = data_format.upper()
    if revision not in WRITE_FORMATS:
        raise FormatError(f"{target}: cannot write revision {revision!r} (2013 or 1999)")
    if data_format not in WRITE_FORMATS[revision]:
        raise FormatError(
            f"{target}: revision {revision} defines {', '.join(WRITE_FORMATS[revision])} data "
            f"files, not {data_format!r}"
        )
    if cff and revision != "2013":
        raise FormatError(f"{target}: the .cff container exists only in revision 2013")
    cfg, dat = encode_record(record, revision=revision, data_format=data_format)
    try:
        cfg_bytes = format_cfg(cfg).encode(encoding)
        hdr_bytes = record.header_text.encode(encoding)
        inf_bytes = record.info_text.encode(encoding)
    except LookupError:
        raise FormatError(f"{target}: unknown text encoding {encoding!r}") from None
    except UnicodeEncodeError as exc:
        raise FormatError(
            f"{target}: text {exc.object[exc.start : exc.end]!r} cannot be written in "
            f"{encoding}; choose another encoding"
        ) from None
    files: list[tuple[Path, bytes]]
    if cff:
        blob = build_cff(
            cfg=cfg_bytes, inf=inf_bytes, hdr=hdr_bytes, dat=dat, data_format=data_format
        )
        files = [(target.with_name(target.name + ".cff"), blob)]
    else:
        files = [
            (target.with_name(target.name + ".cfg"), cfg_bytes),
            (target.with_name(target.name + ".dat"), dat),
        ]
        if hdr_bytes:
            files.append((target.with_name(target.name + ".hdr"), hdr_bytes))
        if inf_bytes:
            files.append((target.with_name(target.name + ".inf"), inf_bytes))
    _write_all(files)
    return [p for p, _ in files]


def _write_all(files: list[tuple[Path, bytes]]) -> None:
    """Write every file to a temporary name, then rename them all into place."""
    atomic_write_many(files)
