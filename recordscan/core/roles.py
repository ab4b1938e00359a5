"""Channel role vocabulary.

A role says what a channel *is* for the analysis, whatever the recorder called it. Phases are
canonical ``A``, ``B``, ``C``. The automatic assignment and recorder profiles live in
:mod:`recordscan.io.profiles`; this module only holds the names, so every layer can use
them without importing the reader.
"""

from __future__ import annotations

PHASES: tuple[str, str, str] = ("A", "B", "C")

#: line-side phase-to-ground voltages
V_LINE = {"A": "v_a", "B": "v_b", "C": "v_c"}
#: bus-side phase-to-ground voltages (a bus VT cannot see the open phase)
V_BUS = {"A": "vbus_a", "B": "vbus_b", "C": "vbus_c"}
#: line phase currents
I_LINE = {"A": "i_a", "B": "i_b", "C": "i_c"}
#: residual (3·I0) current and voltage
I_RESIDUAL = "i_n"
V_RESIDUAL = "v_n"
#: current in the neutral reactor of a four-legged shunt reactor bank
I_NEUTRAL_REACTOR = "i_nr"
#: staged-test fault-point arc current and arc voltage
ARC_CURRENT = "arc_i"
ARC_VOLTAGE = "arc_v"

#: breaker pole closed status per phase (True = pole closed)
POLE_CLOSED = {"A": "pole_a", "B": "pole_b", "C": "pole_c"}
#: trip command per phase
TRIP = {"A": "trip_a", "B": "trip_b", "C": "trip_c"}
#: three-pole trip command
TRIP_3P = "trip_3p"
#: reclose command
RECLOSE = "reclose"
#: a relay's extinction-detected / reclose-permit output (relay testing)
RECLOSE_PERMIT = "permit"

ANALOG_ROLES: frozenset[str] = frozenset(
    [
        *V_LINE.values(),
        *V_BUS.values(),
        *I_LINE.values(),
        I_RESIDUAL,
        V_RESIDUAL,
        I_NEUTRAL_REACTOR,
        ARC_CURRENT,
        ARC_VOLTAGE,
    ]
)
DIGITAL_ROLES: frozenset[str] = frozenset(
    [*POLE_CLOSED.values(), *TRIP.values(), TRIP_3P, RECLOSE, RECLOSE_PERMIT]
)
ALL_ROLES: frozenset[str] = ANALOG_ROLES | DIGITAL_ROLES


def phase_of(role: str) -> str | None:
    """Return the canonical phase a role refers to, or None."""
    for table in (V_LINE, V_BUS, I_LINE, POLE_CLOSED, TRIP):
        for ph, name in table.items():
            if name == role:
                return ph
    return None
