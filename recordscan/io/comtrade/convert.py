"""Turn the raw COMTRADE model (cfg + decoded dat) into a :class:`Record`.

This is the one place where COMTRADE vocabulary becomes recordscan's: a·x + b scaling,
unit prefixes (kV, mA…), the P/S flag with the primary/secondary ratio, phase texts
(R/S/T, L1/L2/L3, 1/2/3 → A/B/C), and the time axis.

Which source of time wins
-------------------------
* No usable sample rate (``nrates = 0``, or ``nrates = 1`` with rate 0): the .dat
  timestamps (× time unit × ``timemult``) are the time axis; they must all be present and
  increase.
* Sample rates given: the rates give the spacing inside each run of samples, because they
  are exact while timestamps are rounded to the time unit (a 15 360 Hz record stamped in
  whole microseconds would otherwise jitter by 1.5 %). The timestamps are checked against
  the rates interval by interval. Where they show a *gap* (an interval longer than the
  rate's by more than a quarter of it) and agree everywhere else, the gaps are kept: each
  piece after a gap is anchored at its first sample's timestamp. This keeps the dead time of
  segmented trip/reclose records, which a reader trusting only the rates erases. When the
  timestamps disagree with the rates elsewhere (all zero, wrong unit…), the rates win and a
  note says so.
"""

from __future__ import annotations

import re

import numpy as np

from recordscan.core.record import AnalogChannel, Provenance, Record, Scaling, StatusChannel
from recordscan.errors import FormatError
from recordscan.io.comtrade.cfg import Config
from recordscan.io.comtrade.dat import RawData
from recordscan.units import split_unit

_PHASE_TEXT: dict[str, str] = {
    "A": "A",
    "B": "B",
    "C": "C",
    "R": "A",
    "S": "B",
    "T": "C",
    "L1": "A",
    "L2": "B",
    "L3": "C",
    "1": "A",
    "2": "B",
    "3": "C",
    "AN": "A",
    "BN": "B",
    "CN": "C",
    "AG": "A",
    "BG": "B",
    "CG": "C",
    "N": "N",
    "G": "N",
    "E": "N",
    "0": "N",
    "NEUTRAL": "N",
    "RESIDUAL": "N",
    "RES": "N",
    "GND": "N",
}
#: name tokens that name a phase without doubt (digits alone are not trusted in names)
_NAME_TOKEN: dict[str, str] = {
    k: v for k, v in _PHASE_TEXT.items() if k not in {"1", "2", "3", "0", "E", "G", "S", "T"}
}
_SPLIT_RE = re.compile(r"[\s_\-./:()\[\]]+")
_PREFIX_RE = re.compile(r"^(?:PHASE|PH)[\s_\-.]*", re.IGNORECASE)
# a quantity letter glued to the phase: VA, IB, UL1, Ia, 3I0, 3V0, IN, VN
_GLUED_RE = re.compile(r"^(?:[VUI])(A|B|C|N|L1|L2|L3|R|S|T)$", re.IGNORECASE)
_RESIDUAL_RE = re.compile(r"^(?:3I0|3V0|3U0|I0|V0|U0|IRES|VRES|URES|IN|VN|UN)$", re.IGNORECASE)


def canonical_phase(ph: str, name: str) -> str | None:
    """Map a cfg phase text (or, when it is blank, the channel name) to A/B/C/N.

    Parameters
    ----------
    ph : str
        The cfg ``ph`` field (``"A"``, ``"R"``, ``"L2"``, ``"3"``, ``"Ph B"``…).
    name : str
        The channel name, consulted only when ``ph`` is blank.

    Returns
    -------
    str or None
        ``"A"``, ``"B"``, ``"C"``, ``"N"`` or None when not obvious (phase-to-phase texts
        such as ``"AB"`` give None).
    """
    text = _PREFIX_RE.sub("", ph.strip()).upper()
    if text:
        return _PHASE_TEXT.get(text)
    found: str | None = None
    for token in _SPLIT_RE.split(name.strip()):
        if not token:
            continue
        up = token.upper()
        phase = None
        if _RESIDUAL_RE.match(up):
            phase = "N"
        elif up in _NAME_TOKEN:
            phase = _NAME_TOKEN[up]
        else:
            m = _GLUED_RE.match(up)
            if m:
                phase = _PHASE_TEXT[m.group(1).upper()]
        if phase is not None:
            found = phase  # the last phase-like token wins ('LINE 1 V A' → A)
    return found


# --------------------------------------------------------------------------- time axis
def rate_times(rates: tuple[tuple[float, int], ...], n: int) -> np.ndarray:
    """Sample instants from declared ``(rate, last sample)`` pairs, first sample at 0.

    A sample's interval from its predecessor belongs to the sample's own rate.
    """
    t = np.empty(n, dtype=np.float64)
    start = 0
    t_prev = 0.0
    for k, (rate, endsamp) in enumerate(rates):
        stop = min(int(endsamp), n) if k < len(rates) - 1 else n
        if stop <= start:
            continue
        j = np.arange(stop - start, dtype=np.float64)
        if k == 0 or start == 0:
            t[start:stop] = t_prev + j / rate
        else:
            t[start:stop] = t_prev + (j + 1.0) / rate
        t_prev = float(t[stop - 1])
        start = stop
    return t


def time_axis(cfg: Config, raw: RawData, *, name: str) -> tuple[np.ndarray, str, list[str]]:
    """Build ``t_s`` (seconds from the first sample) and say which source won.

    Returns
    -------
    tuple
        ``(t_s, time_source, notes)`` with ``time_source`` ``"timestamps"`` or ``"rates"``.
    """
    return build_time(
        nrates=cfg.nrates,
        rates=cfg.rates,
        unit_s=cfg.time_unit_s * cfg.timemult,
        timestamps=raw.timestamps,
        name=name,
    )


def build_time(
    *,
    nrates: int,
    rates: tuple[tuple[float, int], ...],
    unit_s: float,
    timestamps: np.ndarray,
    name: str,
) -> tuple[np.ndarray, str, list[str]]:
    """Time axis from declared rates and .dat timestamps (rules in the module docstring).

    Parameters
    ----------
    nrates : int
        The cfg's ``nrates``.
    rates : tuple of (float, int)
        Declared ``(rate_hz, last_sample)`` pairs.
    unit_s : float
        Seconds per timestamp count (time unit × ``timemult``).
    timestamps : numpy.ndarray
        float64 timestamps in counts, NaN where missing.
    name : str
        File name for messages.

    Returns
    -------
    tuple
        ``(t_s, time_source, notes)``.
    """
    notes: list[str] = []
    ts = timestamps
    n = int(ts.shape[0])
    rates_ok = nrates >= 1 and all(r > 0 for r, _ in rates)
    ts_missing = np.isnan(ts)
    if not rates_ok:
        if ts_missing.any():
            raise FormatError(
                f"{name}: the cfg gives no sample rate, so every sample needs a timestamp, "
                f"but {int(ts_missing.sum())} are missing"
            )
        t = (ts - ts[0]) * unit_s
        if n > 1 and not (np.diff(t) > 0).all():
            k = int(np.flatnonzero(np.diff(t) <= 0)[0])
            raise FormatError(
                f"{name}: timestamps do not increase at sample {k + 2}; "
                "they are the only time source (no sample rate)"
            )
        return t, "timestamps", notes
    t_rate = rate_times(rates, n)
    if n < 2 or ts_missing.all():
        return t_rate, "rates", notes
    if ts_missing.any():
        notes.append("some .dat timestamps are missing; time axis from the sample rates")
        return t_rate, "rates", notes
    d_ts = np.diff(ts)
    d_ts *= unit_s
    d_rate: float | np.ndarray
    if len(rates) == 1:
        d_rate = 1.0 / rates[0][0]  # one rate: a scalar saves passes over the data
        tol: float | np.ndarray = max(0.25 * d_rate, 2.0 * unit_s)
    else:
        d_rate = np.diff(t_rate)
        tol = np.maximum(0.25 * d_rate, 2.0 * unit_s)
    dev = d_ts - d_rate
    np.abs(dev, out=dev)
    agree = dev <= tol
    if agree.all():
        return t_rate, "rates", notes
    t_ts = (ts - ts[0]) * unit_s
    gap = d_ts > d_rate + tol
    if (agree | gap).all():
        starts = np.concatenate(([0], np.flatnonzero(gap) + 1))
        offsets = t_ts[starts] - t_rate[starts]
        piece = np.searchsorted(starts, np.arange(n), side="right") - 1
        t = t_rate + offsets[piece]
        if ts[0] != 0:
            notes.append("first .dat timestamp is not 0; times taken relative to it")
        widths = ", ".join(f"{float(d_ts[g]):.6g} s" for g in np.flatnonzero(gap)[:5])
        notes.append(
            f"{int(gap.sum())} gap(s) shown by the .dat timestamps kept ({widths}); "
            "spacing inside each piece from the sample rates"
        )
        return t, "timestamps", notes
    bad = int((~agree).sum())
    notes.append(
        f".dat timestamps disagree with the sample rates at {bad} of {n - 1} intervals "
        f"(median interval {float(np.median(d_ts)):.6g} s vs "
        f"{float(np.median(np.asarray(d_rate))):.6g} s); "
        "time axis from the sample rates"
    )
    return t_rate, "rates", notes


# --------------------------------------------------------------------------- record
def to_record(
    cfg: Config,
    raw: RawData,
    *,
    name: str,
    provenance: Provenance,
    header_text: str = "",
    info_text: str = "",
    hash_source: tuple[bytes, ...] = (),
) -> Record:
    """Build a :class:`Record` (primary SI values) from the raw cfg and dat contents.

    ``hash_source``, when given, are the bytes read; the record's ``provenance.sha256`` is
    then computed from them on first access (``provenance.sha256`` is used otherwise).
    """
    t_s, time_source, time_notes = time_axis(cfg, raw, name=name)
    t_s = np.ascontiguousarray(t_s, dtype=np.float64)
    t_s.setflags(write=False)
    analog = []
    scalings: list[tuple[Scaling, str]] = []
    n_analog = len(cfg.analog)
    # One pass turns the (sample, channel) rows into contiguous float64 channel rows (exact
    # for int16/int32/float32); scaling is then in place, row by row. Signalling NaNs in
    # FLOAT32 data, absurd a·x products: no stray warnings.
    with np.errstate(invalid="ignore", over="ignore"):
        block = (
            raw.analog.T.astype(np.float64, order="C")
            if n_analog
            else np.empty((0, raw.n_samples), dtype=np.float64)
        )
        marker = raw.marker
        # the integer missing marker is the format's most negative value: look for it per
        # channel only when the record holds it at all
        any_marker = marker is not None and block.size > 0 and float(block.min()) <= marker
        for j, spec in enumerate(cfg.analog):
            base, factor = split_unit(spec.uu)
            is_vi = base in ("V", "A")
            scaling = Scaling(
                a=spec.a,
                b=spec.b,
                unit_factor=factor if is_vi else 1.0,
                primary=spec.primary,
                secondary=spec.secondary,
                ps=spec.ps,
                skew_s=spec.skew_us * 1e-6,
            )
            f = scaling.to_primary
            values = block[j]
            miss = None
            if any_marker:
                miss = values == marker
            elif raw.missing is not None:
                miss = raw.missing[:, j]
            values *= spec.a * f
            if spec.b:
                values += spec.b * f
            if miss is not None and miss.any():
                values[miss] = np.nan
            scalings.append((scaling, base if is_vi else spec.uu.strip()))
    # read-only block and rows: handed over to the Record without another copy
    block.setflags(write=False)
    for j, (spec, (scaling, unit)) in enumerate(zip(cfg.analog, scalings, strict=True)):
        values = block[j]
        values.setflags(write=False)
        analog.append(
            AnalogChannel(
                name=spec.name,
                values=values,
                unit=unit,
                phase=canonical_phase(spec.ph, spec.name),
                circuit=spec.ccbm,
                source_index=spec.index,
                source_phase=spec.ph,
                source_unit=spec.uu,
                scaling=scaling,
            )
        )
    # status rows contiguous in one copy, handed over read-only
    status_block = np.ascontiguousarray(raw.status.T, dtype=bool)
    if status_block.base is not None:
        status_block = status_block.copy()
    status_block.setflags(write=False)
    digital = [
        StatusChannel(
            name=spec.name,
            values=status_block[k],
            phase=canonical_phase(spec.ph, spec.name),
            circuit=spec.ccbm,
            normal_state=spec.y,
            source_index=spec.index,
            source_phase=spec.ph,
        )
        for k, spec in enumerate(cfg.status)
    ]
    start_ns, trigger_ns = cfg.start_ns, cfg.trigger_ns
    if cfg.tz_offset_ns:
        start_ns = None if start_ns is None else start_ns - cfg.tz_offset_ns
        trigger_ns = None if trigger_ns is None else trigger_ns - cfg.tz_offset_ns
    notes = (*provenance.notes, *cfg.notes, *time_notes)
    if raw.n_samples and int(raw.sample_numbers[0]) == 0:
        notes = (*notes, "sample numbers start at 0")
    rates_ok = cfg.nrates >= 1 and all(r > 0 for r, _ in cfg.rates)
    return Record(
        t_s=t_s,
        analog=tuple(analog),
        digital=tuple(digital),
        frequency_hz=cfg.lf_hz,
        station=cfg.station,
        device=cfg.device,
        start_ns=start_ns,
        trigger_ns=trigger_ns,
        sample_rates=tuple((float(r), int(e)) for r, e in cfg.rates) if rates_ok else (),
        header_text=header_text,
        info_text=info_text,
        provenance=Provenance(
            path=provenance.path,
            revision=cfg.revision,
            data_format=cfg.data_format,
            container=provenance.container,
            sha256="" if hash_source else provenance.sha256,
            encoding=provenance.encoding,
            time_source=time_source,
            notes=notes,
            hash_source=hash_source,
        ),
    )
