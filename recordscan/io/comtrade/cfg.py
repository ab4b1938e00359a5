"""The COMTRADE configuration (.cfg) file: raw model, parser and formatter.

Field rules follow IEEE C37.111-1991, -1999 and -2013 (IEC 60255-24:2013). The raw model
keeps COMTRADE's own vocabulary (``ph``, ``ccbm``, ``uu``, ``a``, ``b``, ``skew``, ``P``/``S``);
:mod:`recordscan.io.comtrade.convert` turns it into a :class:`recordscan.core.record.Record`.

The parser is tolerant where the standard's intent is clear (blank lines, trailing spaces,
an end-of-file SUB character, lower-case format words, a ``1991`` file written with 13-field
analog lines) and strict where a guess could give wrong numbers (channel counts, sample
rates, numeric fields): those raise :class:`recordscan.errors.FormatError` with the message
``"<file>: <what is wrong>"``.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass, field

from recordscan.errors import FormatError

#: revision years the parser understands ("2001" is IEC 60255-24:2001, laid out like 1999)
REVISIONS: tuple[str, ...] = ("1991", "1999", "2001", "2013")
#: data file formats of each revision
FORMATS_BY_REVISION: dict[str, tuple[str, ...]] = {
    "1991": ("ASCII", "BINARY"),
    "1999": ("ASCII", "BINARY"),
    "2001": ("ASCII", "BINARY"),
    "2013": ("ASCII", "BINARY", "BINARY32", "FLOAT32"),
}
ALL_FORMATS: tuple[str, ...] = ("ASCII", "BINARY", "BINARY32", "FLOAT32")

_NS_PER_DAY = 86_400 * 10**9
_EPOCH_ORDINAL = _dt.date(1970, 1, 1).toordinal()
_DATE_RE = re.compile(r"^(\d{1,2})/(\d{1,2})/(\d{2}|\d{4})$")
_TIME_RE = re.compile(r"^(\d{1,2}):(\d{1,2}):(\d{1,2})(?:\.(\d*))?$")
_TZ_RE = re.compile(r"^([+-]?)(\d{1,2})(?:[hH](\d{1,2}))?$")


@dataclass(frozen=True)
class AnalogSpec:
    """One analog channel line of a cfg (COMTRADE vocabulary, values as written)."""

    index: int
    name: str
    ph: str = ""
    ccbm: str = ""
    uu: str = ""
    a: float = 1.0
    b: float = 0.0
    skew_us: float = 0.0
    min_raw: float = -32767.0
    max_raw: float = 32767.0
    primary: float = 1.0
    secondary: float = 1.0
    ps: str = "P"


@dataclass(frozen=True)
class StatusSpec:
    """One status (digital) channel line of a cfg."""

    index: int
    name: str
    ph: str = ""
    ccbm: str = ""
    y: int = 0


@dataclass(frozen=True)
class Config:
    """The contents of a .cfg file.

    Attributes
    ----------
    station, device : str
        ``station_name`` and ``rec_dev_id``.
    revision : str
        ``"1991"``, ``"1999"``, ``"2001"`` or ``"2013"``.
    analog, status : tuple
        Channel descriptions in file order.
    lf_hz : float
        Nominal line frequency.
    nrates : int
        The ``nrates`` field as written (0 means timestamps only).
    rates : tuple of (float, int)
        ``(samp, endsamp)`` pairs; for ``nrates = 0`` the optional ``0,endsamp`` line.
    start_ns, trigger_ns : int or None
        First-sample and trigger instants, integer ns since 1970 in the file's time zone
        (see ``tz_offset_ns``); None when the field is blank or all-zero.
    data_format : str
        ``"ASCII"``, ``"BINARY"``, ``"BINARY32"`` or ``"FLOAT32"``.
    timemult : float
        Multiplier of the .dat timestamps.
    time_unit_s : float
        Unit of a .dat timestamp before ``timemult``: 1e-6, or 1e-9 when the cfg's date/time
        stamps carry nanoseconds (C37.111-2013).
    tz_offset_ns : int or None
        The 2013 ``time_code`` (local time of the stamps minus UTC) in ns, None if not given.
    local_code, tmq_code, leapsec : str
        The remaining 2013 fields, as written.
    notes : tuple of str
        Tolerated deviations found while parsing.
    """

    station: str
    device: str
    revision: str
    analog: tuple[AnalogSpec, ...]
    status: tuple[StatusSpec, ...]
    lf_hz: float
    nrates: int
    rates: tuple[tuple[float, int], ...]
    start_ns: int | None
    trigger_ns: int | None
    data_format: str
    timemult: float = 1.0
    time_unit_s: float = 1e-6
    tz_offset_ns: int | None = None
    local_code: str = ""
    tmq_code: str = ""
    leapsec: str = ""
    notes: tuple[str, ...] = field(default=())

    @property
    def n_samples_declared(self) -> int | None:
        """Number of samples the cfg declares (last ``endsamp``), None if not declared."""
        if not self.rates:
            return None
        return int(self.rates[-1][1])


# --------------------------------------------------------------------------- helpers
class _Lines:
    """Non-blank cfg lines with their 1-based line numbers, read one at a time."""

    def __init__(self, text: str, name: str) -> None:
        self.name = name
        self.items: list[tuple[int, str]] = []
        for no, raw in enumerate(text.replace("\x1a", "").splitlines(), start=1):
            line = raw.strip()
            if line:
                self.items.append((no, line))
        self.pos = 0

    def next(self, what: str) -> tuple[int, str]:
        if self.pos >= len(self.items):
            raise FormatError(f"{self.name}: ends before the {what} line")
        item = self.items[self.pos]
        self.pos += 1
        return item

    def peek(self) -> str | None:
        return self.items[self.pos][1] if self.pos < len(self.items) else None

    def blank_before(self, no: int) -> bool:
        """True when the physical line before line ``no`` was blank (skipped)."""
        prev = self.items[self.pos - 2][0] if self.pos >= 2 else 0
        return no - prev > 1

    def remaining(self) -> int:
        return len(self.items) - self.pos


def _fields(line: str, want: int | None = None) -> list[str]:
    """Split a cfg line on commas; drop empty fields beyond ``want`` (trailing commas)."""
    parts = [p.strip() for p in line.split(",")]
    if want is not None:
        while len(parts) > want and parts[-1] == "":
            parts.pop()
    return parts


def _float(text: str, name: str, no: int, what: str, *, default: float | None = None) -> float:
    if text == "" and default is not None:
        return default
    try:
        value = float(text)
    except ValueError:
        raise FormatError(f"{name}: line {no}: {what} is not a number: {text!r}") from None
    if value != value or value in (float("inf"), float("-inf")):
        raise FormatError(f"{name}: line {no}: {what} is not a finite number: {text!r}")
    return value


def _int(text: str, name: str, no: int, what: str) -> int:
    try:
        return int(text)
    except ValueError:
        try:
            value = float(text)
        except ValueError:
            value = float("nan")
        if value == value and value == int(value):
            return int(value)
        raise FormatError(f"{name}: line {no}: {what} is not an integer: {text!r}") from None


def _count(text: str, suffix: str, name: str, no: int) -> int:
    t = text.strip()
    if not t or t[-1].upper() != suffix:
        raise FormatError(f"{name}: line {no}: channel count {t!r} should end with {suffix!r}")
    n = _int(t[:-1], name, no, "channel count")
    if n < 0:
        raise FormatError(f"{name}: line {no}: negative channel count {t!r}")
    return n


# --------------------------------------------------------------------------- time stamps
def parse_stamp(
    line: str, *, revision: str, name: str, no: int
) -> tuple[int | None, int, list[str]]:
    """Parse a ``date,time`` stamp line into integer ns since 1970 (no float on the way).

    Parameters
    ----------
    line : str
        ``dd/mm/yyyy,hh:mm:ss.ffffff`` (1999, 2013) or ``mm/dd/yy,…`` (1991); the fraction
        may have any number of digits up to 9 (nanoseconds).
    revision : str
        Revision year; selects day/month order and the two-digit-year rule.
    name : str
        File name for messages.
    no : int
        Line number for messages.

    Returns
    -------
    tuple
        ``(ns or None, number of fraction digits, notes)``. A blank stamp or an all-zero
        date gives None.
    """
    notes: list[str] = []
    parts = _fields(line, 2)
    if len(parts) == 1 and parts[0] == "":
        return None, 0, notes
    if len(parts) != 2:
        raise FormatError(f"{name}: line {no}: date/time stamp should be 'date,time': {line!r}")
    date_s, time_s = parts
    if date_s == "" and time_s == "":
        return None, 0, notes
    m_time = _TIME_RE.match(time_s)
    if not m_time:
        raise FormatError(f"{name}: line {no}: cannot read the time {time_s!r}")
    frac = m_time.group(4) or ""
    digits = len(frac)
    if digits > 9:
        notes.append(f"line {no}: time fraction {frac!r} cut to nanoseconds")
        frac = frac[:9]
    m_date = _DATE_RE.match(date_s)
    if not m_date:
        raise FormatError(f"{name}: line {no}: cannot read the date {date_s!r}")
    f1, f2, year = (int(g) for g in m_date.groups())
    month, day = (f1, f2) if revision == "1991" else (f2, f1)
    if len(m_date.group(3)) == 2:
        # two-digit years: POSIX strptime %y rule (69-99 -> 19xx, 00-68 -> 20xx)
        year += 1900 if year >= 69 else 2000
        notes.append(f"line {no}: two-digit year read as {year}")
    if year == 0 and month == 0 and day == 0:
        notes.append(f"line {no}: date is all zero; instant unknown")
        return None, digits, notes
    hour, minute, sec = (int(m_time.group(k)) for k in (1, 2, 3))
    if hour > 23 or minute > 59 or sec > 60:
        raise FormatError(f"{name}: line {no}: time out of range {time_s!r}")
    try:
        days = _dt.date(year, month, day).toordinal() - _EPOCH_ORDINAL
    except ValueError:
        raise FormatError(f"{name}: line {no}: no such date {date_s!r}") from None
    frac_ns = int(frac.ljust(9, "0")) if frac else 0
    ns = days * _NS_PER_DAY + ((hour * 60 + minute) * 60 + sec) * 10**9 + frac_ns
    return ns, digits, notes


def format_stamp(ns: int | None, *, revision: str, nanoseconds: bool) -> str:
    """Format integer ns since 1970 as a cfg ``date,time`` stamp (blank for None)."""
    if ns is None:
        return ","
    days, rem = divmod(int(ns), _NS_PER_DAY)
    date = _dt.date.fromordinal(days + _EPOCH_ORDINAL)
    secs, frac_ns = divmod(rem, 10**9)
    hour, rest = divmod(secs, 3600)
    minute, sec = divmod(rest, 60)
    if revision == "1991":
        date_s = f"{date.month:02d}/{date.day:02d}/{date.year:04d}"
    else:
        date_s = f"{date.day:02d}/{date.month:02d}/{date.year:04d}"
    frac_s = f"{frac_ns:09d}" if nanoseconds else f"{frac_ns // 1000:06d}"
    return f"{date_s},{hour:02d}:{minute:02d}:{sec:02d}.{frac_s}"


def parse_tz(text: str) -> int | None:
    """Parse a 2013 ``time_code`` such as ``-5h30`` or ``+1`` into ns; None if not usable."""
    m = _TZ_RE.match(text.strip())
    if not m:
        return None
    sign = -1 if m.group(1) == "-" else 1
    minutes = int(m.group(2)) * 60 + int(m.group(3) or 0)
    return sign * minutes * 60 * 10**9


# --------------------------------------------------------------------------- parser
def parse_cfg(text: str, *, name: str) -> Config:
    """Parse the text of a .cfg file.

    Parameters
    ----------
    text : str
        Decoded configuration text.
    name : str
        File name used in error messages.

    Returns
    -------
    Config
        The raw configuration.

    Raises
    ------
    FormatError
        When the text is not a valid COMTRADE configuration.
    """
    if "\x00" in text:
        raise FormatError(f"{name}: holds NUL bytes; not a text configuration file")
    lines = _Lines(text, name)
    if not lines.items:
        raise FormatError(f"{name}: empty configuration file")
    notes: list[str] = []

    # line 1: station_name,rec_dev_id[,rev_year]
    no, line = lines.next("station")
    parts = _fields(line, 3)
    if len(parts) == 2:
        station, device, revision = parts[0], parts[1], "1991"
    elif len(parts) == 3:
        station, device, revision = parts
    elif len(parts) > 3 and parts[-1] in REVISIONS:
        station, device, revision = ",".join(parts[:-2]), parts[-2], parts[-1]
        notes.append(f"line {no}: station name holds commas; read as {station!r}")
    else:
        raise FormatError(f"{name}: line {no}: first line should be 'station,device,year'")
    if revision == "":
        revision = "1991"
        notes.append(f"line {no}: blank revision year read as 1991")
    if revision not in REVISIONS:
        raise FormatError(f"{name}: line {no}: unknown COMTRADE revision year {revision!r}")

    # line 2: TT,##A,##D
    no, line = lines.next("channel count")
    parts = _fields(line, 3)
    if len(parts) != 3:
        raise FormatError(f"{name}: line {no}: channel count line should be 'TT,nA,nD'")
    total = _int(parts[0], name, no, "total channel count")
    n_analog = _count(parts[1], "A", name, no)
    n_status = _count(parts[2], "D", name, no)
    if total != n_analog + n_status:
        raise FormatError(
            f"{name}: line {no}: total channel count {total} is not {n_analog}A + {n_status}D"
        )

    analog = tuple(_parse_analog(lines, k + 1, revision, name, notes) for k in range(n_analog))
    status = tuple(_parse_status(lines, k + 1, name, notes) for k in range(n_status))

    no, line = lines.next("line frequency")
    nxt = lines.peek()
    if "," not in line and nxt is not None and "," in nxt and lines.blank_before(no):
        # the lf line was left blank (the next two lines are nrates and samp,endsamp)
        lines.pos -= 1
        line = "0"
        notes.append("blank line frequency read as 0")
    if "," in line:
        raise FormatError(
            f"{name}: line {no}: expected the line frequency, found {line!r} "
            "(do the channel counts match the channel lines?)"
        )
    lf_hz = _float(line, name, no, "line frequency")

    no, line = lines.next("nrates")
    nrates = _int(line, name, no, "nrates")
    if nrates < 0:
        raise FormatError(f"{name}: line {no}: negative nrates {nrates}")
    rates: list[tuple[float, int]] = []
    n_rate_lines = nrates
    if nrates == 0:
        nxt = lines.peek()
        if nxt is not None and "/" not in nxt and ":" not in nxt and len(_fields(nxt, 2)) == 2:
            n_rate_lines = 1
    for _ in range(n_rate_lines):
        no, line = lines.next("sample rate")
        parts = _fields(line, 2)
        if len(parts) != 2:
            raise FormatError(f"{name}: line {no}: sample rate line should be 'samp,endsamp'")
        samp = _float(parts[0], name, no, "sample rate")
        endsamp = _int(parts[1], name, no, "last sample number")
        if samp < 0:
            raise FormatError(f"{name}: line {no}: negative sample rate {samp:g} Hz")
        if endsamp < 1:
            raise FormatError(f"{name}: line {no}: last sample number {endsamp} is not positive")
        if rates and endsamp <= rates[-1][1]:
            raise FormatError(
                f"{name}: line {no}: last sample numbers must increase ({endsamp} after "
                f"{rates[-1][1]})"
            )
        rates.append((samp, endsamp))
    if nrates == 0 and rates and rates[0][0] != 0:
        raise FormatError(f"{name}: nrates is 0 but a sample rate of {rates[0][0]:g} Hz is given")
    if nrates > 1 and any(r == 0 for r, _ in rates):
        raise FormatError(f"{name}: zero sample rate in a record with {nrates} sample rates")

    stamps: list[int | None] = []
    digits = [0, 0]
    for k, what in enumerate(("start date/time", "trigger date/time")):
        no, line = lines.next(what)
        if line.strip().upper() in ALL_FORMATS:
            lines.pos -= 1  # the stamp line was left blank
            notes.append(f"{what} line is blank")
            stamps.append(None)
            continue
        value, digits[k], stamp_notes = parse_stamp(line, revision=revision, name=name, no=no)
        notes += stamp_notes
        stamps.append(value)
    start_ns, trigger_ns = stamps
    d1, d2 = digits

    no, line = lines.next("data file type")
    data_format = line.strip().upper()
    if data_format not in ALL_FORMATS:
        raise FormatError(f"{name}: line {no}: unknown data file type {line.strip()!r}")
    if data_format not in FORMATS_BY_REVISION[revision]:
        notes.append(f"{data_format} is not defined for revision {revision}; read anyway")

    timemult = 1.0
    tz_offset_ns: int | None = None
    local_code = tmq_code = leapsec = ""
    if revision != "1991":
        if lines.remaining():
            no, line = lines.next("timemult")
            timemult = _float(line, name, no, "timemult")
            if timemult <= 0:
                raise FormatError(f"{name}: line {no}: timemult must be positive, not {line}")
        else:
            notes.append("no timemult line; 1 assumed")
    if revision == "2013" and lines.remaining():
        no, line = lines.next("time_code,local_code")
        parts = [*_fields(line, 2), "", ""]
        tz_offset_ns = parse_tz(parts[0])
        local_code = parts[1]
        if tz_offset_ns is None:
            notes.append(f"time_code {parts[0]!r} not understood; stamps taken as UTC")
        if lines.remaining():
            no, line = lines.next("tmq_code,leapsec")
            parts = [*_fields(line, 2), "", ""]
            tmq_code, leapsec = parts[0], parts[1]
    if revision != "2013":
        notes.append("cfg gives no time zone; stamps taken as UTC")
    if lines.remaining():
        notes.append(f"{lines.remaining()} extra line(s) at the end of the cfg ignored")

    time_unit_s = 1e-9 if max(d1, d2) > 6 else 1e-6
    return Config(
        station=station,
        device=device,
        revision=revision,
        analog=analog,
        status=status,
        lf_hz=lf_hz,
        nrates=nrates,
        rates=tuple(rates),
        start_ns=start_ns,
        trigger_ns=trigger_ns,
        data_format=data_format,
        timemult=timemult,
        time_unit_s=time_unit_s,
        tz_offset_ns=tz_offset_ns,
        local_code=local_code,
        tmq_code=tmq_code,
        leapsec=leapsec,
        notes=tuple(notes),
    )


def _parse_analog(
    lines: _Lines, position: int, revision: str, name: str, notes: list[str]
) -> AnalogSpec:
    no, line = lines.next(f"analog channel {position}")
    parts = _fields(line, 13)
    if len(parts) == 11 and parts[-1] == "":
        parts.pop()  # a 10-field line with a trailing comma
    n = len(parts)
    if revision == "1991" and n == 13:
        want = 13
        notes.append(f"line {no}: 13-field analog line in a 1991 cfg")
    elif revision == "1991":
        want = 10
    elif n == 10:
        want = 13
        parts += ["", "", ""]
        notes.append(f"line {no}: analog channel {position} lacks ratio fields; 1:1 assumed")
    else:
        want = 13
    if n not in (10, 13):
        raise FormatError(
            f"{name}: line {no}: analog channel {position} has {n} fields, expected {want}"
        )
    index = _int(parts[0], name, no, "channel number")
    if index != position:
        notes.append(f"line {no}: analog channel numbered {index}, taken as {position}")
    a = _float(parts[5], name, no, "multiplier a")
    b = _float(parts[6], name, no, "offset b", default=0.0)
    skew = _float(parts[7], name, no, "skew", default=0.0)
    cmin = _float(parts[8], name, no, "min", default=-32767.0)
    cmax = _float(parts[9], name, no, "max", default=32767.0)
    primary, secondary, ps = 1.0, 1.0, "P"
    if want == 13:
        primary = _float(parts[10], name, no, "primary", default=1.0)
        secondary = _float(parts[11], name, no, "secondary", default=1.0)
        ps = parts[12].strip().upper() or "P"
        if ps not in ("P", "S"):
            raise FormatError(f"{name}: line {no}: PS flag should be P or S, not {parts[12]!r}")
        if ps == "S" and (primary == 0 or secondary == 0):
            raise FormatError(f"{name}: line {no}: zero primary or secondary ratio term")
    return AnalogSpec(
        index=position,
        name=parts[1],
        ph=parts[2],
        ccbm=parts[3],
        uu=parts[4],
        a=a,
        b=b,
        skew_us=skew,
        min_raw=cmin,
        max_raw=cmax,
        primary=primary,
        secondary=secondary,
        ps=ps,
    )


def _parse_status(lines: _Lines, position: int, name: str, notes: list[str]) -> StatusSpec:
    no, line = lines.next(f"status channel {position}")
    parts = _fields(line, 5)
    if len(parts) == 4 and parts[-1] == "":
        parts.pop()  # a 1991 3-field line with a trailing comma
    if len(parts) == 3:  # 1991: n,ch_id,y
        parts = [parts[0], parts[1], "", "", parts[2]]
    if len(parts) != 5:
        raise FormatError(
            f"{name}: line {no}: status channel {position} has {len(parts)} fields, "
            "expected 5 (or 3 in 1991)"
        )
    index = _int(parts[0], name, no, "channel number")
    if index != position:
        notes.append(f"line {no}: status channel numbered {index}, taken as {position}")
    if parts[4] == "":
        y = 0
        notes.append(f"line {no}: blank normal state read as 0")
    else:
        y = _int(parts[4], name, no, "normal state")
        if y not in (0, 1):
            raise FormatError(f"{name}: line {no}: normal state should be 0 or 1, not {y}")
    return StatusSpec(index=position, name=parts[1], ph=parts[2], ccbm=parts[3], y=y)


# --------------------------------------------------------------------------- formatter
def _num(x: float) -> str:
    """Shortest text that reads back to the same float."""
    if x == int(x) and abs(x) < 1e15:
        return str(int(x))
    return repr(float(x))


def _clean_text(text: str) -> str:
    return text.replace(",", ";").replace("\r", " ").replace("\n", " ").strip()


def format_cfg(cfg: Config) -> str:
    """Format a :class:`Config` as cfg text (CR/LF line ends, as the standard asks).

    Commas and line breaks in names are replaced (``,`` → ``;``) since the cfg is
    comma-separated.
    """
    rev = cfg.revision
    out: list[str] = []
    first = [_clean_text(cfg.station), _clean_text(cfg.device)]
    if rev != "1991":
        first.append(rev)
    out.append(",".join(first))
    out.append(f"{len(cfg.analog) + len(cfg.status)},{len(cfg.analog)}A,{len(cfg.status)}D")
    for ch in cfg.analog:
        fields = [
            str(ch.index),
            _clean_text(ch.name),
            _clean_text(ch.ph),
            _clean_text(ch.ccbm),
            _clean_text(ch.uu),
            _num(ch.a),
            _num(ch.b),
            _num(ch.skew_us),
            _num(ch.min_raw),
            _num(ch.max_raw),
        ]
        if rev != "1991":
            fields += [_num(ch.primary), _num(ch.secondary), ch.ps]
        out.append(",".join(fields))
    for st in cfg.status:
        if rev == "1991":
            out.append(f"{st.index},{_clean_text(st.name)},{st.y}")
        else:
            out.append(
                f"{st.index},{_clean_text(st.name)},{_clean_text(st.ph)},"
                f"{_clean_text(st.ccbm)},{st.y}"
            )
    out.append(_num(cfg.lf_hz))
    out.append(str(cfg.nrates))
    for samp, endsamp in cfg.rates:
        out.append(f"{_num(samp)},{endsamp}")
    nano = cfg.time_unit_s < 1e-6
    out.append(format_stamp(cfg.start_ns, revision=rev, nanoseconds=nano))
    out.append(format_stamp(cfg.trigger_ns, revision=rev, nanoseconds=nano))
    out.append(cfg.data_format)
    if rev != "1991":
        out.append(_num(cfg.timemult))
    if rev == "2013":
        out.append(f"0,{cfg.local_code or '0'}")
        out.append(f"{cfg.tmq_code or 'F'},{cfg.leapsec or '0'}")
    return "\r\n".join(out) + "\r\n"
