"""Channel roles: automatic assignment from names and cfg fields, and recorder profiles.

A recorder names its channels as its owner configured it: ``VA``, ``Va line``, ``U_L1``,
``I L2``, ``LINE 1 V A``, ``IN``, ``3I0``, ``52a A``, ``BKR A OPEN``, ``TR L1``, ``79 CLOSE``…
:func:`assign_roles` gives each channel the role it plays in the analysis (see
:mod:`recordscan.core.roles`) from its cfg phase field, its unit and its name, and reports
phases canonically as ``A``, ``B``, ``C`` (``N`` for residual quantities).

It never guesses. A channel whose name does not say clearly what it is, or two channels that
both look like the same role, keep ``role=None``; :func:`role_report` lists them and shows
how to write a recorder profile (TOML, schema in ``docs/profiles.md``) that says which
channel is which, including records that hold several line bays.

Pole-status channels recorded in the *open* sense (``BKR A OPEN``, ``52b A``) are inverted
to the *closed* sense that the ``pole_*`` roles mean (True = pole closed); each inversion is
recorded in :attr:`recordscan.core.record.Record.processing`.
"""

from __future__ import annotations

import dataclasses
import fnmatch
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, cast

import numpy as np

from recordscan.core import roles as R
from recordscan.core.record import AnalogChannel, Record, StatusChannel
from recordscan.core.tomlfile import read_toml
from recordscan.errors import FormatError, RoleError
from recordscan.io.channel_names import Candidate, classify_channel, name_tokens

__all__ = [
    "BayProfile",
    "ChannelIssue",
    "ChannelRef",
    "Profile",
    "RoleReport",
    "assign_roles",
    "classify_channel",
    "load_profile",
    "parse_profile",
    "role_report",
]

PROFILE_SCHEMA = 1
_ZERO_SEQ = frozenset({"I0", "IO", "V0", "U0", "VO", "UO"})


# --------------------------------------------------------------------------- profiles
@dataclass(frozen=True)
class ChannelRef:
    """One explicit channel → role line of a profile.

    Attributes
    ----------
    role : str
        Role name (see :mod:`recordscan.core.roles`).
    name : str or None
        Channel name as recorded (matched exactly, then ignoring case and spacing).
    index : int or None
        1-based channel number in the cfg (analog and digital are numbered separately).
    invert : bool
        Digital channels only: invert the recorded values (an open-sense pole status).
    """

    role: str
    name: str | None = None
    index: int | None = None
    invert: bool = False

    def describe(self) -> str:
        """Short text naming the referenced channel."""
        return f"{self.name!r}" if self.name is not None else f"channel {self.index}"


@dataclass(frozen=True)
class BayProfile:
    """The effective profile of one line bay.

    Attributes
    ----------
    name : str
        Bay name ('' for a profile without bays).
    analog, digital : tuple of ChannelRef
        Explicit role assignments.
    match : tuple of str
        Shell-style patterns (``"LINE 1 *"``); when given, automatic assignment considers
        only channels whose name or circuit text matches one of them.
    auto : bool
        Whether channels the profile does not name get roles automatically.
    line_file : pathlib.Path or None
        Line description file of the bay, resolved against the profile's folder.
    description : str
        Free text.
    """

    name: str = ""
    analog: tuple[ChannelRef, ...] = ()
    digital: tuple[ChannelRef, ...] = ()
    match: tuple[str, ...] = ()
    auto: bool = True
    line_file: Path | None = None
    description: str = ""


@dataclass(frozen=True)
class Profile:
    """A recorder profile: explicit channel roles, bays and line description files.

    Attributes
    ----------
    path : pathlib.Path or None
        The TOML file it came from.
    name, description : str
        Free text naming the recorder.
    bay : str or None
        The bay to use when the profile describes several (``bay = "..."``).
    common : BayProfile
        Settings given at the top level; they apply to every bay.
    bays : tuple of BayProfile
        Per-bay settings (``[bays.NAME]`` tables); empty for a single-bay profile.
    """

    path: Path | None = None
    name: str = ""
    description: str = ""
    bay: str | None = None
    common: BayProfile = dataclasses.field(default_factory=BayProfile)
    bays: tuple[BayProfile, ...] = ()

    @property
    def bay_names(self) -> tuple[str, ...]:
        """Names of the bays the profile describes."""
        return tuple(b.name for b in self.bays)

    def select(self, bay: str | None = None) -> BayProfile:
        """Return the effective settings for one bay (top-level settings merged in).

        Parameters
        ----------
        bay : str, optional
            Bay name; defaults to the profile's ``bay`` key, or the only bay.

        Raises
        ------
        RoleError
            When the bay is unknown, or several bays exist and none was chosen.
        """
        where = str(self.path) if self.path else "profile"
        choice = bay or self.bay
        if not self.bays:
            if bay:
                raise RoleError(f"{where}: no bay named {bay!r}; the profile has no [bays] tables")
            return self.common
        if choice is None:
            if len(self.bays) == 1:
                choice = self.bays[0].name
            else:
                raise RoleError(
                    f"{where}: the profile describes bays {', '.join(self.bay_names)}; choose "
                    'one with bay = "..." in the profile or the --bay option'
                )
        for b in self.bays:
            if b.name == choice:
                return _merge(self.common, b)
        raise RoleError(f"{where}: no bay named {choice!r} (bays: {', '.join(self.bay_names)})")


def _merge(common: BayProfile, bay: BayProfile) -> BayProfile:
    def merged(a: tuple[ChannelRef, ...], b: tuple[ChannelRef, ...]) -> tuple[ChannelRef, ...]:
        own = {r.role for r in b}
        return (*[r for r in a if r.role not in own], *b)

    return BayProfile(
        name=bay.name,
        analog=merged(common.analog, bay.analog),
        digital=merged(common.digital, bay.digital),
        match=bay.match or common.match,
        auto=bay.auto and common.auto,
        line_file=bay.line_file or common.line_file,
        description=bay.description or common.description,
    )


_TOP_KEYS = {"schema", "name", "description", "bay", "auto", "match", "line", "analog"}
_TOP_KEYS |= {"digital", "bays"}
_BAY_KEYS = {"description", "auto", "match", "line", "analog", "digital"}


def load_profile(path: str | Path) -> Profile:
    """Read a recorder profile (TOML, schema in ``docs/profiles.md``).

    Parameters
    ----------
    path : str or pathlib.Path
        The profile file.

    Returns
    -------
    Profile

    Raises
    ------
    MissingFileError
        The file is not there.
    FormatError
        The file is not TOML, or a key is unknown or has a bad value; the message names the
        file and the key.
    """
    p = Path(path)
    data = read_toml(p, what="recorder profile")
    return parse_profile(data, source=p)


def parse_profile(data: Mapping[str, Any], *, source: str | Path | None = None) -> Profile:
    """Build a :class:`Profile` from parsed TOML data.

    Parameters
    ----------
    data : Mapping
        The parsed document.
    source : str or pathlib.Path, optional
        Where it came from; relative ``line`` paths are resolved against its folder and
        error messages name it.

    Raises
    ------
    FormatError
        A key is unknown or has a bad value.
    """
    src = Path(source) if source is not None else None
    where = str(src) if src is not None else "profile"
    base = src.parent if src is not None else Path()

    def fail(key: str, what: str) -> FormatError:
        return FormatError(f"{where}: key '{key}': {what}")

    _check_keys(data, _TOP_KEYS, "", fail)
    schema = data.get("schema", PROFILE_SCHEMA)
    if not isinstance(schema, int) or isinstance(schema, bool) or schema != PROFILE_SCHEMA:
        raise fail("schema", f"unsupported schema {schema!r} (this version reads {PROFILE_SCHEMA})")
    name = _str(data, "name", "", fail)
    bay = data.get("bay")
    if bay is not None and (not isinstance(bay, str) or not bay.strip()):
        raise fail("bay", "must be a non-empty string naming one of the [bays] tables")
    common = _parse_bay(data, "", "", base, fail)
    bays_raw = data.get("bays", {})
    if not isinstance(bays_raw, dict):
        raise fail("bays", "must be a table of [bays.NAME] tables")
    bays = []
    for bname, braw in bays_raw.items():
        key = f"bays.{bname}"
        if not isinstance(braw, dict):
            raise fail(key, "must be a table")
        _check_keys(braw, _BAY_KEYS, key + ".", fail)
        bays.append(_parse_bay(braw, bname, key + ".", base, fail))
    if bay is not None and bays and bay not in bays_raw:
        raise fail("bay", f"no bay named {bay!r} (bays: {', '.join(bays_raw)})")
    return Profile(
        path=src,
        name=name,
        description=_str(data, "description", "", fail),
        bay=bay,
        common=common,
        bays=tuple(bays),
    )


def _check_keys(data: Mapping[str, Any], allowed: set[str], prefix: str, fail: Any) -> None:
    for key in data:
        if key not in allowed:
            raise fail(prefix + key, f"unknown key (allowed here: {', '.join(sorted(allowed))})")


def _str(data: Mapping[str, Any], key: str, prefix: str, fail: Any) -> str:
    value = data.get(key, "")
    if not isinstance(value, str):
        raise fail(prefix + key, "must be a string")
    return value


def _parse_bay(
    data: Mapping[str, Any], name: str, prefix: str, base: Path, fail: Any
) -> BayProfile:
    auto = data.get("auto", True)
    if not isinstance(auto, bool):
        raise fail(prefix + "auto", "must be true or false")
    match = data.get("match", [])
    if isinstance(match, str):
        match = [match]
    if not isinstance(match, list) or not all(isinstance(m, str) and m for m in match):
        raise fail(prefix + "match", "must be a pattern string or a list of them")
    line = data.get("line")
    if line is not None and (not isinstance(line, str) or not line.strip()):
        raise fail(prefix + "line", "must be the path of a line description file")
    line_file = (
        None if line is None else (base / line if not Path(line).is_absolute() else Path(line))
    )
    analog = _parse_refs(data.get("analog", {}), prefix + "analog", R.ANALOG_ROLES, False, fail)
    digital = _parse_refs(data.get("digital", {}), prefix + "digital", R.DIGITAL_ROLES, True, fail)
    return BayProfile(
        name=name,
        analog=analog,
        digital=digital,
        match=tuple(match),
        auto=auto,
        line_file=line_file,
        description=_str(data, "description", prefix, fail),
    )


def _parse_refs(
    table: Any, key: str, allowed: frozenset[str], digital: bool, fail: Any
) -> tuple[ChannelRef, ...]:
    if not isinstance(table, dict):
        raise fail(key, "must be a table of role = channel lines")
    refs: list[ChannelRef] = []
    seen: dict[tuple[str, object], str] = {}
    for role, value in table.items():
        k = f"{key}.{role}"
        if role not in allowed:
            other = "digital" if role in R.DIGITAL_ROLES else "analog"
            hint = (
                f"it is a {other} role; put it under [{other}]"
                if role in R.ALL_ROLES
                else f"unknown role (known: {', '.join(sorted(allowed))})"
            )
            raise fail(k, hint)
        invert = False
        if isinstance(value, dict):
            extra = set(value) - {"name", "index", "invert"}
            if extra:
                raise fail(k, f"unknown field {sorted(extra)[0]!r} (use name, index, invert)")
            if ("name" in value) == ("index" in value):
                raise fail(k, "give exactly one of name or index")
            invert = value.get("invert", False)
            if not isinstance(invert, bool):
                raise fail(k + ".invert", "must be true or false")
            if invert and not digital:
                raise fail(k + ".invert", "only digital channels can be inverted")
            value = value.get("name", value.get("index"))
        if isinstance(value, bool) or not isinstance(value, (str, int)):
            raise fail(k, "must be a channel name, a 1-based channel number or a table")
        if isinstance(value, int):
            if value < 1:
                raise fail(k, f"channel number {value} must be 1 or more")
            ref = ChannelRef(role=role, index=value, invert=invert)
            ident: tuple[str, object] = ("index", value)
        else:
            if not value.strip():
                raise fail(k, "channel name is empty")
            ref = ChannelRef(role=role, name=value, invert=invert)
            ident = ("name", _norm(value))
        if ident in seen:
            raise fail(k, f"{ref.describe()} already has role {seen[ident]!r}")
        seen[ident] = role
        refs.append(ref)
    return tuple(refs)


def _norm(name: str) -> str:
    return " ".join(name.split()).casefold()


# --------------------------------------------------------------------------- assignment
Channel = AnalogChannel | StatusChannel


@dataclass(frozen=True)
class ChannelIssue:
    """A channel left without a role and why.

    Attributes
    ----------
    kind : str
        ``"analog"`` or ``"digital"``.
    index : int
        1-based channel number in the file (position when built in memory).
    name : str
        Channel name.
    reason : str
        Why no role was given.
    """

    kind: str
    index: int
    name: str
    reason: str

    def label(self) -> str:
        """``analog 3 'VA'``-style label."""
        return f"{self.kind} {self.index} {self.name!r}"


@dataclass(frozen=True)
class RoleReport:
    """Which roles were given and which channels were left without one.

    Attributes
    ----------
    source : str
        The record's file ('' in memory).
    assigned : Mapping[str, str]
        Role → channel name.
    ambiguous : Mapping[str, tuple of ChannelIssue]
        Role → the channels that all look like it (none of them was given the role).
    unassigned : tuple of ChannelIssue
        Channels without a role that are not in ``ambiguous``.
    inverted : tuple of str
        Names of digital channels inverted to the closed sense.
    """

    source: str
    assigned: Mapping[str, str]
    ambiguous: Mapping[str, tuple[ChannelIssue, ...]]
    unassigned: tuple[ChannelIssue, ...]
    inverted: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        """True when no channel is ambiguous or unassigned."""
        return not self.ambiguous and not self.unassigned

    def message(self) -> str:
        """A readable account of the problems and a profile to fix them ('' when none)."""
        if self.ok:
            return ""
        where = self.source or "record"
        lines = [
            f"{where}: {len(self.unassigned)} channel(s) without a role, "
            f"{len(self.ambiguous)} role(s) with several candidates (no guess was made)."
        ]
        for role, issues in self.ambiguous.items():
            names = ", ".join(i.label() for i in issues)
            lines.append(f"  ambiguous {role}: {names}")
        for issue in self.unassigned:
            lines.append(f"  no role: {issue.label()}: {issue.reason}")
        lines.append(
            "Channels without a role are not used by the analysis. To say which channel is "
            "which, write a recorder profile (docs/profiles.md) and pass it with --profile, "
            "for example:"
        )
        lines.extend("  " + s for s in self.profile_example().splitlines())
        return "\n".join(lines)

    def profile_example(self) -> str:
        """A profile text that names the ambiguous roles (candidates listed for a choice)."""
        analog: list[str] = []
        digital: list[str] = []
        for role, issues in self.ambiguous.items():
            first, rest = issues[0], issues[1:]
            alts = " or ".join(repr(i.name) for i in rest)
            line = f"{role} = {_toml_str(first.name)}  # or {alts}"
            (digital if role in R.DIGITAL_ROLES else analog).append(line)
        for issue in self.unassigned[: max(0, 3 - len(analog) - len(digital))]:
            line = f"# ROLE = {_toml_str(issue.name)}  # give {issue.label()} a role"
            (digital if issue.kind == "digital" else analog).append(line)
        out = ["schema = 1"]
        if analog:
            out += ["[analog]", *analog]
        if digital:
            out += ["[digital]", *digital]
        if any(i.kind == "digital" and "sense" in i.reason for i in self.unassigned):
            out.append('# pole_a = { name = "...", invert = true }  # open-sense pole status')
        return "\n".join(out)


def _toml_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


_INVERT_STEP = re.compile(r"^(inverted|restored) digital channel (\d+) ")


def _inverted_now(record: Record) -> set[int]:
    """1-based indices of digital channels whose values are inverted from the recording."""
    now: set[int] = set()
    for step in record.processing:
        m = _INVERT_STEP.match(step)
        if m is not None:
            (now.add if m.group(1) == "inverted" else now.discard)(int(m.group(2)))
    return now


def _index(ch: Channel, pos: int) -> int:
    return ch.source_index or pos + 1


def _find(channels: tuple[Channel, ...], ref: ChannelRef, kind: str, where: str) -> int:
    if ref.index is not None:
        for pos, ch in enumerate(channels):
            if _index(ch, pos) == ref.index:
                return pos
        raise RoleError(
            f"{where}: {kind} role {ref.role}: the record has no {kind} channel {ref.index} "
            f"({len(channels)} {kind} channels)"
        )
    assert ref.name is not None
    exact = [p for p, ch in enumerate(channels) if ch.name.strip() == ref.name.strip()]
    if len(exact) == 1:
        return exact[0]
    loose = [p for p, ch in enumerate(channels) if _norm(ch.name) == _norm(ref.name)]
    if len(exact) > 1 or len(loose) > 1:
        raise RoleError(
            f"{where}: {kind} role {ref.role}: several channels are named {ref.name!r}; "
            "refer to the channel by index instead"
        )
    if not loose:
        names = ", ".join(repr(ch.name) for ch in channels[:12])
        more = ", …" if len(channels) > 12 else ""
        raise RoleError(
            f"{where}: {kind} role {ref.role}: no {kind} channel named {ref.name!r} "
            f"(channels: {names}{more})"
        )
    return loose[0]


def _matches(ch: Channel, patterns: tuple[str, ...]) -> bool:
    if not patterns:
        return True
    texts = (ch.name.casefold(), ch.circuit.casefold())
    return any(fnmatch.fnmatchcase(t, p.casefold()) for t in texts for p in patterns)


@dataclass
class _Plan:
    roles: dict[tuple[str, int], str]
    phases: dict[tuple[str, int], str]
    invert: dict[tuple[str, int], bool]
    ambiguous: dict[str, list[tuple[str, int]]]
    issues: dict[tuple[str, int], str]


def _plan(record: Record, bay: BayProfile | None, where: str) -> _Plan:
    chans: dict[str, tuple[Channel, ...]] = {"analog": record.analog, "digital": record.digital}
    roles: dict[tuple[str, int], str] = {}
    phases: dict[tuple[str, int], str] = {}
    invert: dict[tuple[str, int], bool] = {}
    owner: dict[str, tuple[str, int]] = {}
    # 1. roles the record already carries
    for kind, chs in chans.items():
        for pos, ch in enumerate(chs):
            if ch.role:
                roles[(kind, pos)] = ch.role
                owner[ch.role] = (kind, pos)
    # 2. explicit profile lines override them
    if bay is not None:
        for kind, refs in (("analog", bay.analog), ("digital", bay.digital)):
            for ref in refs:
                pos = _find(chans[kind], ref, kind, where)
                key = (kind, pos)
                old_owner = owner.get(ref.role)
                if old_owner is not None and old_owner != key:
                    roles.pop(old_owner, None)
                old_role = roles.get(key)
                if old_role is not None and old_role != ref.role:
                    owner.pop(old_role, None)
                roles[key] = ref.role
                owner[ref.role] = key
                ph = R.phase_of(ref.role)
                if ph or ref.role in (R.I_RESIDUAL, R.V_RESIDUAL, R.I_NEUTRAL_REACTOR):
                    phases[key] = ph or "N"
                if kind == "digital":
                    invert[key] = ref.invert
    fixed = set(roles)
    # 3. automatic rules for the rest
    candidates: dict[str, list[tuple[str, int]]] = {}
    issues: dict[tuple[str, int], str] = {}
    auto = bay.auto if bay is not None else True
    zero_seq = any(set(name_tokens(ch.name)) & _ZERO_SEQ for ch in record.analog)
    patterns = bay.match if bay is not None else ()
    for kind, chs in chans.items():
        for pos, ch in enumerate(chs):
            key = (kind, pos)
            if key in fixed:
                continue
            if not auto:
                issues[key] = "not named in the profile (auto = false)"
                continue
            if not _matches(ch, patterns):
                issues[key] = f"outside the bay's channels ({', '.join(patterns)})"
                continue
            cand = classify_channel(ch)
            if cand.digit_phase and zero_seq:
                cand = Candidate(
                    None,
                    reason="phase only from a digit while the record also has I0/V0: "
                    "it may be a sequence component",
                )
            if cand.phase and cand.phase != "N":
                phases[key] = cand.phase
            if cand.role is None:
                issues[key] = cand.reason
            elif cand.role in owner:
                okind, opos = owner[cand.role]
                issues[key] = (
                    f"looks like {cand.role}, which {chans[okind][opos].name!r} already has"
                )
            else:
                candidates.setdefault(cand.role, []).append(key)
                if kind == "digital":
                    invert[key] = cand.invert
                if cand.phase:
                    phases[key] = cand.phase
    ambiguous: dict[str, list[tuple[str, int]]] = {}
    for role, keys in candidates.items():
        if len(keys) == 1:
            roles[keys[0]] = role
        else:
            ambiguous[role] = keys
            for key in keys:
                invert.pop(key, None)
    return _Plan(roles, phases, invert, ambiguous, issues)


def _selected_bay(profile: Profile | str | Path | None, bay: str | None) -> BayProfile | None:
    if profile is None:
        if bay:
            raise RoleError(f"bay {bay!r} was chosen but no recorder profile was given")
        return None
    prof = profile if isinstance(profile, Profile) else load_profile(profile)
    return prof.select(bay)


def assign_roles(
    record: Record,
    *,
    profile: Profile | str | Path | None = None,
    bay: str | None = None,
) -> Record:
    """Give each channel its role, from a recorder profile and the automatic rules.

    Parameters
    ----------
    record : Record
        The record; roles it already carries are kept unless the profile says otherwise.
    profile : Profile, str or pathlib.Path, optional
        A recorder profile or the path of its TOML file. Its explicit lines win; the
        automatic rules fill in the rest unless the profile says ``auto = false``.
    bay : str, optional
        Which line bay of the profile to use (overrides the profile's ``bay`` key).

    Returns
    -------
    Record
        A new record with ``role`` and canonical ``phase`` set on the channels it could
        place, open-sense pole channels inverted, and one processing step per change.
        Channels it could not place keep ``role=None``; see :func:`role_report`.

    Raises
    ------
    FormatError, MissingFileError
        The profile file is bad or missing.
    RoleError
        The profile names a channel or bay the record does not have.
    """
    where = record.provenance.path or "record"
    src = profile.path if isinstance(profile, Profile) else profile
    if src is not None:
        where = f"{where}: profile {src}"
    sel = _selected_bay(profile, bay)
    plan = _plan(record, sel, where)
    inverted_now = _inverted_now(record)
    steps: list[str] = []

    def update(kind: str, pos: int, ch: Channel) -> Channel:
        key = (kind, pos)
        role = plan.roles.get(key)
        phase = plan.phases.get(key, ch.phase)
        changes: dict[str, Any] = {}
        if role != ch.role:
            changes["role"] = role
        if phase != ch.phase:
            changes["phase"] = phase
        if isinstance(ch, StatusChannel):
            idx = _index(ch, pos)
            now = idx in inverted_now
            want = False if role is None else plan.invert.get(key, now)
            if want != now:
                changes["values"] = np.logical_not(ch.values)
                steps.append(
                    f"inverted digital channel {idx} {ch.name!r} to the closed sense of {role}"
                    if want
                    else f"restored digital channel {idx} {ch.name!r} to its recorded sense"
                )
        return dataclasses.replace(ch, **changes) if changes else ch

    analog = cast(
        list[AnalogChannel], [update("analog", p, c) for p, c in enumerate(record.analog)]
    )
    digital = cast(
        list[StatusChannel], [update("digital", p, c) for p, c in enumerate(record.digital)]
    )
    label = "assign_roles(auto)"
    if sel is not None:
        label = f"assign_roles(profile={str(src or 'in memory')!r}, bay={sel.name!r})"
    out = record.with_channels(
        analog=analog,
        digital=digital,
        step=label,
    )
    if steps:
        out = dataclasses.replace(out, processing=(*out.processing, *steps))
    return out


def role_report(
    record: Record,
    *,
    profile: Profile | str | Path | None = None,
    bay: str | None = None,
) -> RoleReport:
    """Say which roles a record's channels have and which channels are left without one.

    Parameters
    ----------
    record : Record
        A record after :func:`assign_roles`.
    profile, bay : optional
        The same profile and bay given to :func:`assign_roles`, so that the report can
        tell channels outside the bay or not named with ``auto = false``.

    Returns
    -------
    RoleReport
    """
    where = record.provenance.path
    sel = _selected_bay(profile, bay)
    if sel is not None:
        # only the automatic part matters here: explicit lines were applied already
        sel = dataclasses.replace(sel, analog=(), digital=())
    plan = _plan(record, sel, where or "record")
    chans: dict[str, tuple[Channel, ...]] = {"analog": record.analog, "digital": record.digital}

    def issue(key: tuple[str, int], reason: str) -> ChannelIssue:
        kind, pos = key
        ch = chans[kind][pos]
        return ChannelIssue(kind, _index(ch, pos), ch.name, reason)

    ambiguous = {
        role: tuple(issue(k, f"one of {len(keys)} candidates for {role}") for k in keys)
        for role, keys in plan.ambiguous.items()
    }
    in_amb = {k for keys in plan.ambiguous.values() for k in keys}
    unassigned = tuple(
        issue(k, reason)
        for kind in ("analog", "digital")
        for k, reason in sorted(plan.issues.items())
        if k[0] == kind and k not in in_amb and chans[kind][k[1]].role is None
    )
    inverted_idx = _inverted_now(record)
    inverted = tuple(
        ch.name for p, ch in enumerate(record.digital) if _index(ch, p) in inverted_idx
    )
    return RoleReport(
        source=where,
        assigned=dict(record.roles),
        ambiguous=ambiguous,
        unassigned=unassigned,
        inverted=inverted,
    )


def channels_by_kind(record: Record) -> Iterable[tuple[str, int, Channel]]:
    """Yield ``(kind, 1-based index, channel)`` for every channel, analog first."""
    for pos, ch in enumerate(record.analog):
        yield "analog", _index(ch, pos), ch
    for pos, ch in enumerate(record.digital):
        yield "digital", _index(ch, pos), ch
