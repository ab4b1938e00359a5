"""Small helpers shared by the command modules (no heavy imports here)."""

from __future__ import annotations

import json
from typing import Any

import click

from recordscan.core.files import atomic_write_bytes, atomic_write_text

__all__ = ["CAUTION", "atomic_write_bytes", "atomic_write_text", "echo_json", "to_json_text"]

CAUTION = (
    "Caution: recordscan results support, never replace, the judgement of a qualified "
    "protection engineer. Defer to local codes, utility standards and licensed practice."
)


def echo_json(obj: Any) -> None:
    """Print one JSON document (NaN becomes null)."""
    click.echo(json.dumps(_clean(obj), ensure_ascii=False, allow_nan=False))


def _clean(obj: Any) -> Any:
    import math

    if isinstance(obj, float):
        return None if not math.isfinite(obj) else obj
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if hasattr(obj, "item") and callable(obj.item):  # numpy scalar
        return _clean(obj.item())
    return obj


def to_json_text(obj: Any, *, indent: int | None = None) -> str:
    """Serialise to JSON text with NaN/inf mapped to null and numpy scalars unwrapped."""
    return json.dumps(_clean(obj), ensure_ascii=False, allow_nan=False, indent=indent)
