"""``recordscan simulate``: scenario files and sweeps to COMTRADE + truth; clean errors."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from recordscan.cli.common import CAUTION
from recordscan.cli.main import main

SCENARIO = """
name = "cli-test"
seed = 2
[line]
voltage_kv = 400
frequency_hz = 50
length_km = 90
[line.sequence]
r1_ohm_per_km = 0.028
x1_ohm_per_km = 0.276
c1_nf_per_km = 13.29
r0_ohm_per_km = 0.24
x0_ohm_per_km = 0.88
c0_nf_per_km = 7.62
[fault]
phase = "C"
[breaker]
reclose = false
[instruments]
rate_hz = 1000
record_length_s = 0.3
"""


def _run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(["simulate", *args])
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def test_scenario_file_to_files(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    sc = tmp_path / "s.toml"
    sc.write_text(SCENARIO, encoding="utf-8")
    out_dir = tmp_path / "out"
    code, out, _ = _run(
        capsys, str(sc), "--out", str(out_dir), "--revision", "1999", "--format", "ascii"
    )
    assert code == 0
    assert "cli-test: single_pole_trip, phase C" in out
    assert CAUTION in out
    cfg = (out_dir / "cli-test.cfg").read_text(encoding="utf-8")
    assert ",1999" in cfg.splitlines()[0] and "ASCII" in cfg.upper()
    truth = json.loads((out_dir / "cli-test.truth.json").read_text(encoding="utf-8"))
    assert truth["faulted_phase"] == "C" and truth["outcome"] == "no_reclose"
    assert truth["comtrade"] == {"revision": "1999", "data_format": "ASCII", "cff": False}


def test_sweep_writes_index_and_scenarios(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    ranges = tmp_path / "r.toml"
    ranges.write_text(
        "[sweep]\nvoltage_kv = [345]\nlength_km = [80, 90]\nmax_record_length_s = 0.4\n"
        "rate_hz = [960]\n",
        encoding="utf-8",
    )
    out_dir = tmp_path / "sw"
    code, out, _ = _run(
        capsys, str(ranges), "--sweep", "2", "--seed", "9", "--out", str(out_dir), "--json"
    )
    assert code == 0
    doc = json.loads(out)
    assert [e["name"] for e in doc["events"]] == ["sweep-9-0000", "sweep-9-0001"]
    index = json.loads((out_dir / "index.json").read_text(encoding="utf-8"))
    assert index["seed"] == 9 and len(index["events"]) == 2
    for e in index["events"]:
        assert (out_dir / f"{e['name']}.scenario.toml").exists()
        for f in e["files"]:
            assert (out_dir / f).exists()


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ("[line]\nfile = 'missing-line.toml'\n", "missing-line.toml"),
        ("[line\n", "not valid TOML"),
        (SCENARIO + "\n[output]\nformat = 'HEX'\n", "output.format"),
    ],
)
def test_bad_input_is_one_line_exit_2(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], text: str, needle: str
) -> None:
    sc = tmp_path / "bad.toml"
    sc.write_text(text, encoding="utf-8")
    code, _out, err = _run(capsys, str(sc), "--out", str(tmp_path / "o"))
    assert code == 2
    assert needle in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "o" / "bad.truth.json").exists()


def test_missing_scenario_and_flag_conflicts(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _, err = _run(capsys, str(tmp_path / "nope.toml"), "--out", str(tmp_path))
    assert code == 2 and "nope.toml" in err
    sc = tmp_path / "s.toml"
    sc.write_text(SCENARIO, encoding="utf-8")
    code, _, err = _run(capsys, str(sc), "--out", str(tmp_path), "--revision", "1999", "--cff")
    assert code == 2 and "cff" in err
