"""recordscan — secondary-arc evidence from COMTRADE records of single-pole trips.

The public surface is small and loaded lazily, so that ``recordscan inspect`` starts fast:

- :func:`read`, :func:`write` — COMTRADE records in and out (:mod:`recordscan.io`);
- :class:`Record` — the immutable record in primary SI units;
- :func:`analyse`, :class:`Analysis` — the event chain of one record;
- :func:`fit_arc` — arc-model parameters from a record;
- :func:`simulate` — a synthetic event with known truth.

Results support, never replace, the judgement of a qualified protection engineer.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

_LAZY = {
    "read": ("recordscan.io", "read"),
    "write": ("recordscan.io", "write"),
    "Record": ("recordscan.core.record", "Record"),
    "analyse": ("recordscan.analysis", "analyse"),
    "Analysis": ("recordscan.analysis", "Analysis"),
    "fit_arc": ("recordscan.fit", "fit_arc"),
    "simulate": ("recordscan.synth", "simulate"),
}

__all__ = ["__version__", *_LAZY]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        module, attr = _LAZY[name]
        value = getattr(import_module(module), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'recordscan' has no attribute {name!r}")
