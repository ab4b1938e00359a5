"""Display units.

Everything inside recordscan is SI (V, A, s, Hz, Ω, S, F, H, m). Only plotting and report
code converts to the engineer's display units, and only through this table.
"""

from __future__ import annotations

#: quantity → (display unit, factor to multiply the SI value by)
DISPLAY: dict[str, tuple[str, float]] = {
    "voltage": ("kV", 1e-3),
    "current": ("kA", 1e-3),
    "small_current": ("A", 1.0),
    "time": ("ms", 1e3),
    "time_s": ("s", 1.0),
    "frequency": ("Hz", 1.0),
    "length": ("m", 1.0),
    "line_length": ("km", 1e-3),
    "conductance": ("mS", 1e3),
    "resistance": ("Ω", 1.0),
    "capacitance_per_length": ("nF/km", 1e12),
    "gradient": ("kV/m", 1e-3),
}

#: COMTRADE ``uu`` spellings → (SI unit, multiplier to SI)
UNIT_PREFIXES: dict[str, float] = {
    "": 1.0,
    "k": 1e3,
    "m": 1e-3,
    "M": 1e6,
    "u": 1e-6,
    "µ": 1e-6,
    "μ": 1e-6,
}


def split_unit(uu: str) -> tuple[str, float]:
    """Split a unit text such as ``"kV"`` or ``"mA"`` into SI base unit and multiplier.

    Parameters
    ----------
    uu : str
        Unit text as written in a record. The base letter may be upper or lower case
        (``"kv"`` is read as kV); the prefix is case-sensitive except ``K`` (read as kilo),
        so ``"MV"`` is megavolt and ``"mV"`` millivolt.

    Returns
    -------
    tuple of (str, float)
        ``("V", 1000.0)`` for ``"kV"``; unknown units are returned stripped with factor 1.
    """
    text = uu.strip()
    if len(text) in (1, 2) and text[-1] in "VvAa":
        base = text[-1].upper()
        prefix = text[:-1]
        if prefix == "K":
            prefix = "k"
        if prefix in UNIT_PREFIXES:
            return base, UNIT_PREFIXES[prefix]
    return text, 1.0
