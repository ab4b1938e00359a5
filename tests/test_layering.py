"""Imports go one way (shared/DESIGN.md): signal never imports the Record; lower layers never
import higher ones. Checked by parsing the source, so it cannot be fooled by lazy imports."""

from __future__ import annotations

import ast
from pathlib import Path

PKG = Path(__file__).resolve().parents[1] / "recordscan"

# layer → layers it must not import
FORBIDDEN: dict[str, tuple[str, ...]] = {
    "core": (
        "io",
        "signal",
        "detect",
        "physics",
        "synth",
        "fit",
        "fleet",
        "relaytest",
        "plot",
        "report",
        "cli",
        "analysis",
    ),
    "signal": (
        "core.record",
        "io",
        "detect",
        "synth",
        "fit",
        "fleet",
        "relaytest",
        "plot",
        "report",
        "cli",
        "analysis",
    ),
    "physics": (
        "io",
        "detect",
        "synth",
        "fit",
        "fleet",
        "relaytest",
        "plot",
        "report",
        "cli",
        "analysis",
    ),
    "io": (
        "signal",
        "detect",
        "physics",
        "synth",
        "fit",
        "fleet",
        "relaytest",
        "plot",
        "report",
        "cli",
        "analysis",
    ),
    "detect": ("synth", "fit", "fleet", "relaytest", "plot", "report", "cli", "analysis"),
    "fit": ("fleet", "relaytest", "report", "cli"),
    "synth": ("detect", "fit", "fleet", "relaytest", "report", "cli", "analysis"),
    "fleet": ("cli",),
    "relaytest": ("cli",),
}


def _imports(path: Path) -> list[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out: list[str] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module:
            out.append(node.module)
    return out


def test_imports_go_one_way() -> None:
    bad = []
    for layer, banned in FORBIDDEN.items():
        for path in (PKG / layer).rglob("*.py"):
            for mod in _imports(path):
                for b in banned:
                    if mod == f"recordscan.{b}" or mod.startswith(f"recordscan.{b}."):
                        bad.append(f"{path.relative_to(PKG)} imports {mod}")
    assert bad == []
