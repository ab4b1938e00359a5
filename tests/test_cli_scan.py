"""The scan command over the bundled demo records (invented Valdmere Transmission data).

The demo records were simulated with known truth (sample_records/*.truth.json); these tests
check the command's behaviour (batch, bad files, outputs, pairing, store) and that its
headline answers agree with that truth. Detector accuracy is measured by the accuracy
harness, not here.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_records"
SCHEMA_KEYS = [
    line.split("|")[1].strip().strip("`").split("`")[0]
    for line in (ROOT / "docs" / "scan-schema.md").read_text(encoding="utf-8").splitlines()
    if line.startswith("| `")
]


def _run(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "recordscan.cli", *args],
        capture_output=True,
        text=True,
        cwd=cwd or ROOT,
        timeout=600,
    )


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A copy of the demo folder with one broken record added."""
    d = tmp_path_factory.mktemp("demo")
    shutil.copytree(SAMPLES, d / "records")
    (d / "records" / "BROKEN.cfg").write_text("this is not a configuration file\n")
    return d / "records"


@pytest.fixture(scope="module")
def batch(demo: Path, tmp_path_factory: pytest.TempPathFactory) -> dict:
    out = tmp_path_factory.mktemp("out")
    proc = _run(
        "scan",
        str(demo),
        "--json",
        "--out",
        str(out / "r.jsonl"),
        "--report",
        str(out / "rep"),
        "--plot",
        str(out / "fig"),
        "--db",
        str(out / "arcs.sqlite"),
        "--jobs",
        "2",
    )
    rows = [json.loads(x) for x in proc.stdout.splitlines() if x.strip()]
    return {"proc": proc, "rows": rows, "out": out}


def test_batch_goes_on_past_a_bad_file(batch: dict) -> None:
    proc, rows = batch["proc"], batch["rows"]
    assert proc.returncode == 0, proc.stderr
    bad = [r for r in rows if r["status"] == "error"]
    assert [Path(r["file"]).name for r in bad] == ["BROKEN.cfg"]
    assert "BROKEN.cfg" in bad[0]["error"] and "\n" not in bad[0]["error"]
    assert "Traceback" not in proc.stderr
    assert len([r for r in rows if r["status"] == "ok"]) >= 7


def test_every_schema_key_is_present(batch: dict) -> None:
    ok = [r for r in batch["rows"] if r["status"] == "ok"]
    for r in ok:
        missing = [k for k in SCHEMA_KEYS if k not in r]
        assert missing == [], (r["file"], missing)
    assert (batch["out"] / "r.jsonl").read_text().count("\n") == len(batch["rows"])


def test_headline_answers_agree_with_demo_truth(batch: dict) -> None:
    for r in batch["rows"]:
        if r["status"] != "ok":
            continue
        stem = Path(r["file"]).stem.replace("_local", "")
        truth = json.loads((SAMPLES / f"{stem}.truth.json").read_text())
        assert r["event"] == truth["event"], r["file"]
        if truth["event"] == "single_pole_trip":
            assert r["faulted_phase"] == truth["faulted_phase"]
            assert r["outcome"] == truth["outcome"]


def test_reports_figures_and_store_are_written(batch: dict) -> None:
    out = batch["out"]
    index = (out / "rep" / "index.html").read_text(encoding="utf-8")
    assert "Caution" in index and "BROKEN.cfg" in index
    pages = sorted((out / "rep").glob("*.html"))
    assert len(pages) >= 8
    page = next(p for p in pages if p.name.startswith("DE400-20260619"))
    text = page.read_text(encoding="utf-8")
    for section in (
        "Timeline",
        "Triage indicators",
        "Evidence behind each instant",
        "Provenance",
        "Caution",
        "data:image/png;base64",
    ):
        assert section in text
    assert len(list((out / "fig").glob("*-event.png"))) >= 7
    assert (out / "arcs.sqlite").stat().st_size > 0


def test_two_ended_records_are_paired(batch: dict) -> None:
    names = [Path(r["file"]).name for r in batch["rows"]]
    assert "AB500-20260314-0926_local.cfg" in names
    assert "AB500-20260314-0926_remote.cfg" not in names


def test_single_bad_file_exits_2_with_one_line(tmp_path: Path) -> None:
    bad = tmp_path / "x.cfg"
    bad.write_text("garbage\n")
    proc = _run("scan", str(bad))
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0 and "x.cfg" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_nothing_found_is_an_error(tmp_path: Path) -> None:
    proc = _run("scan", str(tmp_path))
    assert proc.returncode == 2 and "no COMTRADE records" in proc.stderr
