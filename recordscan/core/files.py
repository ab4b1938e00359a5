"""Writing files so that a crash or an error never leaves one half-written.

Every writer in recordscan goes through these functions: the data go to a temporary file in
the target folder, which is renamed into place only when complete. The file gets the
permissions an ordinary ``open()`` would give it (0666 less the umask), not the private
0600 of a temporary file.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator, Sequence
from pathlib import Path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def temporary_for(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    For writers that need a file name (e.g. a Parquet writer). On any exception the
    temporary file is removed and ``path`` is left as it was.
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def atomic_write_many(files: Sequence[tuple[str | os.PathLike[str], bytes]]) -> None:
    """Write several files; rename them into place only after all were written.

    A failure while writing any of them leaves none of them changed.
    """
    temps: list[tuple[str, Path]] = []
    mode = 0o666 & ~_umask()
    try:
        for final, data in files:
            target = Path(final)
            target.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
            temps.append((tmp, target))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp, mode)
        for tmp, target in temps:
            os.replace(tmp, target)
    except BaseException:
        for tmp, _ in temps:
            Path(tmp).unlink(missing_ok=True)
        raise


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write bytes to ``path`` through a temporary file and an atomic rename."""
    atomic_write_many([(path, data)])


def atomic_write_text(path: str | os.PathLike[str], text: str, *, encoding: str = "utf-8") -> None:
    """Write text to ``path`` through a temporary file and an atomic rename."""
    atomic_write_many([(path, text.encode(encoding))])
