"""Small helpers shared by the command modules (no heavy imports here)."""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any

import click

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


def atomic_write_text(path: str | os.PathLike[str], text: str, *, encoding: str = "utf-8") -> None:
    """Write a text file so that a crash never leaves it half-written."""
    atomic_write_bytes(path, text.encode(encoding))


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write bytes to ``path`` through a temporary file and an atomic rename."""
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
