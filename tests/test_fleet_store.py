"""The arc-parameter store, on SQLite and on a real PostgreSQL server.

The same tests run against both back-ends. PostgreSQL runs when RECORDSCAN_TEST_PG_URL is
set (CI sets it through .ci/postgres); with CI set and no URL the PostgreSQL cases fail
rather than skip. Locally without a server they are not collected.
"""

from __future__ import annotations

import json
import multiprocessing as mp
import os
import re
import uuid
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
import sqlalchemy as sa
from fleet_results import make_fit, make_fleet, make_result, write_jsonl

from recordscan.errors import FormatError, StoreError
from recordscan.fleet import schema as S
from recordscan.fleet import store as store_mod
from recordscan.fleet.store import EventFilter, default_location, open_store, parse_instant_ns

PG_URL = os.environ.get("RECORDSCAN_TEST_PG_URL")
IN_CI = os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no")
BACKENDS: list = ["sqlite"]
if PG_URL or IN_CI:
    BACKENDS.append(pytest.param("postgres", marks=pytest.mark.postgres))


@pytest.fixture(params=BACKENDS)
def db_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """A fresh, empty database: an SQLite file, or a private schema on the PG server."""
    if request.param == "sqlite":
        yield str(tmp_path / "arcs.sqlite")
        return
    if not PG_URL:
        pytest.fail("CI is set but RECORDSCAN_TEST_PG_URL is not: source .ci/postgres first")
    schema = f"t_{uuid.uuid4().hex[:12]}"
    admin = sa.create_engine(PG_URL)
    with admin.begin() as conn:
        conn.exec_driver_sql(f"CREATE SCHEMA {schema}")
    url = sa.make_url(PG_URL).update_query_dict({"options": f"-csearch_path={schema}"})
    try:
        yield url.render_as_string(hide_password=False)
    finally:
        with admin.begin() as conn:
            conn.exec_driver_sql(f"DROP SCHEMA {schema} CASCADE")
        admin.dispose()


def test_open_creates_latest_schema(db_url: str) -> None:
    with open_store(db_url) as store:
        assert store.schema_version() == S.SCHEMA_VERSION == 2
        assert store.counts() == {t.name: 0 for t in S.V1_TABLES}
    with open_store(db_url) as store:  # opening again applies nothing
        assert store.schema_version() == 2


def test_ingest_is_idempotent_by_content_hash(db_url: str) -> None:
    result = make_result(1)
    with open_store(db_url) as store:
        first = store.ingest(result, fit=make_fit(result), tags={"weather": "rain"})
        assert first.status == "added"
        counts = store.counts()
        assert counts["records"] == counts["events"] == counts["arc_fits"] == 1
        assert counts["restrikes"] == len(result["restrike_s"])
        again = store.ingest(result, fit=make_fit(result), tags={"weather": "rain"})
        assert (again.status, again.record_id) == ("duplicate", first.record_id)
        assert store.counts() == counts
        replaced = store.ingest(result, replace=True)
        assert replaced.status == "replaced"
        assert store.counts()["arc_fits"] == 0 and store.counts()["events"] == 1


def _schema_keys() -> list[str]:
    doc = Path(__file__).resolve().parents[1] / "docs" / "scan-schema.md"
    keys: list[str] = []
    for row in doc.read_text(encoding="utf-8").splitlines():
        m = re.match(r"\|\s*(`[^|]+`)\s*\|", row)
        if m:
            keys += re.findall(r"`([a-z0-9_]+)`", m.group(1))
    return keys


def test_every_scan_field_is_stored(db_url: str) -> None:
    # docs/scan-schema.md (version 1) lists the keys; each is a column or kept in the JSON.
    keys = _schema_keys()
    assert len(keys) > 40
    json_only = {"events", "warnings", "versions", "restrike_s", "restrike_voltage_v"}
    columns = {c.name for c in S.events.c} | {c.name for c in S.records.c}
    renamed = {
        "file": "path",
        "schema": "scan_schema",
        "voltage_kv": "voltage_v",
        "deionisation_rules": "deionisation_rules_json",
    }
    missing = [k for k in keys if k not in json_only and renamed.get(k, k) not in columns]
    assert missing == []
    result = make_result(7, censored=False)
    with open_store(db_url) as store:
        store.ingest(result)
        row = store.events().iloc[0]
        for name in S.EVENT_FLOAT_FIELDS:
            expected = result[name]
            if expected is None:
                assert row[name] != row[name], name  # NaN
            else:
                assert row[name] == pytest.approx(expected, rel=1e-12), name
        for name in S.EVENT_TEXT_FIELDS:
            assert row[name] == result[name]
        assert row["voltage_v"] == 400e3
        assert row["start_ns"] == parse_instant_ns(result["start"])
        shown = store.show(result["sha256"][:10])
        assert shown["result"] == json.loads(json.dumps(result))
        assert [r["t_s"] for r in shown["restrikes"]] == result["restrike_s"]


def test_failure_inside_the_transaction_leaves_nothing(
    db_url: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    original = store_mod._insert

    def crash_after_writing(conn, prepared, tags, *, replace):  # type: ignore[no-untyped-def]
        original(conn, prepared, tags, replace=replace)
        raise RuntimeError("simulated crash after the rows were written")

    with open_store(db_url) as store:
        monkeypatch.setattr(store_mod, "_insert", crash_after_writing)
        result = make_result(2)
        with pytest.raises(RuntimeError, match="simulated crash"):
            store.ingest(result, fit=make_fit(result), tags={"season": "winter"})
        assert store.counts() == {t.name: 0 for t in S.V1_TABLES}


def test_bad_results_are_refused_before_writing(db_url: str) -> None:
    good = make_fleet(2)
    bad = dict(good[1], sha256="xyz", file="records/bad.cfg")
    with open_store(db_url) as store:
        with pytest.raises(FormatError, match=r"records/bad\.cfg.*sha256"):
            store.ingest_many([good[0], bad])
        assert store.counts()["records"] == 0
        with pytest.raises(FormatError, match="'start'"):  # caught before anything is written
            store.ingest_many([good[0], dict(good[1], start="the day before")])
        assert store.counts()["records"] == 0
        with pytest.raises(FormatError, match="restrike"):
            store.ingest(dict(good[0], restrike_voltage_v=[1.0, 2.0, 3.0, 4.0]))
        with pytest.raises(FormatError, match="'start'"):
            store.ingest(dict(good[0], start="yesterday"))
        with pytest.raises(FormatError, match="'pole_open_s'"):
            store.ingest(dict(good[0], pole_open_s="0.1"))
        with pytest.raises(FormatError, match="schema"):
            store.ingest(dict(good[0], schema=0))
        assert store.counts()["records"] == 0


def test_error_result_keeps_the_record_only(db_url: str) -> None:
    result = {
        "schema": 1,
        "file": "records/broken.cfg",
        "sha256": "ab" * 32,
        "status": "error",
        "error": "records/broken.cfg: line 3: expected 2 fields",
    }
    with open_store(db_url) as store:
        assert store.ingest(result).status == "added"
        assert store.counts()["records"] == 1 and store.counts()["events"] == 0
        assert store.show("abab")["record"]["error"].startswith("records/broken.cfg")


def test_filters_lines_and_tags(db_url: str) -> None:
    fleet = make_fleet(6)
    with open_store(db_url) as store:
        summary = store.ingest_many(fleet)
        assert summary.to_dict() == {"added": 18, "duplicate": 0, "replaced": 0}
        assert len(store.events()) == 18
        assert len(store.events(EventFilter(line="Corrow–Dunhallow"))) == 6
        assert set(store.events(EventFilter(voltage_v=765e3))["line"]) == {"Dunhallow–Elderby"}
        frame = store.events()
        cut = int(frame["start_ns"].median())
        early = store.events(EventFilter(until_ns=cut))
        late = store.events(EventFilter(since_ns=cut))
        assert len(early) + len(late) == 18 and (early["start_ns"] < cut).all()
        n_success = int((frame["outcome"] == "success").sum())
        assert len(store.events(EventFilter(outcome="success"))) == n_success
        sha = store.tag(fleet[3]["sha256"][:8], key="weather", value="fog")
        assert sha == fleet[3]["sha256"]
        assert list(store.events(EventFilter(tag=("weather", "fog")))["sha256"]) == [sha]
        store.tag(sha[:8], key="weather", value=None)
        assert store.events(EventFilter(tag=("weather", "fog"))).empty
        with pytest.raises(StoreError, match="no stored record"):
            store.tag("ffff0000", key="weather", value="x")
        lines = {ln["name"]: ln for ln in store.lines()}
        assert lines["Ashcombe–Brightwater"]["n_events"] == 6
        assert lines["Dunhallow–Elderby"]["voltage_v"] == 765e3


@dataclass(frozen=True)
class _Line:  # the shape of recordscan.physics.line.load_line's result (fields used here)
    name: str
    voltage_v: float
    length_m: float
    reactors: tuple
    dead_time_s: float


def test_line_descriptions_from_dataclass_or_dict(db_url: str) -> None:
    line = _Line("Ashcombe–Brightwater", 400e3, 142e3, ({"x_ohm": 1010.5},), 0.9)
    with open_store(db_url) as store:
        store.ingest(make_result(1), line=line)
        stored = store.line("Ashcombe–Brightwater")
        assert stored is not None
        assert stored["length_m"] == 142e3 and stored["compensation"] == "shunt reactors"
        assert store.events()["line_dead_time_s"].iloc[0] == 0.9
        store.upsert_line({"name": "Ashcombe–Brightwater", "voltage_v": 400e3, "dead_time_s": 1.0})
        assert store.events()["line_dead_time_s"].iloc[0] == 1.0
        with pytest.raises(FormatError, match="name"):
            store.upsert_line({"voltage_v": 400e3})


def test_fits_are_stored_with_uncertainties(db_url: str) -> None:
    fleet = make_fleet(2)
    with open_store(db_url) as store:
        for r in fleet:
            store.ingest(r, fit=make_fit(r))
        store.ingest(fleet[0], fit=make_fit(fleet[0], method="indirect"), replace=True)
        fits = store.fits(EventFilter(line="Ashcombe–Brightwater"))
        assert len(fits) == 2
        assert set(fits["method"]) == {"direct", "indirect"}
        later = dict(make_fit(fleet[0]), u0_v_per_m=2000.0)  # a later fit of the same method
        assert store.add_fit(fleet[0]["sha256"][:8], later) == fleet[0]["sha256"]
        store.add_fit(fleet[0]["sha256"][:8], later)  # replaces, never duplicates
        fits = store.fits(EventFilter(line="Ashcombe–Brightwater"))
        assert len(fits) == 3
        mine = fits[fits["sha256"] == fleet[0]["sha256"]]
        assert set(mine["method"]) == {"direct", "indirect"}
        assert float(mine[mine["method"] == "direct"]["u0_v_per_m"].iloc[0]) == 2000.0
        with pytest.raises(FormatError, match="method"):
            store.add_fit(fleet[0]["sha256"][:8], {"u0_v_per_m": 1.0})
        row = fits[fits["sha256"] == fleet[1]["sha256"]].iloc[0]
        assert row["u0_v_per_m_stderr"] == pytest.approx(0.1 * row["u0_v_per_m"])
        assert row["tau0_s_status"] == "fitted" and bool(row["success"])


def test_migration_from_version_1_keeps_data(db_url: str) -> None:
    with open_store(db_url, migrate_to=1) as store:
        assert store.schema_version() == 1
        store.ingest(make_result(3))
        names = {ix["name"] for ix in sa.inspect(store.engine).get_indexes("events")}
        assert "ix_events_line" not in names
    with open_store(db_url) as store:
        assert store.schema_version() == 2
        assert store.counts()["events"] == 1
        names = {ix["name"] for ix in sa.inspect(store.engine).get_indexes("events")}
        assert {"ix_events_line", "ix_events_outcome"} <= names
        with store.engine.begin() as conn:
            conn.execute(
                sa.insert(S.schema_version).values(version=99, description="x", applied_at="now")
            )
    with pytest.raises(StoreError, match="newer than this recordscan"):
        open_store(db_url)


def test_default_location_and_bad_urls(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("RECORDSCAN_DB", str(tmp_path / "env.sqlite"))
    assert default_location() == str(tmp_path / "env.sqlite")
    monkeypatch.delenv("RECORDSCAN_DB")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    assert default_location() == str(tmp_path / "xdg" / "recordscan" / "arcs.sqlite")
    with open_store() as store:
        assert store.dialect == "sqlite"
    assert (tmp_path / "xdg" / "recordscan" / "arcs.sqlite").exists()
    with pytest.raises(StoreError, match="cannot open"):
        open_store("nosuchdialect://x/y")
    not_db = tmp_path / "not.sqlite"
    not_db.write_bytes(b"this is not an SQLite database, just text" * 40)
    with pytest.raises(StoreError, match=r"not\.sqlite"):
        open_store(str(not_db))


def _ingest_folder(url: str, folder: str, seed: int, queue: mp.Queue, barrier) -> None:  # type: ignore[no-untyped-def]
    import random

    files = sorted(Path(folder).glob("*.jsonl"))
    random.Random(seed).shuffle(files)
    added = 0
    barrier.wait(timeout=120)  # both processes start together, on a fresh database
    with open_store(url) as store:
        for path in files:
            results = [json.loads(x) for x in path.read_text(encoding="utf-8").splitlines()]
            added += store.ingest_many(results).n_added
    queue.put(added)


def test_two_processes_ingesting_the_same_folder(db_url: str, tmp_path: Path) -> None:
    folder = tmp_path / "scans"
    folder.mkdir()
    fleet = make_fleet(10, seed=5)
    for i, r in enumerate(fleet):
        write_jsonl(folder / f"{i:03d}.jsonl", [r])
    ctx = mp.get_context("spawn")
    queue: mp.Queue = ctx.Queue()
    barrier = ctx.Barrier(2)
    procs = [
        ctx.Process(target=_ingest_folder, args=(db_url, str(folder), seed, queue, barrier))
        for seed in (1, 2)
    ]
    for p in procs:
        p.start()
    for p in procs:
        p.join(timeout=240)
        assert p.exitcode == 0
    added = [queue.get(timeout=5), queue.get(timeout=5)]
    assert sum(added) == len(fleet)
    with open_store(db_url) as store:
        counts = store.counts()
        frame = store.events()
    assert counts["records"] == counts["events"] == len(fleet)
    assert counts["restrikes"] == sum(len(r["restrike_s"]) for r in fleet)
    assert counts["lines"] == 3
    assert sorted(frame["sha256"]) == sorted(r["sha256"] for r in fleet)
