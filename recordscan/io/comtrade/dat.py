"""The COMTRADE data (.dat) file: vectorised decoding and encoding.

Binary formats (BINARY, BINARY32, FLOAT32) are read with one numpy structured dtype over the
whole buffer (``np.frombuffer``), never a Python loop over samples. ASCII is read by the C
parser of pandas (imported lazily, only for ASCII files).

Row layout (IEEE C37.111-1999 and -2013, little-endian): sample number (uint32), timestamp
(uint32), one value per analog channel (int16 for BINARY, int32 for BINARY32, float32 for
FLOAT32), then the status channels packed 16 to a uint16 word, first channel in the least
significant bit.

Missing-value markers (from memory of C37.111-1999 and -2013; documented in
docs/comtrade.md): 0x8000 (-32768) in BINARY, 0x80000000 in BINARY32, NaN in FLOAT32,
99999 (1999 and later) or an empty field in ASCII; a missing timestamp is 0xFFFFFFFF in the
binary formats and an empty field in ASCII. A legitimate -1 is never missing.
"""

from __future__ import annotations

import io
from dataclasses import dataclass

import numpy as np

from recordscan.errors import FormatError

#: analog sample dtype of each binary format
ANALOG_DTYPE: dict[str, str] = {"BINARY": "<i2", "BINARY32": "<i4", "FLOAT32": "<f4"}
#: integer missing-value markers of the binary formats
MISSING_INT: dict[str, int] = {"BINARY": -32768, "BINARY32": -(2**31)}
#: ASCII missing-value marker of the 1999 and later revisions
ASCII_MISSING = 99999.0
#: missing timestamp in the binary formats
TIMESTAMP_MISSING = 0xFFFFFFFF


@dataclass(frozen=True)
class RawData:
    """Decoded .dat contents before scaling.

    Attributes
    ----------
    sample_numbers : numpy.ndarray
        Sample numbers as written (integer array).
    timestamps : numpy.ndarray
        float64 timestamps in file units (NaN where missing).
    analog : numpy.ndarray
        ``(n_samples, n_analog)`` raw values as float64 with NaN for missing ones, or the
        raw integer/float32 view for binary formats (see ``missing``).
    missing : numpy.ndarray or None
        ``(n_samples, n_analog)`` bool mask of missing values, None if none are missing or
        if ``marker`` is given.
    status : numpy.ndarray
        ``(n_samples, n_status)`` bool.
    marker : int or None
        For the integer binary formats, the raw value that marks a missing sample; the
        samples holding it are found while scaling (one pass fewer over the raw data than
        a separate mask). None when ``missing`` says it all.
    """

    sample_numbers: np.ndarray
    timestamps: np.ndarray
    analog: np.ndarray
    missing: np.ndarray | None
    status: np.ndarray
    marker: int | None = None

    @property
    def n_samples(self) -> int:
        """Number of samples."""
        return int(self.sample_numbers.shape[0])


def row_dtype(data_format: str, n_analog: int, n_status: int) -> np.dtype:
    """Return the structured dtype of one binary .dat row."""
    n_words = (n_status + 15) // 16
    fields: list[tuple] = [("n", "<u4"), ("ts", "<u4")]
    fields.append(("a", ANALOG_DTYPE[data_format], (n_analog,)))
    fields.append(("d", "<u2", (n_words,)))
    return np.dtype(fields)


def _unpack_status(words: np.ndarray, n_status: int) -> np.ndarray:
    """Unpack ``(n, n_words)`` uint16 words into ``(n, n_status)`` bool, LSB first."""
    n = words.shape[0]
    if n_status == 0:
        return np.zeros((n, 0), dtype=bool)
    as_bytes = np.ascontiguousarray(words, dtype="<u2").view(np.uint8).reshape(-1)
    bits = np.unpackbits(as_bytes, bitorder="little").reshape(n, -1)  # 1-D: table lookup
    return bits[:, :n_status].view(bool)  # 0/1 bytes are valid bools: no copy


def _pack_status(status: np.ndarray) -> np.ndarray:
    """Pack ``(n, n_status)`` bool into ``(n, n_words)`` little-endian uint16 words."""
    n, n_status = status.shape
    n_words = (n_status + 15) // 16
    padded = np.zeros((n, n_words * 16), dtype=np.uint8)
    padded[:, :n_status] = status
    packed = np.packbits(padded, axis=1, bitorder="little")
    return packed.view("<u2").reshape(n, n_words)


def decode_binary(
    data: bytes | memoryview,
    *,
    data_format: str,
    n_analog: int,
    n_status: int,
    n_expected: int | None,
    name: str,
) -> RawData:
    """Decode a binary .dat buffer.

    Parameters
    ----------
    data : bytes
        The whole data section.
    data_format : str
        ``"BINARY"``, ``"BINARY32"`` or ``"FLOAT32"``.
    n_analog, n_status : int
        Channel counts from the cfg.
    n_expected : int or None
        Number of samples the cfg declares (None: as many as the buffer holds).
    name : str
        File name for messages.

    Returns
    -------
    RawData
        ``analog`` is the raw integer (or float32) view; ``marker`` the integer formats'
        missing-value marker, ``missing`` the NaN/infinity mask of FLOAT32.

    Raises
    ------
    FormatError
        When the buffer is not a whole number of rows or holds a different number of
        samples than the cfg declares.
    """
    dtype = row_dtype(data_format, n_analog, n_status)
    size = len(data)
    if size == 0:
        raise FormatError(f"{name}: empty data file")
    if size % dtype.itemsize:
        raise FormatError(
            f"{name}: {size} bytes is not a whole number of {dtype.itemsize}-byte samples "
            f"({n_analog} analog, {n_status} status channels, {data_format}); "
            "the file is truncated or the channel counts are wrong"
        )
    n = size // dtype.itemsize
    if n_expected is not None and n != n_expected:
        what = "shorter" if n < n_expected else "longer"
        raise FormatError(
            f"{name}: holds {n} samples but the cfg declares {n_expected} ({what} than declared)"
        )
    rows = np.frombuffer(data, dtype=dtype, count=n)
    analog = rows["a"]
    miss: np.ndarray | None = None
    if data_format == "FLOAT32":
        with np.errstate(invalid="ignore"):
            bad = ~np.isfinite(analog)  # NaN marks missing; an infinity is no measurement
        miss = bad if bad.any() else None
    ts = rows["ts"].astype(np.float64)
    if ts.size and ts.max() == TIMESTAMP_MISSING:
        ts[ts == TIMESTAMP_MISSING] = np.nan
    return RawData(
        sample_numbers=rows["n"],
        timestamps=ts,
        analog=analog,
        missing=miss,
        status=_unpack_status(rows["d"], n_status),
        marker=MISSING_INT.get(data_format),
    )


def decode_ascii(
    data: bytes,
    *,
    revision: str,
    n_analog: int,
    n_status: int,
    n_expected: int | None,
    name: str,
) -> RawData:
    """Decode an ASCII .dat buffer with pandas' C parser.

    Blank lines, spaces around values and a trailing end-of-file SUB character are
    tolerated; a line with more or fewer values than the cfg says, or a non-numeric value,
    raises :class:`FormatError` naming the line.
    """
    text = data.replace(b"\x1a", b"") if b"\x1a" in data else data
    if not text or text.isspace():
        raise FormatError(f"{name}: empty data file")
    n_cols = 2 + n_analog + n_status
    import pandas as pd  # lazily: only ASCII files need it

    try:
        frame = pd.read_csv(
            io.BytesIO(text),
            header=None,
            engine="c",
            dtype=np.float64,
            skip_blank_lines=True,
            keep_default_na=False,
            na_values=[""],
            skipinitialspace=True,
        )
    except pd.errors.ParserError as exc:
        _ascii_field_count_error(text, n_cols, name, str(exc))
        raise FormatError(f"{name}: cannot parse the ASCII data ({exc})") from None
    except (ValueError, TypeError) as exc:
        raise FormatError(f"{name}: non-numeric value in the ASCII data ({exc})") from None
    values = frame.to_numpy(dtype=np.float64)
    if values.shape[1] == n_cols + 1 and np.isnan(values[:, -1]).all():
        values = values[:, :n_cols]  # a trailing comma on every line
    if values.shape[1] != n_cols:
        _ascii_field_count_error(text, n_cols, name, "")
        raise FormatError(
            f"{name}: ASCII lines have {values.shape[1]} values, the cfg says {n_cols}"
        )
    # pandas pads short lines with NaN: check the separator count to catch them
    n = values.shape[0]
    commas = int(np.count_nonzero(np.frombuffer(text, dtype=np.uint8) == ord(",")))
    if commas not in (n * (n_cols - 1), n * n_cols):
        _ascii_field_count_error(text, n_cols, name, "")
        raise FormatError(f"{name}: ASCII lines do not all have {n_cols} values")
    if n_expected is not None and n != n_expected:
        what = "shorter" if n < n_expected else "longer"
        raise FormatError(
            f"{name}: holds {n} samples but the cfg declares {n_expected} ({what} than declared)"
        )
    if np.isnan(values[:, 0]).any():
        raise FormatError(f"{name}: a sample number is empty")
    analog = values[:, 2 : 2 + n_analog]
    if revision != "1991":
        marker = analog == ASCII_MISSING
        if marker.any():
            analog = analog.copy()
            analog[marker] = np.nan
    miss = np.isnan(analog)
    status_vals = values[:, 2 + n_analog :]
    if np.isnan(status_vals).any():
        row = int(np.flatnonzero(np.isnan(status_vals).any(axis=1))[0])
        raise FormatError(f"{name}: data line {row + 1}: empty status value")
    return RawData(
        sample_numbers=values[:, 0].astype(np.int64),
        timestamps=values[:, 1],
        analog=analog,
        missing=miss if miss.any() else None,
        status=status_vals != 0,
    )


def _ascii_field_count_error(text: bytes, n_cols: int, name: str, detail: str) -> None:
    """Find the first line with the wrong number of values and raise for it."""
    for no, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        count = stripped.count(b",") + 1
        if stripped.endswith(b","):
            count -= 1
        if count != n_cols:
            raise FormatError(
                f"{name}: line {no} has {count} values, the cfg says {n_cols} "
                f"(sample number, timestamp, analog and status channels)"
            )
    if detail:
        raise FormatError(f"{name}: cannot parse the ASCII data ({detail.strip()})")


# --------------------------------------------------------------------------- encoding
def encode_binary(
    *,
    data_format: str,
    timestamps: np.ndarray,
    analog: np.ndarray,
    status: np.ndarray,
) -> bytes:
    """Encode rows as a binary .dat buffer.

    Parameters
    ----------
    data_format : str
        ``"BINARY"``, ``"BINARY32"`` or ``"FLOAT32"``.
    timestamps : numpy.ndarray
        uint32-range integer timestamps (``TIMESTAMP_MISSING`` where missing).
    analog : numpy.ndarray
        ``(n, n_analog)`` values already in the format's type (markers in place).
    status : numpy.ndarray
        ``(n, n_status)`` bool.
    """
    n, n_analog = analog.shape
    n_status = status.shape[1]
    rows = np.zeros(n, dtype=row_dtype(data_format, n_analog, n_status))
    rows["n"] = np.arange(1, n + 1, dtype=np.uint32)
    rows["ts"] = timestamps
    rows["a"] = analog
    rows["d"] = _pack_status(status)
    return rows.tobytes()


def encode_ascii(
    *,
    timestamps: np.ndarray,
    analog: np.ndarray,
    missing: np.ndarray,
    status: np.ndarray,
) -> bytes:
    """Encode rows as ASCII .dat text (CR/LF line ends); missing analog values → 99999."""
    n, n_analog = analog.shape
    table = np.empty((n, 2 + n_analog + status.shape[1]), dtype=np.int64)
    table[:, 0] = np.arange(1, n + 1)
    table[:, 1] = timestamps
    table[:, 2 : 2 + n_analog] = np.where(missing, int(ASCII_MISSING), analog)
    table[:, 2 + n_analog :] = status
    lines = [",".join(map(str, row)) for row in table.tolist()]
    return ("\r\n".join(lines) + "\r\n").encode("ascii")
