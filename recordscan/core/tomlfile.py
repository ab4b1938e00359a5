"""Reading the project's TOML files (line descriptions, scenarios, plans, profiles, maps).

One reader, one kind of message: ``<file>: <problem>`` on one line, as
:class:`recordscan.errors.MissingFileError` when the file is not there and
:class:`recordscan.errors.FormatError` when it cannot be read as UTF-8 TOML.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from recordscan.errors import FormatError, MissingFileError

try:
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib  # type: ignore[no-redef]


def read_toml(path: str | os.PathLike[str], *, what: str) -> dict[str, Any]:
    """Read a UTF-8 TOML file into a dict.

    Parameters
    ----------
    path : path-like
        The file.
    what : str
        What the file is, for messages ("line description", "scenario"…).

    Raises
    ------
    MissingFileError
        The file does not exist.
    FormatError
        It cannot be read, is not UTF-8 text, or is not valid TOML.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise MissingFileError(f"{p}: {what} file not found") from None
    except OSError as exc:
        raise FormatError(f"{p}: cannot read the {what} ({exc.strerror or exc})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise FormatError(f"{p}: the {what} is not UTF-8 text (byte {exc.start})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise FormatError(f"{p}: not valid TOML ({exc})") from None
