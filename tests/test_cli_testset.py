"""``recordscan testset`` end to end, then ``recordscan verify`` on known latencies.

The "relay" is built here from the manifest's truth with chosen latencies after the true
final extinction and a clock offset (its own fault inception 0.2 s later than the
playback's); the verifier must report exactly those latencies (it aligns on the fault
inception) and the permanent fault as a correct block. Bad plans end with exit code 2, a
one-line message and nothing written.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from test_relaytest_playback import TINY, write_plan

from recordscan.cli.main import main

OFFSET_S = 0.2
LATENCY_S = {"case-001": 0.0125, "case-003": 0.030}


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as ex:
        main(argv)
    out, err = capsys.readouterr()
    return int(ex.value.code or 0), out, err


def test_testset_then_verify(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    plan = write_plan(tmp_path)
    out_dir = tmp_path / "playback"
    code, out, err = run(["testset", str(plan), "--out", str(out_dir)], capsys)
    assert code == 0, err
    assert "3 case(s) written" in out and "2 expect a reclose permit" in out
    assert "1 expect a block" in out and "Caution:" in out
    doc = json.loads((out_dir / "manifest.json").read_text(encoding="utf-8"))
    truth = {c["case"]: c for c in doc["cases"]}
    assert truth["case-002"]["expected"] == "block"
    # the relay's responses on its own clock (inception OFFSET_S later than the playback's)
    rows = ["case,inception_s,permit_s"]
    for case, lat in LATENCY_S.items():
        t = truth[case]
        rows.append(
            f"{case},{t['inception_s'] + OFFSET_S!r},{t['extinction_s'] + lat + OFFSET_S!r}"
        )
    rows.append(f"case-002,{truth['case-002']['inception_s'] + OFFSET_S!r},")
    resp = tmp_path / "responses.csv"
    resp.write_text("\n".join(rows) + "\n", encoding="utf-8")
    code, out, err = run(
        ["verify", str(resp), "--manifest", str(out_dir / "manifest.json"), "--json"], capsys
    )
    assert code == 0, err
    rep = json.loads(out)
    got = {c["case"]: c for c in rep["cases"]}
    assert got["case-002"]["verdict"] == "correct_block"
    for case, lat in LATENCY_S.items():
        assert got[case]["verdict"] == "correct_permit"
        assert got[case]["latency_s"] == pytest.approx(lat, abs=1e-9)
    assert rep["counts"]["premature_permit"] == 0 and rep["passed"]


def test_testset_json_cff_float32(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """--json summary; a .cff FLOAT32 set keeps the secondary scaling (IEEE C37.111-2013)."""
    from recordscan.io import read

    one = TINY.split("[[case]]")[0] + "[[case]]\npermanent = true\n"
    one = one.replace('format = "BINARY"', 'format = "FLOAT32"\ncff = true')
    plan = write_plan(tmp_path, one)
    code, out, _ = run(["testset", str(plan), "--out", str(tmp_path / "o"), "--json"], capsys)
    assert code == 0
    s = json.loads(out)
    assert s["cases"] == 1 and s["expected_blocks"] == 1 and s["failed"] == []
    assert s["caution"].startswith("Caution")
    rec = read(tmp_path / "o" / "case-001.cff")
    assert rec.provenance.data_format == "FLOAT32"
    va = rec.analog_by_role("v_a")
    assert va is not None and va.scaling.ps == "S"
    assert va.scaling.primary / va.scaling.secondary == pytest.approx(345e3 / 115.0, rel=1e-12)


@pytest.mark.parametrize(
    ("old", "new"),
    [
        ("seed = 3", "seed = -3"),
        ("rate_hz = 2000", "rate_hz = 200"),
        ("location_pct = 30", "location_pct = 'near'"),
        ("[[case]]", "[[case]\n"),
    ],
)
def test_bad_plan_exit_2_nothing_written(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], old: str, new: str
) -> None:
    plan = write_plan(tmp_path, TINY.replace(old, new, 1))
    out_dir = tmp_path / "never"
    code, out, err = run(["testset", str(plan), "--out", str(out_dir)], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("recordscan: error: ") and str(plan) in lines[0]
    assert "Traceback" not in err and out == ""
    assert not out_dir.exists()


DEMO = Path(__file__).resolve().parents[1] / "sample_records" / "relaytest"


def test_demo_plan_and_stand_in_responses(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """The two README commands on the demo: every verdict appears once as documented.

    The committed stand-in responses must still be what ``make_demo_responses.py`` writes
    from the demo set's truth (if the simulator changes, regenerate them).
    """
    import csv
    import importlib.util

    out_dir = tmp_path / "playback"
    code, out, err = run(["testset", str(DEMO / "demo-plan.toml"), "--out", str(out_dir)], capsys)
    assert code == 0, err
    manifest = json.loads((out_dir / "manifest.json").read_text(encoding="utf-8"))
    spec = importlib.util.spec_from_file_location("mdr", DEMO / "make_demo_responses.py")
    assert spec is not None and spec.loader is not None
    mdr = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mdr)
    with (DEMO / "demo-responses.csv").open(encoding="utf-8", newline="") as fh:
        committed = list(csv.DictReader(fh))
    assert committed == mdr.rows(manifest)
    code, out, err = run(
        ["verify", str(DEMO / "demo-responses.csv"), "--manifest",
         str(out_dir / "manifest.json"), "--json"],
        capsys,
    )  # fmt: skip
    assert code == 0, err
    counts = json.loads(out)["counts"]
    assert counts == {
        "premature_permit": 1, "missed_permit": 1, "no_response": 1,
        "correct_permit": 7, "correct_block": 2, "cases": 12,
    }  # fmt: skip


def test_failing_case_is_listed_and_the_set_continues(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    import recordscan.synth.generate as gen
    from recordscan.errors import ModelError

    real = gen.simulate

    def flaky(scenario, **kw):  # type: ignore[no-untyped-def]
        if scenario.name == "case-002":
            raise ModelError("solver diverged (injected by the test)")
        return real(scenario, **kw)

    monkeypatch.setattr(gen, "simulate", flaky)
    out_dir = tmp_path / "set"
    code, out, err = run(["testset", str(write_plan(tmp_path)), "--out", str(out_dir)], capsys)
    assert code == 2
    assert err.strip().splitlines()[-1].startswith("recordscan: error: 1 of 3 case(s)")
    assert "FAILED case-002" in out
    doc = json.loads((out_dir / "manifest.json").read_text(encoding="utf-8"))
    assert [c["case"] for c in doc["cases"]] == ["case-001", "case-003"]
    assert doc["failed_cases"][0]["case"] == "case-002"
    assert "injected by the test" in doc["failed_cases"][0]["error"]
    assert not (out_dir / "case-002.cfg").exists()
