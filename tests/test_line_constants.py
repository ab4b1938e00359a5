"""Line constants from tower geometry against published and derived values.

Reference rows live in tests/reference/line_constants.toml with their sources.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad

from recordscan.errors import ModelError
from recordscan.physics.line_constants import (
    EPSILON_0_F_PER_M,
    MU_0_H_PER_M,
    Bundle,
    Conductor,
    LineConstants,
    TowerGeometry,
    Wire,
    carson_correction_ohm_per_m,
    line_constants,
)

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

REF = tomllib.loads(
    (Path(__file__).parent / "reference" / "line_constants.toml").read_text(encoding="utf-8")
)
LINES = Path(__file__).resolve().parents[1] / "sample_records" / "lines"

#: far above ground: the image terms no longer depend on the layout ("earth neglected")
FAR_M = 1.0e5


def _flat(
    x_m: list[float],
    height_m: float,
    *,
    diameter_m: float,
    n_sub: int = 1,
    spacing_m: float = 0.0,
    gmr_m: float | None = None,
    resistance_ohm_per_m: float = 0.0,
) -> TowerGeometry:
    cond = Conductor(diameter_m=diameter_m, resistance_ohm_per_m=resistance_ohm_per_m, gmr_m=gmr_m)
    b = Bundle(cond, n_sub=n_sub, spacing_m=spacing_m)
    return TowerGeometry(phases=tuple(Wire(x_m=x, height_m=height_m, bundle=b) for x in x_m))


def test_textbook_horizontal_capacitance() -> None:
    """Textbook problem, D 2 m + 2.5 m, d 1.24 cm: published 0.0091 µF/km (see toml)."""
    ref = REF["textbook_horizontal"]
    geo = _flat(ref["x_m"], FAR_M, diameter_m=ref["diameter_m"])
    lc = line_constants(geo, frequency_hz=50.0, earth_model="complex_depth")
    c1_uf_per_km = lc.c1_f_per_m * 1e9
    pub = ref["published_uf_per_km"]
    assert c1_uf_per_km == pytest.approx(pub["value"], abs=pub["abs_tol"])
    der = ref["derived_uf_per_km"]
    assert c1_uf_per_km == pytest.approx(der["value"], rel=der["rel_tol"])


def test_grainger_stevenson_bundled_line() -> None:
    """Grainger & Stevenson 1994, Example 4.5 and the capacitance companion (from memory)."""
    ref = REF["grainger_stevenson_bundle"]
    d = ref["d_m"]
    geo = _flat(
        [-d, 0.0, d],
        FAR_M,
        diameter_m=2 * ref["radius_m"],
        n_sub=2,
        spacing_m=ref["spacing_m"],
        gmr_m=ref["gmr_m"],
    )
    # complex depth keeps the earth term regular at any height; with the conductors far up
    # the earth corrections of self and mutual terms cancel in Z1
    lc = line_constants(geo, frequency_hz=60.0, earth_model="complex_depth")
    assert lc.c1_f_per_m * 1e12 == pytest.approx(
        ref["c_nf_per_km"]["value"], rel=ref["c_nf_per_km"]["rel_tol"]
    )
    xc = 1.0 / (2 * math.pi * 60.0 * lc.c1_f_per_m) / 1e3 / 1e6  # MΩ·km
    assert xc == pytest.approx(ref["xc_mohm_km"]["value"], rel=ref["xc_mohm_km"]["rel_tol"])
    x1 = lc.x1_ohm_per_m * 1e3
    assert x1 == pytest.approx(ref["xl_ohm_per_km"]["value"], rel=ref["xl_ohm_per_km"]["rel_tol"])
    book = ref["xl_book_ohm_per_km"]
    assert x1 == pytest.approx(book["value"], abs=book["abs_tol"])


def test_maxwell_images_500kv() -> None:
    """Derived 500 kV Maxwell example: P, C, partial capacitances, C1, C0 (see toml)."""
    ref = REF["maxwell_500kv"]
    geo = _flat(
        ref["x_m"],
        ref["height_m"],
        diameter_m=ref["diameter_m"],
        n_sub=ref["n_sub"],
        spacing_m=ref["spacing_m"],
    )
    assert geo.phases[0].bundle.radius_eq_m == pytest.approx(
        ref["radius_eq_m"]["value"], rel=ref["radius_eq_m"]["rel_tol"]
    )
    lc = line_constants(geo, frequency_hz=60.0)
    tol = ref["matrix_rel_tol"]
    np.testing.assert_allclose(lc.p_m_per_f / 1e9, ref["p_1e9_m_per_f"], rtol=tol)
    np.testing.assert_allclose(lc.c_f_per_m * 1e12, ref["c_pf_per_m"], rtol=tol, atol=1e-5)
    cg = lc.c_ground_f_per_m * 1e12
    cpp = lc.c_phase_phase_f_per_m * 1e12
    atol = ref["partial_abs_tol"]
    assert cg[1] == pytest.approx(ref["centre_to_ground_pf_per_m"], abs=atol)
    assert cg[0] == pytest.approx(ref["outer_to_ground_pf_per_m"], abs=atol)
    assert cg[2] == pytest.approx(ref["outer_to_ground_pf_per_m"], abs=atol)
    assert cpp[0, 1] == pytest.approx(ref["adjacent_mutual_pf_per_m"], abs=atol)
    assert cpp[0, 2] == pytest.approx(ref["outer_mutual_pf_per_m"], abs=atol)
    assert np.all(np.diag(cpp) == 0)
    assert lc.c1_f_per_m * 1e12 == pytest.approx(
        ref["c1_nf_per_km"]["value"], rel=ref["c1_nf_per_km"]["rel_tol"]
    )
    assert lc.c0_f_per_m * 1e12 == pytest.approx(
        ref["c0_nf_per_km"]["value"], rel=ref["c0_nf_per_km"]["rel_tol"]
    )


@pytest.mark.parametrize("row", REF["flat_lines"]["rows"], ids=lambda r: r[0])
def test_flat_lines_capacitances_and_coupling(row: list) -> None:
    """Derived table of flat EHV lines: C1, C0, Cm, I_s per km, V_rec ratio (see toml)."""
    _name, f_hz, kv, d, h, n, dmm, s, c1, c0, cm, is_tr, is_c, is_o, vrec = row
    tol = REF["flat_lines"]["rel_tol"]
    geo = _flat([-d, 0.0, d], h, diameter_m=dmm * 1e-3, n_sub=n, spacing_m=s)
    lc = line_constants(geo, frequency_hz=f_hz)
    lt = lc.transposed()
    # rows are quoted to 3-4 significant figures
    assert lt.c1_f_per_m * 1e12 == pytest.approx(c1, rel=tol + 0.005 / c1)
    assert lt.c0_f_per_m * 1e12 == pytest.approx(c0, rel=tol + 0.005 / c0)
    assert lt.cm_f_per_m * 1e12 == pytest.approx(cm, rel=tol + 0.0005 / cm)
    w = 2 * math.pi * f_hz
    v_ph = kv * 1e3 / math.sqrt(3)
    assert w * lt.cm_f_per_m * v_ph * 1e3 == pytest.approx(is_tr, rel=tol + 0.00005 / is_tr)
    v = v_ph * np.exp(-2j * np.pi / 3 * np.arange(3))
    c = lc.c_f_per_m
    per_km = [w * abs(sum(c[k, j] * v[j] for j in range(3) if j != k)) * 1e3 for k in range(3)]
    assert per_km[1] == pytest.approx(is_c, rel=tol + 0.00005 / is_c)
    assert per_km[0] == pytest.approx(is_o, rel=tol + 0.00005 / is_o)
    assert lt.cm_f_per_m / (lt.c0_f_per_m + 2 * lt.cm_f_per_m) == pytest.approx(
        vrec, rel=tol + 0.00005 / vrec
    )


@pytest.mark.parametrize("kind", ["conventional", "compact"])
def test_phase_to_phase_coupling_common_practice(kind: str) -> None:
    """500 kV: ≈1.8 nF/km conventional, ≈2.6 nF/km compact (common practice)."""
    ref = REF["phase_to_phase_common_practice"][kind]
    geo = _flat(ref["x_m"], ref["height_m"], diameter_m=0.0306, n_sub=3, spacing_m=0.457)
    cm = line_constants(geo, frequency_hz=60.0).transposed().cm_f_per_m * 1e12
    assert ref["low_nf_per_km"] <= cm <= ref["high_nf_per_km"]


def _carson_integral(hi: float, hk: float, x: float, f: float, rho: float) -> complex:
    w = 2 * math.pi * f
    m = w * MU_0_H_PER_M / rho

    def g(lam: float) -> complex:
        return np.exp(-(hi + hk) * lam) * np.cos(x * lam) / (lam + np.sqrt(lam * lam + 1j * m))

    kw = {"limit": 500, "epsabs": 0.0, "epsrel": 1e-11}
    re = quad(lambda t: g(t).real, 0, np.inf, **kw)[0]
    im = quad(lambda t: g(t).imag, 0, np.inf, **kw)[0]
    return 1j * w * MU_0_H_PER_M / math.pi * complex(re, im)


@pytest.mark.parametrize("case", REF["carson"]["cases"])
def test_carson_series_matches_carson_integral(case: list[float]) -> None:
    """Carson's series equals his integral evaluated by scipy quadrature (Carson 1926)."""
    hi, hk, x, f, rho = case
    dist = math.hypot(x, hi + hk)
    phi = math.atan2(abs(x), hi + hk)
    series = complex(
        carson_correction_ohm_per_m(dist, phi, frequency_hz=f, earth_resistivity_ohm_m=rho)
    )
    exact = _carson_integral(hi, hk, x, f, rho)
    assert abs(series - exact) / abs(exact) < REF["carson"]["rel_tol"]


def test_carson_low_frequency_limit() -> None:
    """ΔR → ωμ0/8 = 0.0592 Ω/km at 60 Hz as a → 0 (Carson 1926)."""
    ref = REF["carson_low_frequency"]
    dz = complex(
        carson_correction_ohm_per_m(2.0, 0.0, frequency_hz=60.0, earth_resistivity_ohm_m=1e4)
    )
    assert dz.real * 1e3 == pytest.approx(ref["value_ohm_per_km"], rel=ref["rel_tol"])
    assert 2 * math.pi * 60.0 * MU_0_H_PER_M / 8 * 1e3 == pytest.approx(0.059218, rel=1e-5)


def test_carson_refuses_out_of_range() -> None:
    with pytest.raises(ModelError, match="complex_depth"):
        carson_correction_ohm_per_m(100.0, 0.0, frequency_hz=1e6, earth_resistivity_ohm_m=1.0)


def _sample_geometry(name: str) -> tuple[TowerGeometry, float]:
    from recordscan.physics.line import load_line

    line = load_line(LINES / name)
    assert line.geometry is not None
    return line.geometry, line.frequency_hz


@pytest.mark.parametrize(
    "name",
    [
        "ashcombe-brightwater.toml",
        "brightwater-corrow.toml",
        "corrow-dunhallow.toml",
        "dunhallow-elderby.toml",
    ],
)
def test_earth_models_agree_and_sequence_ranges(name: str) -> None:
    """Carson vs complex depth within a few % (Deri et al. 1981); ranges of common practice."""
    geo, f = _sample_geometry(name)
    a = line_constants(geo, frequency_hz=f, earth_model="carson")
    b = line_constants(geo, frequency_hz=f, earth_model="complex_depth")
    ref = REF["earth_models"]
    assert abs(a.z0_ohm_per_m - b.z0_ohm_per_m) / abs(a.z0_ohm_per_m) < ref["rel_tol_z0"]
    assert abs(a.z1_ohm_per_m - b.z1_ohm_per_m) / abs(a.z1_ohm_per_m) < ref["rel_tol_z1"]
    rng = REF["sequence_ranges"]
    lo, hi = rng["x0_over_x1"]
    assert lo <= a.x0_ohm_per_m / a.x1_ohm_per_m <= hi
    lo, hi = rng["c1_nf_per_km"]
    assert lo <= a.c1_f_per_m * 1e12 <= hi
    lo, hi = rng["c1_over_c0"]
    assert lo <= a.c1_f_per_m / a.c0_f_per_m <= hi


def test_shield_wires_by_kron_reduction_match_full_inverse() -> None:
    """Kron reduction equals inverting the full matrix and keeping the phase block (algebra:
    the Schur complement is the inverse of the corresponding block of the inverse)."""
    geo, f = _sample_geometry("ashcombe-brightwater.toml")
    reduced = line_constants(geo, frequency_hz=f)
    bare = line_constants(TowerGeometry(phases=geo.phases), frequency_hz=f)
    # shield wires raise C0 by a few per cent and lower X0 (common practice)
    assert 1.0 < reduced.c0_f_per_m / bare.c0_f_per_m < 1.15
    assert reduced.x0_ohm_per_m < bare.x0_ohm_per_m
    # full 5×5 potential matrix built independently from the image formula
    wires = geo.wires
    k = 1 / (2 * math.pi * EPSILON_0_F_PER_M)
    n = len(wires)
    p = np.empty((n, n))
    for i, wi in enumerate(wires):
        for j, wj in enumerate(wires):
            if i == j:
                p[i, j] = k * math.log(2 * wi.h_avg_m / wi.bundle.radius_eq_m)
            else:
                dd = math.hypot(wi.x_m - wj.x_m, wi.h_avg_m - wj.h_avg_m)
                di = math.hypot(wi.x_m - wj.x_m, wi.h_avg_m + wj.h_avg_m)
                p[i, j] = k * math.log(di / dd)
    c_full = np.linalg.inv(p)
    np.testing.assert_allclose(reduced.c_f_per_m, c_full[:3, :3], rtol=1e-10)


def test_sag_gives_average_height() -> None:
    """h_avg = h − 2/3·sag (parabolic sag, common practice)."""
    cond = Conductor(diameter_m=0.03, resistance_ohm_per_m=6e-5)
    b = Bundle(cond, n_sub=2, spacing_m=0.45)
    sagged = TowerGeometry(phases=tuple(Wire(x, 27.0, b, sag_m=15.0) for x in (-9, 0, 9)))
    level = TowerGeometry(phases=tuple(Wire(x, 17.0, b) for x in (-9, 0, 9)))
    a = line_constants(sagged, frequency_hz=60.0)
    c = line_constants(level, frequency_hz=60.0)
    np.testing.assert_allclose(a.z_ohm_per_m, c.z_ohm_per_m, rtol=1e-13)
    np.testing.assert_allclose(a.c_f_per_m, c.c_f_per_m, rtol=1e-13)


def test_bundle_equivalent_radius_closed_forms() -> None:
    """n = 2: √(r·s); n = 3: (r·s²)^(1/3); n = 4: 2^(1/8)·(r·s³)^(1/4) = 1.0905·(r·s³)^(1/4)."""
    r, s = 0.015, 0.45
    cond = Conductor(diameter_m=2 * r, resistance_ohm_per_m=0.0, gmr_m=0.012)
    assert Bundle(cond, 2, s).radius_eq_m == pytest.approx(math.sqrt(r * s), rel=1e-13)
    assert Bundle(cond, 3, s).radius_eq_m == pytest.approx((r * s * s) ** (1 / 3), rel=1e-13)
    assert Bundle(cond, 4, s).radius_eq_m == pytest.approx(1.0905 * (r * s**3) ** 0.25, rel=1e-4)
    assert Bundle(cond, 2, s).gmr_eq_m == pytest.approx(math.sqrt(0.012 * s), rel=1e-13)
    assert Bundle(cond, 4, s).resistance_ohm_per_m == 0.0


def test_from_sequence_round_trip_and_transposed() -> None:
    lc = LineConstants.from_sequence(2.0e-5, 3.4e-4, 12.5e-12, 2.5e-4, 1.1e-3, 7.5e-12, 60.0)
    assert lc.r1_ohm_per_m == pytest.approx(2.0e-5, rel=1e-12)
    assert lc.x1_ohm_per_m == pytest.approx(3.4e-4, rel=1e-12)
    assert lc.c1_f_per_m == pytest.approx(12.5e-12, rel=1e-12)
    assert lc.r0_ohm_per_m == pytest.approx(2.5e-4, rel=1e-12)
    assert lc.x0_ohm_per_m == pytest.approx(1.1e-3, rel=1e-12)
    assert lc.c0_f_per_m == pytest.approx(7.5e-12, rel=1e-12)
    assert lc.l1_h_per_m == pytest.approx(3.4e-4 / (2 * math.pi * 60), rel=1e-12)
    assert lc.cm_f_per_m == pytest.approx(5e-12 / 3, rel=1e-12)
    np.testing.assert_allclose(lc.l_h_per_m * 2 * math.pi * 60, lc.z_ohm_per_m.imag, rtol=1e-14)
    np.testing.assert_allclose(lc.r_ohm_per_m, lc.z_ohm_per_m.real, rtol=1e-14)
    assert lc.is_transposed
    with pytest.raises(ValueError):
        lc.z_ohm_per_m[0, 0] = 0  # read-only


def test_transposed_keeps_sequence_values_and_is_symmetric() -> None:
    geo, f = _sample_geometry("corrow-dunhallow.toml")
    lc = line_constants(geo, frequency_hz=f)
    lt = lc.transposed()
    for attr in ("r1_ohm_per_m", "x1_ohm_per_m", "c1_f_per_m", "r0_ohm_per_m", "c0_f_per_m"):
        assert getattr(lt, attr) == pytest.approx(getattr(lc, attr), rel=1e-12)
    z = lt.z_ohm_per_m
    assert np.allclose(np.diag(z), z[0, 0]) and np.allclose(z[~np.eye(3, dtype=bool)], z[0, 1])
    assert not lc.is_transposed and lt.is_transposed


@pytest.mark.parametrize(
    "make",
    [
        lambda: Conductor(diameter_m=-0.03, resistance_ohm_per_m=1e-4),
        lambda: Conductor(diameter_m=0.03, resistance_ohm_per_m=1e-4, gmr_m=0.02),
        lambda: Bundle(Conductor(diameter_m=0.03, resistance_ohm_per_m=1e-4), 2, 0.01),
        lambda: Wire(0.0, 10.0, Bundle(Conductor(0.03, 1e-4)), sag_m=12.0),
        lambda: TowerGeometry(
            phases=tuple(Wire(0.0, 20.0, Bundle(Conductor(0.03, 1e-4))) for _ in range(3))
        ),
    ],
)
def test_bad_geometry_is_a_model_error(make) -> None:
    with pytest.raises(ModelError):
        make()
