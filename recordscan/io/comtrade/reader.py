"""Read a COMTRADE record (.cfg + .dat, or .cff) into a :class:`Record`.

Only numpy is imported here; pandas is imported lazily for ASCII data files, so that
``recordscan inspect`` of a binary record starts fast.
"""

from __future__ import annotations

import os
import re
import unicodedata
from pathlib import Path

from recordscan.core.record import Provenance, Record
from recordscan.errors import FormatError, MissingFileError
from recordscan.io.comtrade.cff import split_cff
from recordscan.io.comtrade.cfg import Config, parse_cfg
from recordscan.io.comtrade.convert import to_record
from recordscan.io.comtrade.dat import RawData, decode_ascii, decode_binary

_EXTS = (".cfg", ".dat", ".cff", ".hdr", ".inf")
#: legacy encodings tried, in order, when a configuration is not valid UTF-8
CANDIDATE_ENCODINGS: tuple[str, ...] = ("gbk", "cp1251", "latin-1", "cp1252")


# --------------------------------------------------------------------------- paths
def _sibling(stem: Path, ext: str, *, prefer_upper: bool, scan: bool = True) -> Path | None:
    """Find ``stem + ext`` in any letter case (the cfg's case first).

    The usual spellings are tried directly; the folder is listed only when ``scan`` is set
    and they all fail (a mixed-case name), so optional companions cost no directory scan.
    """
    tries = [ext.upper(), ext] if prefer_upper else [ext, ext.upper()]
    tries.append(ext[:2].upper() + ext[2:])
    for suffix in tries:
        cand = stem.with_name(stem.name + suffix)
        if cand.is_file():
            return cand
    if not scan:
        return None
    folder = stem.parent if str(stem.parent) else Path(".")
    if not folder.is_dir():
        return None
    want = (stem.name + ext).lower()
    for cand in sorted(folder.iterdir()):
        if cand.name.lower() == want and cand.is_file():
            return cand
    return None


def resolve(path: str | os.PathLike[str]) -> tuple[str, Path, Path | None]:
    """Work out which files make up the record at ``path``.

    Parameters
    ----------
    path : path-like
        The .cfg, the .dat, the .cff, or the stem without extension (any letter case).

    Returns
    -------
    tuple
        ``("cff", cff_path, None)`` or ``("cfg+dat", cfg_path, dat_path)``.

    Raises
    ------
    MissingFileError
        When the files are not there.
    """
    p = Path(path)
    ext = p.suffix.lower()
    if ext == ".cff":
        if not p.is_file():
            other = _sibling(p.with_suffix(""), ".cff", prefer_upper=p.suffix.isupper())
            if other is None:
                raise MissingFileError(f"{p}: no such file")
            p = other
        return "cff", p, None
    stem = p.with_suffix("") if ext in _EXTS else p
    upper = p.suffix.isupper() if ext in _EXTS else False
    if ext in _EXTS and not p.is_file():
        other = _sibling(stem, ext, prefer_upper=upper)  # same name, other letter case
        if other is None:
            raise MissingFileError(f"{p}: no such file")
        p, upper = other, other.suffix.isupper()
    cfg = p if ext == ".cfg" else _sibling(stem, ".cfg", prefer_upper=upper)
    if cfg is None:
        cff = _sibling(stem, ".cff", prefer_upper=upper)
        if cff is not None and ext not in (".dat", ".hdr", ".inf"):
            return "cff", cff, None
        raise MissingFileError(f"{stem}.cfg: missing configuration file for {p}")
    dat = p if ext == ".dat" else _sibling(stem, ".dat", prefer_upper=cfg.suffix.isupper())
    if dat is None:
        raise MissingFileError(f"{stem}.dat: missing data file for {cfg}")
    return "cfg+dat", cfg, dat


# --------------------------------------------------------------------------- text
_CONTROL_RE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x19\x1b-\x1f\x7f-\x9f]")


def _is_clean(text: str) -> bool:
    """True when decoded text holds no control characters other than tab/CR/LF/SUB."""
    if _CONTROL_RE.search(text):
        return False
    if text.isascii():
        return True
    return all(unicodedata.category(ch) not in ("Cs", "Co", "Cn") for ch in text if ord(ch) > 127)


#: typographic signs common in any Western or Cyrillic text: neither evidence for nor against
_NEUTRAL = frozenset("“”‘’„–—…•€°±µ«»·©®™×§")


def _cyrillic_word_ok(word: str) -> bool:
    """A plausible Russian/Ukrainian-style word: basic letters, lower, upper or Title case."""
    if not all(0x0410 <= ord(c) <= 0x044F or c in "Ёё" for c in word):
        return False
    return word.islower() or word.isupper() or (word[0].isupper() and word[1:].islower())


def _script_score(text: str, encoding: str) -> float:
    """Plausibility of a legacy decoding, about one point per plausible letter.

    GBK: common hanzi (GB2312 level 1, lead byte 0xB0-0xD7) score 1, rarer ones less;
    cp1251: whole Cyrillic words of basic letters in a normal letter case; latin-1/cp1252:
    accented Latin letters. Typographic signs are neutral; anything else costs a point.
    """
    score = 0.0
    n = len(text)
    i = 0
    while i < n:
        ch = text[i]
        code = ord(ch)
        if code < 128 or ch in _NEUTRAL:
            i += 1
            continue
        prev_c = text[i - 1] if i else " "
        if encoding == "cp1251" and 0x0400 <= code <= 0x04FF:
            j = i
            while j < n and 0x0400 <= ord(text[j]) <= 0x04FF:
                j += 1
            word = text[i:j]
            next_c = text[j] if j < n else " "
            glued = (prev_c.isascii() and prev_c.isalpha()) or (
                next_c.isascii() and next_c.isalpha()
            )
            score += len(word) if _cyrillic_word_ok(word) and not glued else -len(word)
            i = j
            continue
        next_c = text[i + 1] if i + 1 < n else " "
        glued = (prev_c.isascii() and prev_c.isalpha()) or (next_c.isascii() and next_c.isalpha())
        if encoding == "gbk":
            if 0x4E00 <= code <= 0x9FFF:
                common = 0xB0 <= ch.encode("gbk")[0] <= 0xD7
                score += (1.0 if common else 0.5) * (0.5 if glued else 1.0)
            elif not (0x3000 <= code <= 0x303F or 0xFF00 <= code <= 0xFFEF):
                score -= 1.0  # (CJK punctuation and full-width forms are neutral)
        elif encoding == "cp1251":
            score -= 1.0
        else:
            # accented letters come one or two at a time inside Latin words
            j = i
            while j < n and ord(text[j]) >= 128:
                j += 1
            run = [c for c in text[i:j] if c not in _NEUTRAL]
            letters = all(c.isalpha() and 0x00C0 <= ord(c) <= 0x024F for c in run)
            score += len(run) if letters and len(run) <= 2 else -len(run)
            i = j
            continue
        i += 1
    return score


def decode_text(data: bytes, *, encoding: str | None, name: str) -> tuple[str, str]:
    """Decode configuration/header text.

    Parameters
    ----------
    data : bytes
        Raw bytes.
    encoding : str or None
        The caller's encoding, or None to try UTF-8 and then detect a legacy encoding
        (:data:`CANDIDATE_ENCODINGS`) from the script of the non-ASCII letters.
    name : str
        File name for messages.

    Returns
    -------
    tuple of (str, str)
        The text and the encoding used.
    """
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if encoding is not None:
        try:
            return data.decode(encoding), encoding
        except LookupError:
            raise FormatError(f"{name}: unknown text encoding {encoding!r}") from None
        except UnicodeDecodeError as exc:
            raise FormatError(f"{name}: byte {exc.start} cannot be decoded as {encoding}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        pass
    else:
        if _is_clean(text):
            return text, "utf-8"
        raise FormatError(f"{name}: holds control characters; not a text file")
    best: tuple[float, str, str] | None = None
    for enc in CANDIDATE_ENCODINGS:
        try:
            text = data.decode(enc)
        except UnicodeDecodeError:
            continue
        if not _is_clean(text):
            continue
        score = _script_score(text, enc)
        if best is None or score > best[0]:
            best = (score, enc, text)
    if best is None:
        raise FormatError(
            f"{name}: undecodable bytes (not UTF-8, GBK, cp1251 or latin-1 text); give the encoding"
        )
    return best[2], best[1]


def _read_bytes(path: Path) -> bytes:
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise MissingFileError(f"{path}: no such file") from None
    except IsADirectoryError:
        raise FormatError(f"{path}: is a directory, not a record file") from None
    except OSError as exc:
        raise FormatError(f"{path}: cannot be read ({exc.strerror})") from None


def decode_dat(cfg: Config, data: bytes, *, name: str, data_format: str) -> RawData:
    """Decode a data section in the cfg's format."""
    common = {
        "n_analog": len(cfg.analog),
        "n_status": len(cfg.status),
        "n_expected": cfg.n_samples_declared,
        "name": name,
    }
    if data_format == "ASCII":
        return decode_ascii(data, revision=cfg.revision, **common)
    return decode_binary(data, data_format=data_format, **common)


# --------------------------------------------------------------------------- read
def read_comtrade(path: str | os.PathLike[str], *, encoding: str | None = None) -> Record:
    """Read a COMTRADE record without assigning roles.

    Parameters
    ----------
    path : path-like
        The .cfg, .dat, .cff or the stem (see :func:`resolve`).
    encoding : str or None
        Text encoding of the cfg/hdr/inf; None detects it.

    Returns
    -------
    Record
        Primary SI values, provenance filled. ``provenance.sha256`` (of the cfg then the
        dat bytes, or of the cff) is computed on first access from the bytes that were
        decoded, so reads whose hash nobody asks for do not pay for it.
    """
    container, main, dat_path = resolve(path)
    if container == "cff":
        blob = _read_bytes(main)
        name = str(main)
        sections = split_cff(blob, name=name)
        text, used = decode_text(sections.cfg, encoding=encoding, name=name)
        cfg = parse_cfg(text, name=name)
        if sections.dat_format != cfg.data_format:
            raise FormatError(
                f"{name}: DAT section is {sections.dat_format} but the cfg says {cfg.data_format}"
            )
        raw = decode_dat(cfg, sections.dat, name=name, data_format=cfg.data_format)
        header = _side_text(sections.hdr, encoding or used, name)
        info = _side_text(sections.inf, encoding or used, name)
        hash_source: tuple[bytes, ...] = (blob,)
        notes = sections.notes
    else:
        assert dat_path is not None
        cfg_bytes = _read_bytes(main)
        text, used = decode_text(cfg_bytes, encoding=encoding, name=str(main))
        cfg = parse_cfg(text, name=str(main))
        dat_bytes = _read_bytes(dat_path)
        raw = decode_dat(cfg, dat_bytes, name=str(dat_path), data_format=cfg.data_format)
        hash_source = (cfg_bytes, dat_bytes)
        stem = main.with_suffix("")
        upper = main.suffix.isupper()
        header = info = ""
        hdr_path = _sibling(stem, ".hdr", prefer_upper=upper, scan=False)
        if hdr_path is not None:
            header = _side_text(_read_bytes(hdr_path), encoding or used, str(hdr_path))
        inf_path = _sibling(stem, ".inf", prefer_upper=upper, scan=False)
        if inf_path is not None:
            info = _side_text(_read_bytes(inf_path), encoding or used, str(inf_path))
        notes = ()
        name = str(main)
    prov = Provenance(
        path=str(main),
        container=container,
        encoding=used,
        notes=tuple(notes),
    )
    return to_record(
        cfg,
        raw,
        name=name,
        provenance=prov,
        hash_source=hash_source,
        header_text=header.replace("\x1a", ""),
        info_text=info.replace("\x1a", ""),
    )


def _side_text(data: bytes, encoding: str, name: str) -> str:
    """Decode .hdr/.inf text: the cfg's encoding, else detection, else latin-1 with marks.

    These files are free text and optional, so they never make the read fail.
    """
    try:
        return decode_text(data, encoding=encoding, name=name)[0]
    except FormatError:
        pass
    try:
        return decode_text(data, encoding=None, name=name)[0]
    except FormatError:
        return data.decode("latin-1", errors="replace")
