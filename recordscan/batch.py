"""Scanning many records: discovery, line matching, parallel workers, figures and pages.

This is the library behind ``recordscan scan``. One bad file never stops a batch: it becomes
a result with ``status = "error"`` and a one-line reason.

Line descriptions are matched to records by a folder map, ``recordscan-lines.toml``, placed in
the scanned folder (or any folder above a record)::

    [[line]]
    file = "lines/ashcombe-brightwater.toml"   # relative to the map file
    match = ["ASH-BRI*", "BRI-ASH*"]            # globs on the record file name (any case)

A line given on the command line (``--line``) applies to every record instead.
"""

from __future__ import annotations

import fnmatch
import hashlib
import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from recordscan.errors import FormatError, RecordScanError

RECORD_SUFFIXES = (".cfg", ".cff")
LINE_MAP_NAME = "recordscan-lines.toml"


@dataclass(frozen=True)
class ScanJob:
    """One unit of scanning work.

    Attributes
    ----------
    path : str
        The record (``.cfg`` or ``.cff``).
    line_path : str or None
        Line description file, if known.
    remote_path : str or None
        The other terminal's record for a two-ended analysis.
    profile : str or None
        Recorder profile file.
    encoding : str or None
        Text encoding of the configuration, if not to be detected.
    """

    path: str
    line_path: str | None = None
    remote_path: str | None = None
    profile: str | None = None
    encoding: str | None = None


@dataclass(frozen=True)
class ScanOutputs:
    """Where per-record artefacts go (None = not written)."""

    plot_dir: str | None = None
    report_dir: str | None = None


def find_records(paths: Iterable[str | os.PathLike[str]]) -> tuple[list[Path], list[str]]:
    """Expand files and folders (recursively) into record files.

    Returns
    -------
    records : list of Path
        ``.cfg`` and ``.cff`` files, sorted, each once.
    problems : list of str
        One line per path that does not exist or is not a record.
    """
    found: list[Path] = []
    problems: list[str] = []
    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            for root, _dirs, files in os.walk(p):
                for name in files:
                    if name.lower().endswith(RECORD_SUFFIXES):
                        found.append(Path(root) / name)
        elif p.is_file():
            if p.suffix.lower() in RECORD_SUFFIXES:
                found.append(p)
            elif p.suffix.lower() == ".dat" and p.with_suffix(".cfg").exists():
                found.append(p.with_suffix(".cfg"))
            elif p.suffix.lower() == ".dat" and p.with_suffix(".CFG").exists():
                found.append(p.with_suffix(".CFG"))
            else:
                problems.append(f"{p}: not a COMTRADE record (.cfg or .cff expected)")
        else:
            problems.append(f"{p}: no such file or folder")
    unique = sorted({f.resolve(): f for f in found}.values(), key=lambda f: str(f))
    return unique, problems


PAIR_SUFFIXES = ("_local", "_remote")


def pair_records(records: Sequence[Path]) -> list[tuple[Path, Path | None]]:
    """Group the two terminals' records of one event: ``X_local`` with ``X_remote``.

    Records named ``<stem>_local.<ext>`` and ``<stem>_remote.<ext>`` in the same folder are
    analysed together (one event, one secondary-arc timeline); all others stand alone.

    Returns
    -------
    list of (Path, Path or None)
        ``(local, remote)`` pairs and ``(record, None)`` singles, in input order.
    """
    by_key: dict[tuple[Path, str], dict[str, Path]] = {}
    for r in records:
        stem = r.stem.lower()
        for suf in PAIR_SUFFIXES:
            if stem.endswith(suf):
                by_key.setdefault((r.parent, stem[: -len(suf)]), {})[suf] = r
    paired: dict[Path, Path | None] = {}
    skip: set[Path] = set()
    for ends in by_key.values():
        if len(ends) == 2:
            paired[ends["_local"]] = ends["_remote"]
            skip.add(ends["_remote"])
    out: list[tuple[Path, Path | None]] = []
    for r in records:
        if r in skip:
            continue
        out.append((r, paired.get(r)))
    return out


def _load_toml(path: Path) -> dict[str, Any]:
    from recordscan.core.tomlfile import read_toml

    return read_toml(path, what="folder line map")


def match_line(record: Path, *, stop_at: Path | None = None) -> str | None:
    """Find the line description for ``record`` through the nearest folder map.

    Parameters
    ----------
    record : Path
        The record file.
    stop_at : Path, optional
        Do not look above this folder.

    Returns
    -------
    str or None
        Path of the matching line file, or None.
    """
    here = record.resolve().parent
    top = stop_at.resolve() if stop_at is not None else None
    name = record.name.lower()
    while True:
        candidate = here / LINE_MAP_NAME
        if candidate.is_file():
            data = _load_toml(candidate)
            for entry in data.get("line", []):
                if not isinstance(entry, dict) or "file" not in entry:
                    raise FormatError(f"{candidate}: each [[line]] needs a 'file' key")
                for pattern in entry.get("match", []):
                    if fnmatch.fnmatch(name, str(pattern).lower()):
                        return str((candidate.parent / entry["file"]).resolve())
            return None
        if (top is not None and here == top) or here.parent == here:
            return None
        here = here.parent


def _slug(path: str) -> str:
    stem = Path(path).stem
    h = hashlib.sha1(str(Path(path).resolve()).encode()).hexdigest()[:6]
    safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in stem)
    return f"{safe}-{h}"


def _versions() -> dict[str, str]:
    import numpy
    import scipy

    from recordscan import __version__

    return {"recordscan": __version__, "numpy": numpy.__version__, "scipy": scipy.__version__}


def error_result(path: str, message: str) -> dict[str, Any]:
    """The scan result of a record that could not be analysed (every schema key, null)."""
    from recordscan.analysis import error_json_dict

    return error_json_dict(file=path, error=message)


def scan_one(job: ScanJob, outputs: ScanOutputs = ScanOutputs()) -> dict[str, Any]:
    """Read, analyse and (optionally) draw and report one record.

    Never raises for a bad record: a :class:`RecordScanError` becomes an error result.

    Returns
    -------
    dict
        The scan result (docs/scan-schema.md), plus ``_page`` (relative report page) and
        ``_meta`` (record metadata for the store) keys that the caller strips before output.
    """
    from recordscan.analysis import analyse
    from recordscan.io import read

    try:
        record = read(job.path, encoding=job.encoding, profile=job.profile)
        remote = None
        if job.remote_path:
            remote = read(job.remote_path, encoding=job.encoding, profile=job.profile)
        line = None
        if job.line_path:
            from recordscan.physics.line import load_line

            line = load_line(job.line_path)
        analysis = analyse(record, line=line, remote=remote)
        result = analysis.to_json_dict(file=job.path, sha256=record.provenance.sha256)
    except RecordScanError as exc:
        return error_result(job.path, str(exc))
    except MemoryError:
        return error_result(job.path, "record too large for memory")
    result.setdefault("versions", _versions())
    result["_meta"] = {
        "path": job.path,
        "sha256": record.provenance.sha256,
        "station": record.station,
        "device": record.device,
        "start_ns": record.start_ns,
        "sample_rate_hz": record.sample_rate_hz,
        "frequency_hz": record.frequency_hz,
        "revision": record.provenance.revision,
        "format": record.provenance.data_format,
        "line_path": job.line_path,
    }
    if outputs.plot_dir or outputs.report_dir:
        _artefacts(record, result, job, outputs)
    return result


def _artefacts(record: Any, result: dict[str, Any], job: ScanJob, outputs: ScanOutputs) -> None:
    from recordscan.cli.common import atomic_write_bytes, atomic_write_text
    from recordscan.plot.event import figure_png, plot_event, plot_open_phase
    from recordscan.report.record_page import render_record_page

    slug = _slug(job.path)
    figs = {"Whole event": figure_png(plot_event(record, result))}
    if result.get("faulted_phase"):
        figs["Opened phase"] = figure_png(plot_open_phase(record, result))
    if outputs.plot_dir:
        for caption, png in figs.items():
            tag = "event" if caption == "Whole event" else "open-phase"
            atomic_write_bytes(Path(outputs.plot_dir) / f"{slug}-{tag}.png", png)
    if outputs.report_dir:
        page = f"{slug}.html"
        clean = {k: v for k, v in result.items() if not k.startswith("_")}
        atomic_write_text(
            Path(outputs.report_dir) / page,
            render_record_page(clean, figures=figs, index_href="index.html"),
        )
        result["_page"] = page


def run_jobs(
    jobs: Sequence[ScanJob],
    *,
    outputs: ScanOutputs = ScanOutputs(),
    n_workers: int = 1,
    progress: Callable[[int], None] | None = None,
) -> Iterator[dict[str, Any]]:
    """Scan jobs, in parallel when ``n_workers > 1``; yield results in input order.

    Parameters
    ----------
    jobs : sequence of ScanJob
        What to scan.
    outputs : ScanOutputs
        Figure and page folders.
    n_workers : int
        Worker processes (1 = in this process).
    progress : callable, optional
        Called with 1 after each finished record.
    """
    if n_workers <= 1 or len(jobs) <= 1:
        for job in jobs:
            yield scan_one(job, outputs)
            if progress:
                progress(1)
        return
    # load the analysis (and scipy) once here so forked workers inherit it instead of each
    # importing it again
    import recordscan.analysis
    import recordscan.io  # noqa: F401

    with ProcessPoolExecutor(max_workers=n_workers) as pool:
        futures = [pool.submit(scan_one, job, outputs) for job in jobs]
        for job, fut in zip(jobs, futures, strict=True):
            try:
                res = fut.result()
            except Exception as exc:  # a crashed worker must not stop the batch
                res = error_result(job.path, f"worker failed: {type(exc).__name__}: {exc}")
            if progress:
                progress(1)
            yield res


def write_index(report_dir: str, results: Sequence[dict[str, Any]]) -> Path:
    """Write the batch index page linking every record page."""
    from recordscan.cli.common import atomic_write_text
    from recordscan.report.record_page import render_index

    pages = {str(r.get("file")): r["_page"] for r in results if r.get("_page")}
    clean = [{k: v for k, v in r.items() if not k.startswith("_")} for r in results]
    target = Path(report_dir) / "index.html"
    atomic_write_text(target, render_index(clean, pages=pages))
    return target
