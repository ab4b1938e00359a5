"""Four-legged reactor equivalents and neutral-reactor sizing (tests/reference/coupling.toml)."""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

from recordscan.errors import ModelError
from recordscan.physics.reactors import (
    FourLeggedReactor,
    free_frequency_hz,
    phase_reactance_ohm,
    reactance_from_mvar_ohm,
    size_neutral_reactor,
)

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

REF = tomllib.loads(
    (Path(__file__).parent / "reference" / "coupling.toml").read_text(encoding="utf-8")
)
UNC = REF["uncompensated"]
LENGTH_M = UNC["length_km"] * 1e3
C1_F = UNC["c1_nf_per_km"] * 1e-12 * LENGTH_M
C0_F = UNC["c0_nf_per_km"] * 1e-12 * LENGTH_M
F_HZ = UNC["frequency_hz"]


@pytest.mark.parametrize("row", REF["neutral_reactor"]["rows"], ids=lambda r: f"F={r[0]}")
def test_neutral_reactor_sizing_table(row: list[float]) -> None:
    """Knudsen 1962; Kimbark 1964: X_p, X_n, X_n/X_p, Mvar, f_n, beat (formulas derived)."""
    comp, x_p, x_n, ratio, mvar, f_n, beat = row
    tol = REF["neutral_reactor"]["rel_tol"]
    s = size_neutral_reactor(c1_f=C1_F, c0_f=C0_F, compensation=comp, frequency_hz=F_HZ)
    assert s.x_phase_ohm == pytest.approx(x_p, rel=tol)
    assert s.x_neutral_ohm == pytest.approx(x_n, rel=tol)
    assert s.ratio == pytest.approx(ratio, rel=tol + 5e-5 / ratio)
    assert s.mvar_at(500e3) / 1e6 == pytest.approx(mvar, rel=tol + 0.05 / mvar)
    assert s.free_frequency_hz == pytest.approx(f_n, rel=tol)
    assert s.beat_frequency_hz == pytest.approx(beat, abs=2e-3)
    # the sized bank cancels the interphase capacitance: 1/X_pp = ω·C_m
    assert s.reactor.b_pp_siemens == pytest.approx(2 * math.pi * F_HZ * (C1_F - C0_F) / 3)


def test_tuned_free_frequency_ratio() -> None:
    """f_n/f = √((F·C1 − Cm)/(C0 + 2Cm)) = 0.80861 at F = 0.7, C0/C1 = 0.6 (derived)."""
    ref = REF["neutral_reactor"]["fn_over_f_at_07"]
    s = size_neutral_reactor(c1_f=C1_F, c0_f=C0_F, compensation=0.7, frequency_hz=F_HZ)
    assert s.free_frequency_hz / F_HZ == pytest.approx(ref["value"], rel=ref["rel_tol"])
    cm = (C1_F - C0_F) / 3
    closed = math.sqrt((0.7 * C1_F - cm) / (C0_F + 2 * cm))
    assert s.free_frequency_hz / F_HZ == pytest.approx(closed, rel=1e-12)


def test_equivalent_reactances_match_nodal_admittance() -> None:
    """X_pg = X_p + 3X_n, X_pp = X_p²/X_n + 3X_p against the star-with-neutral nodal matrix."""
    bank = FourLeggedReactor(x_phase_ohm=1000.0, x_neutral_ohm=400.0)
    assert bank.x_pg_ohm == 2200.0
    assert bank.x_pp_ohm == pytest.approx(1000.0**2 / 400.0 + 3000.0)
    y = bank.admittance_matrix_siemens()
    # zero-sequence: equal voltages on all phases see X_pg per phase
    i0 = y @ np.ones(3)
    np.testing.assert_allclose(i0, 1 / (1j * bank.x_pg_ohm) * np.ones(3), rtol=1e-12)
    # phase-to-phase element of the equivalent delta
    assert -y[0, 1] == pytest.approx(1 / (1j * bank.x_pp_ohm), rel=1e-12)
    # positive sequence sees X_p only
    a = np.exp(-2j * np.pi / 3 * np.arange(3))
    np.testing.assert_allclose(y @ a, a / (1j * bank.x_phase_ohm), rtol=1e-12)


def test_solid_neutral_and_losses() -> None:
    solid = FourLeggedReactor(x_phase_ohm=1000.0)
    assert math.isinf(solid.x_pp_ohm) and solid.b_pp_siemens == 0.0
    np.testing.assert_allclose(solid.admittance_matrix_siemens(), np.eye(3) / 1000j)
    lossy = FourLeggedReactor(x_phase_ohm=1000.0, quality_factor=400.0)
    y = lossy.admittance_matrix_siemens()[0, 0]
    assert y.real == pytest.approx(1 / 1000.0 * (1 / 400.0) / (1 + 1 / 400.0**2), rel=1e-12)
    # at half the frequency the reactance halves (admittance doubles)
    y_half = solid.admittance_matrix_siemens(frequency_ratio=0.5)[0, 0]
    assert abs(y_half) == pytest.approx(2 / 1000.0)


def test_mvar_and_compensation_helpers() -> None:
    assert reactance_from_mvar_ohm(247.4e6, 500e3) == pytest.approx(1010.51, rel=1e-4)
    x_p = phase_reactance_ohm(c1_f=C1_F, compensation=0.7, frequency_hz=F_HZ)
    assert x_p == pytest.approx(1010.51, rel=5e-6)
    assert FourLeggedReactor(x_phase_ohm=x_p).mvar_at(500e3) / 1e6 == pytest.approx(247.4, abs=0.05)


def test_infeasible_neutral_reactor() -> None:
    """Cancellation needs F > 1 − C0/C1 (= 0.4 here; Kimbark 1964)."""
    with pytest.raises(ModelError, match="exceed"):
        size_neutral_reactor(c1_f=C1_F, c0_f=C0_F, compensation=0.35, frequency_hz=F_HZ)
    with pytest.raises(ModelError):
        FourLeggedReactor(x_phase_ohm=-1.0)
    with pytest.raises(ModelError):
        FourLeggedReactor(x_phase_ohm=1.0, x_neutral_ohm=-1.0)


def test_free_frequency_without_reactors_is_nan() -> None:
    assert math.isnan(free_frequency_hz(c1_f=C1_F, c0_f=C0_F, reactors=(), frequency_hz=F_HZ))


def test_to_dict_is_strict_json() -> None:
    import json

    d = FourLeggedReactor(x_phase_ohm=1000.0).to_dict()
    assert d["phase_to_phase_ohm"] is None and d["quality_factor"] is None
    json.dumps(d, allow_nan=False)
