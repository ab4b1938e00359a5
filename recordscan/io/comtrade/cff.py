"""The single-file COMTRADE container (.cff) of IEEE C37.111-2013.

A .cff holds the four files one after the other, each under a separator line (section
layout from memory of C37.111-2013, clause on the combined file format)::

    --- file type: CFG ---
    <cfg text>
    --- file type: INF ---
    <inf text, may be empty>
    --- file type: HDR ---
    <hdr text, may be empty>
    --- file type: DAT ASCII ---            (or, for the binary formats:)
    --- file type: DAT BINARY: 123456 ---   (byte count of the binary data that follows)

The DAT section comes last. Binary data starts right after the separator line's line end
and is cut by the byte count, so that bytes that look like a line end are never taken for
one. Separator words are matched without regard to case.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from recordscan.errors import FormatError

_SEP_RE = re.compile(
    rb"^[ \t]*---[ \t]*file[ \t]+type[ \t]*:[ \t]*([A-Za-z]+)"
    rb"(?:[ \t]+([A-Za-z0-9]+))?(?:[ \t]*:[ \t]*(\d+))?[ \t]*---[ \t]*\r?$",
    re.IGNORECASE | re.MULTILINE,
)


@dataclass(frozen=True)
class CffSections:
    """The sections of a .cff file as bytes (DAT cut by its byte count when given)."""

    cfg: bytes
    inf: bytes
    hdr: bytes
    dat: bytes
    dat_format: str
    notes: tuple[str, ...] = ()


def split_cff(data: bytes, *, name: str) -> CffSections:
    """Split a .cff file into its sections.

    Parameters
    ----------
    data : bytes
        The whole file.
    name : str
        File name for messages.

    Raises
    ------
    FormatError
        No CFG or DAT section, a section twice, or a byte count beyond the end of the file.
    """
    if not data.strip():
        raise FormatError(f"{name}: empty file")
    notes: list[str] = []
    sections: dict[str, bytes] = {}
    pos = 0
    dat_format = ""
    dat: bytes | None = None
    while True:
        m = _SEP_RE.search(data, pos)
        if m is None:
            break
        if pos == 0 and data[: m.start()].strip():
            raise FormatError(f"{name}: text before the first '--- file type' line")
        kind = m.group(1).decode("ascii").upper()
        body_start = m.end()
        if data[body_start : body_start + 1] == b"\n":
            body_start += 1
        if kind == "DAT":
            dat_format = (m.group(2) or b"").decode("ascii").upper()
            if not dat_format:
                raise FormatError(f"{name}: DAT section does not name its data format")
            count = m.group(3)
            if count is not None:
                n = int(count)
                end = body_start + n
                if end > len(data):
                    raise FormatError(
                        f"{name}: DAT section announces {n} bytes but only "
                        f"{len(data) - body_start} follow (file truncated)"
                    )
                dat = data[body_start:end]
                tail = data[end:].replace(b"\x1a", b"")
                if tail.strip():
                    raise FormatError(
                        f"{name}: {len(tail)} bytes after the DAT section's announced {n} bytes"
                    )
            else:
                if dat_format != "ASCII":
                    notes.append("binary DAT section has no byte count; rest of file used")
                dat = data[body_start:]
            break
        if kind not in ("CFG", "INF", "HDR"):
            raise FormatError(f"{name}: unknown section type {kind!r}")
        if kind in sections:
            raise FormatError(f"{name}: section {kind} appears twice")
        nxt = _SEP_RE.search(data, body_start)
        end = nxt.start() if nxt else len(data)
        sections[kind] = data[body_start:end]
        pos = end
        if nxt is None:
            break
    if "CFG" not in sections:
        raise FormatError(f"{name}: no '--- file type: CFG ---' section")
    if dat is None:
        raise FormatError(f"{name}: no '--- file type: DAT <format> ---' section")
    return CffSections(
        cfg=sections["CFG"],
        inf=sections.get("INF", b""),
        hdr=sections.get("HDR", b""),
        dat=dat,
        dat_format=dat_format,
        notes=tuple(notes),
    )


def build_cff(*, cfg: bytes, inf: bytes, hdr: bytes, dat: bytes, data_format: str) -> bytes:
    """Assemble a .cff file from encoded sections (CR/LF line ends)."""
    parts = [b"--- file type: CFG ---\r\n", _ensure_eol(cfg)]
    parts += [b"--- file type: INF ---\r\n", _ensure_eol(inf)]
    parts += [b"--- file type: HDR ---\r\n", _ensure_eol(hdr)]
    if data_format == "ASCII":
        parts += [f"--- file type: DAT ASCII: {len(dat)} ---\r\n".encode("ascii"), dat]
    else:
        parts += [f"--- file type: DAT {data_format}: {len(dat)} ---\r\n".encode("ascii"), dat]
    return b"".join(parts)


def _ensure_eol(text: bytes) -> bytes:
    if not text:
        return b""
    return text if text.endswith(b"\n") else text + b"\r\n"
