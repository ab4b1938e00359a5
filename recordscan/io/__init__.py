"""Records in and out: COMTRADE reading and writing, recorder profiles.

:func:`read` and :func:`write` are the public entry points; the COMTRADE details live in
:mod:`recordscan.io.comtrade`. Importing this package pulls in numpy only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    import os
    from pathlib import Path

    from recordscan.core.record import Record
    from recordscan.io.profiles import Profile

__all__ = ["read", "write"]


def read(
    path: str | os.PathLike[str],
    *,
    encoding: str | None = None,
    profile: Profile | str | os.PathLike[str] | None = None,
    assign_roles: bool = True,
) -> Record:
    """Read a COMTRADE record into a :class:`~recordscan.core.record.Record`.

    Parameters
    ----------
    path : path-like
        The .cfg, the .dat, the .cff, or the stem without extension (any letter case).
    encoding : str or None
        Text encoding of the configuration; None tries UTF-8, then detects GBK, cp1251 or
        latin-1 from the text.
    profile : Profile, path-like or None
        Recorder profile for channel roles (see :mod:`recordscan.io.profiles`).
    assign_roles : bool
        Assign channel roles after reading.

    Returns
    -------
    Record
        Primary SI values (V, A), float64, NaN for missing samples; provenance filled.

    Raises
    ------
    recordscan.errors.MissingFileError
        A file of the record is not there.
    recordscan.errors.FormatError
        The files are not a valid COMTRADE record; the message names the file.
    """
    from recordscan.io.comtrade.reader import read_comtrade

    record = read_comtrade(path, encoding=encoding)
    if assign_roles:
        from recordscan.io.profiles import assign_roles as _assign_roles

        record = _assign_roles(record, profile=profile)
    return record


def write(
    record: Record,
    path: str | os.PathLike[str],
    *,
    revision: str = "2013",
    data_format: str = "BINARY",
    cff: bool = False,
    encoding: str = "utf-8",
) -> list[Path]:
    """Write a record as COMTRADE; see :func:`recordscan.io.comtrade.writer.write`."""
    from recordscan.io.comtrade.writer import write as _write

    return _write(
        record, path, revision=revision, data_format=data_format, cff=cff, encoding=encoding
    )
