"""``recordscan db``: import, listings with filters, export, tags, dead-time evidence, report."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest
from fleet_results import make_fleet, write_jsonl

from recordscan.cli.common import CAUTION
from recordscan.cli.main import main
from recordscan.fleet.deadtime import dead_time_evidence
from recordscan.fleet.store import EventFilter, open_store


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


@pytest.fixture(scope="module")
def fleet() -> list[dict]:
    return make_fleet(8, seed=4)


@pytest.fixture
def filled(tmp_path: Path, fleet: list[dict], capsys: pytest.CaptureFixture[str]) -> str:
    db = str(tmp_path / "arcs.sqlite")
    jsonl = write_jsonl(tmp_path / "results.jsonl", fleet)
    code, out, _ = run(["db", "--db", db, "import", str(jsonl)], capsys)
    assert code == 0 and "24 added" in out
    return db


def test_import_is_idempotent_and_lines_listed(
    filled: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, _ = run(
        ["db", "--db", filled, "import", str(tmp_path / "results.jsonl"), "--json"], capsys
    )
    assert code == 0 and json.loads(out)["duplicate"] == 24
    code, out, _ = run(["db", "--db", filled, "lines", "--json"], capsys)
    rows = {r["name"]: r for r in json.loads(out)}
    assert {r["n_events"] for r in rows.values()} == {8}
    assert rows["Corrow–Dunhallow"]["voltage_v"] == 500e3
    code, out, _ = run(["db", "--db", filled, "lines"], capsys)
    assert code == 0 and "Dunhallow–Elderby" in out


def test_event_filters(filled: str, fleet: list[dict], capsys: pytest.CaptureFixture[str]) -> None:
    def count(*args: str) -> int:
        code, out, err = run(["db", "--db", filled, "events", "--json", *args], capsys)
        assert code == 0, err
        return len(json.loads(out))

    assert count() == 24
    assert count("--line", "Ashcombe–Brightwater") == 8
    assert count("--kv", "765") == 8
    n_ok = sum(r["outcome"] == "success" for r in fleet)
    assert count("--outcome", "success") == n_ok
    days = sorted(r["start"][:10] for r in fleet)
    # --until with a date includes that whole day; --since is inclusive.
    assert count("--until", days[5]) == sum(d <= days[5] for d in days)
    assert count("--since", days[5]) == sum(d >= days[5] for d in days)
    code, out, _ = run(["db", "--db", filled, "events", "--limit", "3"], capsys)
    assert code == 0 and out.strip().endswith("3 events")


def test_show_tag_and_export(
    filled: str, fleet: list[dict], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sha = fleet[2]["sha256"]
    code, out, _ = run(
        ["db", "--db", filled, "tag", sha[:10], "weather=rain", "wind=12 m/s"], capsys
    )
    assert code == 0 and "2 set" in out
    code, out, _ = run(["db", "--db", filled, "show", sha[:10], "--json"], capsys)
    info = json.loads(out)
    assert info["tags"] == {"weather": "rain", "wind": "12 m/s"}
    assert info["result"]["extinction_s"] == fleet[2]["extinction_s"]
    code, out, _ = run(["db", "--db", filled, "events", "--json", "--tag", "weather=rain"], capsys)
    assert [r["sha256"] for r in json.loads(out)] == [sha]
    code, out, _ = run(["db", "--db", filled, "tag", sha[:10], "--remove", "weather"], capsys)
    assert code == 0 and "1 removed" in out
    code, out, _ = run(["db", "--db", filled, "show", sha[:10]], capsys)
    assert code == 0 and sha in out and "wind = 12 m/s" in out

    csv_path, pq_path = tmp_path / "ev.csv", tmp_path / "ev.parquet"
    assert run(["db", "--db", filled, "export", str(csv_path), "--csv"], capsys)[0] == 0
    assert (
        run(["db", "--db", filled, "export", str(pq_path), "--parquet", "--kv", "400"], capsys)[0]
        == 0
    )
    csv = pd.read_csv(csv_path)
    assert len(csv) == 24
    by_sha = {r["sha256"]: r for r in fleet}
    for row in csv.itertuples(index=False):
        assert row.pole_open_s == pytest.approx(by_sha[row.sha256]["pole_open_s"], rel=1e-12)
    table = pq.read_table(pq_path)  # read back with pyarrow, independently of pandas
    assert table.num_rows == 8
    assert set(table.column("line").to_pylist()) == {"Ashcombe–Brightwater"}
    code, _, err = run(["db", "--db", filled, "export", str(csv_path)], capsys)
    assert code == 2 and "--csv or --parquet" in err


def test_deadtime_matches_library_and_carries_caution(
    filled: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, _ = run(
        [
            "db",
            "--db",
            filled,
            "deadtime",
            "--line",
            "Corrow–Dunhallow",
            "--probability",
            "0.5",
            "--setting-ms",
            "600",
            "--json",
        ],
        capsys,
    )
    assert code == 0
    got = json.loads(out)
    with open_store(filled) as store:
        frame = store.events(EventFilter(line="Corrow–Dunhallow"))
    want = dead_time_evidence(frame, scope="x", probability=0.5, setting_s=0.6)
    assert got["empirical_s"] == want.empirical_s
    assert got["extinct_by_setting"] == pytest.approx(want.extinct_by_setting)
    assert got["rules_s"]["175+0.5kV ms"] == pytest.approx(0.425)  # common practice, 500 kV
    assert got["caution"] == CAUTION
    code, out, _ = run(["db", "--db", filled, "deadtime", "--line", "Corrow–Dunhallow"], capsys)
    assert code == 0
    assert "common practice" in out and "not a setting" in out and CAUTION in out
    assert re.search(r"10\.5\+kV/34\.5 cycles\s+417 ms", out)
    code, _, err = run(["db", "--db", filled, "deadtime"], capsys)
    assert code == 2 and "--line" in err


def test_report_is_written_with_figures_and_caution(
    filled: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out_dir = tmp_path / "report"
    code, out, _ = run(["db", "--db", filled, "report", "--out", str(out_dir)], capsys)
    assert code == 0 and CAUTION in out
    text = (out_dir / "fleet-report.html").read_text(encoding="utf-8")
    assert text.count("data:image/png;base64,") == 5
    assert text.count("Caution: recordscan results support") == 2
    assert "Kaplan–Meier" in text and "SQLAlchemy" in text
    assert list(out_dir.iterdir()) == [out_dir / "fleet-report.html"]  # no temporary left


def test_bad_input_gives_one_line_errors_and_stores_nothing(
    tmp_path: Path, fleet: list[dict], capsys: pytest.CaptureFixture[str]
) -> None:
    db = str(tmp_path / "arcs.sqlite")
    bad = tmp_path / "bad.jsonl"
    bad.write_text(json.dumps(fleet[0]) + "\n{not json\n", encoding="utf-8")
    code, _, err = run(["db", "--db", db, "import", str(bad)], capsys)
    assert code == 2 and "bad.jsonl: line 2: not JSON" in err and len(err.strip().splitlines()) == 1
    wrong = write_jsonl(tmp_path / "wrong.jsonl", [fleet[0], dict(fleet[1], sha256="1234")])
    code, _, err = run(["db", "--db", db, "import", str(wrong)], capsys)
    assert code == 2 and "sha256" in err
    with open_store(db) as store:
        assert store.counts()["records"] == 0
    code, _, err = run(["db", "--db", db, "import", str(tmp_path / "missing.jsonl")], capsys)
    assert code == 2 and "missing.jsonl" in err
    code, _, err = run(["db", "--db", db, "events", "--since", "last week"], capsys)
    assert code == 2 and "--since" in err
    code, _, err = run(["db", "--db", "nosuchdialect://x", "lines"], capsys)
    assert code == 2 and err.startswith("recordscan: error:") and "cannot open" in err


def test_events_without_line_or_outcome_show_plain_dashes(
    tmp_path: Path, fleet: list[dict], capsys: pytest.CaptureFixture[str]
) -> None:
    quiet = dict(
        fleet[0],
        sha256="cd" * 32,
        event="no_fault",
        line=None,
        voltage_kv=None,
        faulted_phase=None,
        outcome=None,
        extinction_s=None,
        pole_open_s=None,
    )
    db = str(tmp_path / "arcs.sqlite")
    jsonl = write_jsonl(tmp_path / "r.jsonl", [quiet, fleet[1]])
    assert run(["db", "--db", db, "import", str(jsonl)], capsys)[0] == 0
    code, out, _ = run(["db", "--db", db, "events"], capsys)
    assert code == 0 and "nan" not in out.lower() and "no_fault" in out
    code, _, err = run(["db", "--db", db, "events", "--kv", "0"], capsys)
    assert code == 2 and "--kv" in err
    code, out, _ = run(["db", "--db", db, "report", "--out", str(tmp_path / "rep")], capsys)
    assert code == 0
    assert ">nan<" not in (tmp_path / "rep" / "fleet-report.html").read_text(encoding="utf-8")
