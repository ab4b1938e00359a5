"""Line description files: the demo set loads; bad files fail with file and key named."""

from __future__ import annotations

import ast
import math
import sys
from pathlib import Path

import pytest

from recordscan.errors import FormatError, MissingFileError
from recordscan.physics.line import LineDescription, load_line, parse_line

ROOT = Path(__file__).resolve().parents[1]
LINES = ROOT / "sample_records" / "lines"

SEQUENCE_FILE = """
name = "Elderby–Corrow 500 kV"
from_station = "Elderby"
to_station = "Corrow"
voltage_kv = 500.0
frequency_hz = 60.0
length_km = 300.0
dead_time_s = 0.75

[sequence]
r1_ohm_per_km = 0.020
x1_ohm_per_km = 0.340
c1_nf_per_km = 12.5
r0_ohm_per_km = 0.250
x0_ohm_per_km = 1.100
c0_nf_per_km = 7.5

[reactor.to]
phase_ohm = 1010.51
neutral_ohm = 449.11
"""


@pytest.mark.parametrize(
    ("name", "kv", "km", "n_sub", "reactors"),
    [
        ("ashcombe-brightwater.toml", 500.0, 240.0, 3, 0),
        ("brightwater-corrow.toml", 765.0, 320.0, 4, 2),
        ("corrow-dunhallow.toml", 345.0, 150.0, 2, 0),
        ("dunhallow-elderby.toml", 400.0, 180.0, 4, 0),
    ],
)
def test_demo_lines_load(name: str, kv: float, km: float, n_sub: int, reactors: int) -> None:
    line = load_line(LINES / name)
    assert isinstance(line, LineDescription)
    assert line.voltage_v == kv * 1e3
    assert line.v_phase_v == pytest.approx(kv * 1e3 / math.sqrt(3))
    assert line.length_m == km * 1e3
    assert line.frequency_hz == 60.0
    assert line.geometry is not None
    assert line.geometry.phases[0].bundle.n_sub == n_sub
    assert sum(r is not None for r in line.reactors) == reactors
    assert line.dead_time_s is not None and 0.5 <= line.dead_time_s <= 1.0
    assert line.constants.is_transposed == line.transposed
    assert line.from_station in line.name and line.to_station in line.name
    assert line.source.endswith(name)
    assert line.to_dict()["voltage_v"] == kv * 1e3


def test_sequence_file(tmp_path: Path) -> None:
    p = tmp_path / "seq.toml"
    p.write_text(SEQUENCE_FILE, encoding="utf-8")
    line = load_line(p)
    assert line.earth_model == "sequence"
    assert line.constants.c1_f_per_m == pytest.approx(12.5e-12)
    assert line.constants.x0_ohm_per_m == pytest.approx(1.1e-3)
    assert line.reactor_from is None
    assert line.reactor_to is not None and line.reactor_to.x_neutral_ohm == 449.11
    # 247.4 Mvar at 500 kV ↔ 1010.51 Ω (V²/Q)
    assert line.reactor_to.mvar_at(500e3) / 1e6 == pytest.approx(247.4, abs=0.05)
    assert line.compensation == pytest.approx(0.7, rel=1e-5)


def test_mvar_and_solid_neutral() -> None:
    data = _seq_dict()
    data["reactor"] = {"from": {"mvar": 250.0, "neutral_ohm": "solid", "quality_factor": 300}}
    line = parse_line(data, source="inline")
    assert line.reactor_from is not None
    assert line.reactor_from.x_phase_ohm == pytest.approx(500e3**2 / 250e6)
    assert line.reactor_from.x_neutral_ohm == 0.0
    assert line.reactor_from.quality_factor == 300.0


def _seq_dict() -> dict:
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover - Python 3.10
        import tomli as tomllib

    return tomllib.loads(SEQUENCE_FILE.split("[reactor.to]")[0])


@pytest.mark.parametrize(
    ("edit", "key"),
    [
        (lambda d: d.pop("voltage_kv"), "voltage_kv"),
        (lambda d: d.update(length_km=-3.0), "length_km"),
        (lambda d: d.update(frequency_hz="sixty"), "frequency_hz"),
        (lambda d: d.update(transposed="yes"), "transposed"),
        (lambda d: d.update(colour="red"), "colour"),
        (lambda d: d["sequence"].pop("c0_nf_per_km"), "sequence.c0_nf_per_km"),
        (lambda d: d["sequence"].update(c0_nf_per_km=20.0), "sequence.c0_nf_per_km"),
        (lambda d: d.update(geometry={}), "geometry"),
        (lambda d: d.update(transposed=False), "transposed"),
        (lambda d: d.update(reactor={"middle": {}}), "reactor.middle"),
        (lambda d: d.update(reactor={"from": {"neutral_ohm": 10.0}}), "reactor.from.mvar"),
        (
            lambda d: d.update(reactor={"from": {"mvar": 100.0, "neutral_ohm": "floating"}}),
            "reactor.from.neutral_ohm",
        ),
        (lambda d: d.update(schema=2), "schema"),
    ],
)
def test_bad_keys_name_file_and_key(edit, key: str) -> None:
    data = _seq_dict()
    edit(data)
    with pytest.raises(FormatError) as err:
        parse_line(data, source="some/line.toml")
    msg = str(err.value)
    assert msg.startswith("some/line.toml: ")
    assert f"'{key}'" in msg
    assert "\n" not in msg


def test_bad_geometry_keys(tmp_path: Path) -> None:
    text = (LINES / "corrow-dunhallow.toml").read_text(encoding="utf-8")
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace('phase = "C"', 'phase = "B"'), encoding="utf-8")
    with pytest.raises(FormatError, match=r"bad\.toml: key 'geometry\.phase'"):
        load_line(bad)
    bad.write_text(text.replace("sag_m = 13.5", "sag_m = 30.0", 1), encoding="utf-8")
    with pytest.raises(FormatError, match=r"key 'geometry\.phase\[0\]'.*sag"):
        load_line(bad)
    bad.write_text(text.replace("bundle_count = 2", "bundle_count = 2.5"), encoding="utf-8")
    with pytest.raises(FormatError, match=r"key 'geometry\.phase_conductor\.bundle_count'"):
        load_line(bad)
    bad.write_text(text.replace('earth_model = "carson"', 'earth_model = "flat"'), encoding="utf-8")
    with pytest.raises(FormatError, match=r"key 'geometry\.earth_model'"):
        load_line(bad)


def test_not_toml_and_missing(tmp_path: Path) -> None:
    bad = tmp_path / "broken.toml"
    bad.write_text("name = [unclosed\n", encoding="utf-8")
    with pytest.raises(FormatError, match=r"broken\.toml: not valid TOML"):
        load_line(bad)
    with pytest.raises(MissingFileError, match=r"nowhere\.toml"):
        load_line(tmp_path / "nowhere.toml")


def test_loader_imports_only_stdlib_and_numpy() -> None:
    """The shared loader (and what it imports) stays light: stdlib, numpy, recordscan.errors."""
    allowed_top = {"__future__", "math", "sys", "collections", "dataclasses", "pathlib", "typing"}
    allowed_top |= {"tomllib", "tomli", "numpy"}
    for mod in ("line.py", "line_constants.py", "reactors.py"):
        tree = ast.parse((ROOT / "recordscan" / "physics" / mod).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names: list[str] = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            for n in names:
                if n.startswith("recordscan."):
                    assert n in {
                        "recordscan.errors",
                        "recordscan.core.tomlfile",  # stdlib TOML reader, no numpy even
                        "recordscan.physics.line_constants",
                        "recordscan.physics.reactors",
                    }, f"{mod} imports {n}"
                else:
                    assert n.split(".")[0] in allowed_top, f"{mod} imports {n}"
