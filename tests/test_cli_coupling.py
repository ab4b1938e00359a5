"""``recordscan coupling``: text and JSON reports, the caution, one-line errors."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from recordscan.cli.common import CAUTION
from recordscan.cli.main import main
from recordscan.physics.coupling import open_phase_coupling
from recordscan.physics.line import load_line

LINES = Path(__file__).resolve().parents[1] / "sample_records" / "lines"


def _run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(["coupling", *args])
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def test_text_report_carries_caution_and_numbers(capsys: pytest.CaptureFixture[str]) -> None:
    path = LINES / "ashcombe-brightwater.toml"
    code, out, _ = _run(capsys, str(path), "--fault-at", "60", "--phase", "B")
    assert code == 0
    assert CAUTION in out
    assert "Ashcombe" in out and "Brightwater" in out
    res = open_phase_coupling(load_line(path), faulted_phase="B", fault_at_m=60e3)
    assert f"{res.secondary_arc_current_rms_a:.2f}" in out
    assert f"{res.recovery_voltage_pu:.4f}" in out


def test_json_matches_library(capsys: pytest.CaptureFixture[str]) -> None:
    path = LINES / "brightwater-corrow.toml"
    code, out, _ = _run(capsys, str(path), "--load-a", "1200", "--json", "--detuning")
    assert code == 0
    doc = json.loads(out)
    assert doc["caution"] == CAUTION
    assert set(doc["results"]) == {"A", "B", "C"}
    worst = doc["results"][doc["worst_phase"]]
    lib = open_phase_coupling(
        load_line(path), faulted_phase=doc["worst_phase"], load_current_a=1200
    )
    assert worst["secondary_arc_current_rms_a"] == pytest.approx(lib.secondary_arc_current_rms_a)
    assert worst["free_frequency_hz"] == pytest.approx(lib.free_frequency_hz)
    assert worst["neutral_reactor_ohm"] == [623.0, 623.0]
    det = doc["detuning"]
    assert len(det["factors"]) == len(det["secondary_arc_current_rms_a"]) == 11
    assert doc["line"]["voltage_v"] == 765e3


def test_uncompensated_json_has_null_free_frequency(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, str(LINES / "corrow-dunhallow.toml"), "--json")
    assert code == 0
    doc = json.loads(out)
    assert doc["results"]["A"]["free_frequency_hz"] is None
    # untransposed flat line: the centre phase couples most
    cap = {ph: r["capacitive_component_a"] for ph, r in doc["results"].items()}
    assert cap["B"] > cap["A"] and cap["B"] > cap["C"]
    assert not math.isnan(doc["results"]["B"]["recovery_voltage_pu"])


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["nowhere.toml"], "nowhere.toml"),
        ([str(LINES / "corrow-dunhallow.toml"), "--fault-at", "999"], "outside"),
        ([str(LINES / "corrow-dunhallow.toml"), "--detuning"], "no neutral reactor"),
    ],
)
def test_errors_are_one_line_exit_2(
    capsys: pytest.CaptureFixture[str], args: list[str], needle: str
) -> None:
    code, out, err = _run(capsys, *args)
    assert code == 2
    assert out == ""
    assert needle in err
    assert err.strip().count("\n") == 0
    assert "Traceback" not in err


def test_bad_file_names_file_and_key(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    text = (LINES / "dunhallow-elderby.toml").read_text(encoding="utf-8")
    bad = tmp_path / "bad-line.toml"
    bad.write_text(text.replace("voltage_kv = 400.0", "voltage_kv = -400.0"), encoding="utf-8")
    code, _, err = _run(capsys, str(bad))
    assert code == 2
    assert "bad-line.toml" in err and "'voltage_kv'" in err
