"""Automatic channel roles from a channel's cfg phase field, unit and name.

The rules behind :func:`recordscan.io.profiles.assign_roles`: a channel name is split into
tokens (``"LINE 1 V A"`` → LINE, 1, V, A; ``"U_L1"`` → U, L1; ``"VA"`` is read as voltage
of phase A), phases are mapped to the canonical A/B/C from the styles A/B/C, R/S/T,
L1/L2/L3 and 1/2/3, and the quantity comes from the unit (V or A) checked against the name.
A channel that does not say clearly what it is gets no role and a reason.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from recordscan.core import roles as R
from recordscan.core.record import AnalogChannel, StatusChannel

__all__ = ["Candidate", "classify_channel", "name_tokens"]

# --------------------------------------------------------------------------- vocabulary
_PHASE_STRONG = {
    "A": "A",
    "B": "B",
    "C": "C",
    "R": "A",
    "S": "B",
    "T": "C",
    "L1": "A",
    "L2": "B",
    "L3": "C",
    "PHA": "A",
    "PHB": "B",
    "PHC": "C",
}
_PHASE_DIGIT = {"1": "A", "2": "B", "3": "C"}
_COMPOUND = re.compile(r"^(V|U|I)(L1|L2|L3|A|B|C|R|S|T|1|2|3)(N|G|E)?$")
_RESIDUAL_I = {"IN", "3I0", "3IO", "IRES", "IE", "IG", "IGND", "INEUTRAL"}
_RESIDUAL_V = {"VN", "UN", "3V0", "3U0", "3VO", "3UO", "VRES", "URES", "UE", "VG"}
_ZERO_SEQ = {"I0", "IO", "V0", "U0", "VO", "UO"}
_PHASE_PHASE = re.compile(r"^(V|U)(AB|BC|CA|BA|CB|AC|L12|L23|L31|RS|ST|TR)$")
_NEUTRAL_WORDS = {"N", "NEUTRAL", "NEUT", "RES", "RESID", "RESIDUAL", "E", "G", "GND", "EARTH"}
_NEUTRAL_WORDS |= {"GROUND"}
_Q_V = {"V", "U", "VOLT", "VOLTS", "VOLTAGE"}
_Q_I = {"I", "CUR", "CURR", "CURRENT", "AMP", "AMPS"}
_BUS = {"BUS", "BB", "SS", "BUSBAR"}
_LINE = {"LINE", "LN"}
_BAY_WORDS = {"LINE", "LN", "BAY", "CCT", "CKT", "CIRCUIT", "FDR", "FEEDER", "BKR", "CB", "MAIN"}
_BAY_WORDS |= {"M", "RELAY", "BRK", "BREAKER", "GROUP", "GRP", "UNIT", "OUT", "OUTPUT", "IN"}
_EQUIPMENT = {"VT", "CT", "CVT"}
_ARC = {"ARC", "IARC", "VARC", "UARC"}
_REACTOR = {"REACTOR", "REAC", "RX", "SHR", "SHUNTREACTOR"}
_NR = {"NR", "NGR", "INR", "NRX"}
_POLE_WORDS = {"POLE", "CB", "BKR", "BRK", "BREAKER", "CBR", "52", "52A", "52B", "CONTACT"}
_CLOSED_SENSE = {"CLOSED", "CLSD", "CLS", "CLOSEDPOS"}
_OPEN_SENSE = {"OPEN", "OPENED", "OPN", "OPENPOS"}
_TRIP = {"TRIP", "TRP", "TR", "TRIPPED"}
# breaker-failure retrips, teleprotection signals and supervision alarms are not the trip
_NOT_TRIP = {"BF", "50BF", "CBF", "RETRIP", "RX", "RECV", "RECEIVE", "RECEIVED", "TX", "SEND"}
_NOT_TRIP |= {"DTT", "INTERTRIP", "TRANSFER", "CARRIER", "BLOCK", "BLK", "FAIL", "FAILED"}
_NOT_TRIP |= {"ALARM", "SUPV", "SUPERVISION", "HEALTHY", "TCS", "CIRCUIT"}
_THREE_POLE = {"3P", "3PH", "3POLE", "3PHASE", "3PT", "3PTRIP", "THREE", "ABC", "RST", "L123"}
_RECLOSE = {"RECLOSE", "RECL", "RCL", "AUTORECLOSE", "RECLOSING", "RECLOSURE"}
_CLOSE_CMD = {"CLOSE", "CLS_CMD", "CLOSECMD"}
_AR_WORDS = {"AR", "79", "ARC79", "AUTO"}
_NOT_RECLOSE = {"BLOCK", "BLK", "BLOCKED", "LOCKOUT", "LOCKED", "LO", "LOCK", "READY", "RDY"}
_NOT_RECLOSE |= {"PROG", "PROGRESS", "INPROG", "FAIL", "FAILED", "INHIBIT", "ENABLE", "ENABLED"}
_NOT_RECLOSE |= {"DISABLE", "DISABLED", "START", "INIT", "UNSUCCESSFUL", "ON", "OFF", "RESET"}
_PERMIT = {"PERMIT", "EXTINCT", "EXTINCTION", "EXTINGUISHED", "EXTINGUISH"}
_NOT_POLE = {"DISC", "DISCREPANCY", "DISCORD", "FAIL", "ALARM", "SUPV", "SUPERVISION", "TRIP"}
_NOT_POLE |= {"COIL", "CMD", "COMMAND", "LOCKOUT", "SF6", "SPRING", "AIR", "GAS", "LOW"}

_SPLIT = re.compile(r"[\s_\-./:,;()\[\]{}|+#=<>'\"*]+")


def name_tokens(text: str) -> list[str]:
    """Split a channel name into upper-case tokens; ``52a``/``52b`` keep their meaning."""
    out: list[str] = []
    for raw in _SPLIT.split(text.strip()):
        if not raw:
            continue
        tok = raw.upper()
        if raw in ("52a", "52b"):
            tok = "52" + raw[-1].upper()
        out.append(tok)
    return out


def _canonical_phase_field(text: str) -> tuple[str | None, str]:
    """Map a cfg ``ph`` text to a canonical phase.

    Returns ``(phase, kind)`` with kind ``"phase"``, ``"neutral"``, ``"several"`` (a
    phase-to-phase text such as ``AB``) or ``""`` (nothing usable).
    """
    t = name_tokens(text)
    if not t:
        return None, ""
    joined = "".join(t)
    if joined in _PHASE_STRONG:
        return _PHASE_STRONG[joined], "phase"
    if joined in _PHASE_DIGIT:
        return _PHASE_DIGIT[joined], "phase"
    if joined in ("N", "G", "E", "0", "NEUTRAL", "RES", "GND", "3I0", "3V0", "IN", "VN"):
        return "N", "neutral"
    m = re.fullmatch(r"(A|B|C|R|S|T|L1|L2|L3)(N|G|E)", joined)
    if m:
        return _PHASE_STRONG[m.group(1)], "phase"
    phases = {_PHASE_STRONG[x] for x in re.findall(r"L[123]|[ABCRST]", joined)}
    if len(phases) > 1:
        return None, "several"
    return None, ""


# --------------------------------------------------------------------------- classification
@dataclass(frozen=True)
class Candidate:
    """What the automatic rules make of one channel.

    Attributes
    ----------
    role : str or None
        Role the channel looks like, None when it is not recognised.
    phase : str or None
        Canonical phase (``A``/``B``/``C``, ``N`` for residual), None when unknown.
    invert : bool
        True when the channel is a pole status in the open sense and must be inverted to
        mean "pole closed".
    reason : str
        Why no role was recognised (empty when ``role`` is set).
    digit_phase : bool
        True when the phase came only from a digit (``I1``, ``V 2``), which could also be a
        sequence component.
    """

    role: str | None
    phase: str | None = None
    invert: bool = False
    reason: str = ""
    digit_phase: bool = False


def _phases_from_tokens(tokens: list[str]) -> tuple[set[str], set[str], set[str], bool]:
    """Return (strong phases, weak digit phases, quantities, neutral word present)."""
    strong: set[str] = set()
    weak: set[str] = set()
    qty: set[str] = set()
    neutral = False
    has_letter_phase = any(t in _PHASE_STRONG or _COMPOUND.match(t) for t in tokens)
    for k, tok in enumerate(tokens):
        prev = tokens[k - 1] if k else ""
        if tok in _EQUIPMENT and has_letter_phase and len(tokens) > 1:
            continue  # 'LINE VT A': VT is the instrument, not voltage of phase T
        m = _COMPOUND.match(tok)
        if m:
            qty.add("V" if m.group(1) in "VU" else "I")
            ph = m.group(2)
            (weak if ph in _PHASE_DIGIT else strong).add(_PHASE_DIGIT.get(ph) or _PHASE_STRONG[ph])
            continue
        if tok in _PHASE_STRONG:
            strong.add(_PHASE_STRONG[tok])
        elif tok in _PHASE_DIGIT and prev not in _BAY_WORDS and not prev.isdigit():
            weak.add(_PHASE_DIGIT[tok])
        elif tok in _Q_V:
            qty.add("V")
        elif tok in _Q_I:
            qty.add("I")
        elif tok in _NEUTRAL_WORDS:
            neutral = True
    return strong, weak, qty, neutral


def _resolve_phase(
    field_phase: str | None, field_kind: str, strong: set[str], weak: set[str]
) -> tuple[str | None, str]:
    """Combine the cfg phase field and the name into one phase, or say what conflicts."""
    if field_kind == "several":
        return None, "phase field names more than one phase"
    name_phases = strong or weak
    if len(name_phases) > 1:
        return None, f"name names phases {', '.join(sorted(name_phases))}"
    name_phase = next(iter(name_phases), None)
    if field_kind == "phase" and name_phase and name_phase != field_phase:
        if strong:
            return None, f"phase field says {field_phase} but the name says {name_phase}"
        name_phase = None  # a stray digit in the name yields to the phase field
    return field_phase if field_kind == "phase" else name_phase, ""


def classify_channel(
    channel: AnalogChannel | StatusChannel,
) -> Candidate:
    """Return the role a channel looks like from its phase field, unit and name.

    Parameters
    ----------
    channel : AnalogChannel or StatusChannel
        The channel; ``source_phase`` (or ``phase``), ``unit`` and ``name`` are used, and
        the circuit text (``ccbm``) for bus/line words.

    Returns
    -------
    Candidate
        The recognised role (or None with a reason), canonical phase and inversion flag.
    """
    tokens = name_tokens(channel.name)
    circuit_tokens = name_tokens(channel.circuit)
    ph_text = channel.source_phase or (channel.phase or "")
    field_phase, field_kind = _canonical_phase_field(ph_text)
    if isinstance(channel, AnalogChannel):
        return _classify_analog(channel, tokens, circuit_tokens, field_phase, field_kind)
    return _classify_digital(tokens, field_phase, field_kind)


def _classify_analog(
    ch: AnalogChannel,
    tokens: list[str],
    circuit_tokens: list[str],
    field_phase: str | None,
    field_kind: str,
) -> Candidate:
    tokset = set(tokens)
    unit_q = {"V": "V", "A": "I"}.get(ch.unit)
    strong, weak, name_q, neutral_word = _phases_from_tokens(tokens)
    for tok in tokens:
        if tok in ("IARC",):
            name_q.add("I")
        elif tok in ("VARC", "UARC"):
            name_q.add("V")
        elif tok in _RESIDUAL_I | _NR:
            name_q.add("I")
        elif tok in _RESIDUAL_V:
            name_q.add("V")
    if len(name_q) > 1:
        return Candidate(None, reason="name mentions both voltage and current")
    nq = next(iter(name_q), None)
    if unit_q and nq and unit_q != nq:
        return Candidate(None, reason=f"unit {ch.unit!r} disagrees with the name ({_QWORD[nq]})")
    q = unit_q or nq
    if q is None:
        return Candidate(None, reason=f"not a voltage or current (unit {ch.unit!r})")

    if tokset & _ARC:
        return Candidate(R.ARC_CURRENT if q == "I" else R.ARC_VOLTAGE)
    if tokset & _NR or (tokset & _REACTOR and (neutral_word or tokset & {"STAR", "NP"})):
        if q != "I":
            return Candidate(None, reason="neutral-reactor quantity that is not a current")
        return Candidate(R.I_NEUTRAL_REACTOR, phase="N")

    if any(_PHASE_PHASE.match(t) for t in tokens):
        return Candidate(None, reason="phase-to-phase voltage (no role for it)")
    residual_token = tokset & (_RESIDUAL_I | _RESIDUAL_V)
    if tokset & _ZERO_SEQ and not (strong or weak):
        return Candidate(
            None,
            reason="zero-sequence name (I0/V0 may be a third of the residual 3I0/3V0); "
            "map it in a profile if it is the residual",
        )
    phase, why = _resolve_phase(field_phase, field_kind, strong, weak)
    if why:
        return Candidate(None, reason=why)
    residual = bool(residual_token) or (field_kind == "neutral" and phase is None)
    if phase is None and neutral_word and not (strong or weak):
        residual = True
    if residual:
        if phase is not None:
            return Candidate(None, reason=f"both residual and phase {phase} in name/phase field")
        return Candidate(R.I_RESIDUAL if q == "I" else R.V_RESIDUAL, phase="N")
    if phase is None:
        return Candidate(None, reason="no phase in the phase field or the name")
    digit = not strong and field_kind != "phase"
    if q == "I":
        return Candidate(R.I_LINE[phase], phase=phase, digit_phase=digit)
    where = set(tokens) | set(circuit_tokens)
    is_bus = bool(where & _BUS)
    is_line = bool(set(tokens) & _LINE) or (not is_bus and bool(set(circuit_tokens) & _LINE))
    if is_bus and is_line:
        if set(tokens) & _BUS and set(tokens) & _LINE:
            return Candidate(None, reason="name says both bus and line")
        is_bus = bool(set(tokens) & _BUS)
    return Candidate((R.V_BUS if is_bus else R.V_LINE)[phase], phase=phase, digit_phase=digit)


_QWORD = {"V": "voltage", "I": "current"}


def _classify_digital(tokens: list[str], field_phase: str | None, field_kind: str) -> Candidate:
    tokset = set(tokens)
    joined = " ".join(tokens)
    strong, weak, _, _ = _phases_from_tokens([t for t in tokens if t not in ("52A", "52B")])
    if tokset & _PERMIT:
        return Candidate(R.RECLOSE_PERMIT)
    is_reclose = bool(tokset & _RECLOSE) or (bool(tokset & _AR_WORDS) and bool(tokset & _CLOSE_CMD))
    is_reclose = is_reclose or ("CLOSE" in tokset and tokset & {"CMD", "COMMAND"} != set())
    if is_reclose and not tokset & _NOT_RECLOSE:
        return Candidate(R.RECLOSE)
    if is_reclose:
        return Candidate(
            None, reason="a reclose status word (block/ready/lockout…), not the command"
        )
    if tokset & _TRIP and tokset & _NOT_TRIP:
        return Candidate(
            None,
            reason="a trip-related signal (breaker failure, teleprotection, "
            "supervision), not the trip command",
        )
    if tokset & _TRIP:
        three = bool(tokset & _THREE_POLE) or bool(re.search(r"\b3 (POLE|PH|PHASE|P)\b", joined))
        if three:
            return Candidate(R.TRIP_3P)
        phase, why = _resolve_phase(field_phase, field_kind, strong, weak)
        if why:
            return Candidate(None, reason=why)
        if phase is None:
            return Candidate(None, reason="trip without a phase or a three-pole mark")
        return Candidate(R.TRIP[phase], phase=phase)
    if tokset & _POLE_WORDS and not tokset & _NOT_POLE:
        closed = bool(tokset & (_CLOSED_SENSE | {"52A"}))
        opened = bool(tokset & (_OPEN_SENSE | {"52B"}))
        if closed == opened:
            return Candidate(
                None,
                reason="pole status without a clear open/closed sense "
                "(say invert = true/false in a profile)",
            )
        phase, why = _resolve_phase(field_phase, field_kind, strong, weak)
        if why:
            return Candidate(None, reason=why)
        if phase is None:
            return Candidate(None, reason="pole status without a phase")
        return Candidate(R.POLE_CLOSED[phase], phase=phase, invert=opened)
    return Candidate(None, reason="name not recognised")
