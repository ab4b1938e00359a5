"""Fault location against a derived circuit: two sources, a line, a phase-A-to-ground fault
through a resistance, with load flow — solved exactly with the sequence networks
(Fortescue 1918; the series connection of the three sequence networks for a single-line-to-
ground fault, e.g. Grainger & Stevenson, *Power System Analysis*, 1994 — chapter from
memory)."""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.detect.locate import takagi_distance_pu, two_ended_distance_pu
from recordscan.signal.sequence import phase_components


def _slg(m: float, rf: float, *, homogeneous: bool, delta_deg: float = 15.0) -> dict:
    """Phasors at both ends for an AG fault at per-unit distance m (derived circuit)."""
    ang = np.deg2rad(85.0)
    z1l = 100.0 * np.exp(1j * ang)
    z0l = 300.0 * np.exp(1j * np.deg2rad(80.0))
    s_ang = ang if homogeneous else np.deg2rad(70.0)
    z1s, z0s = 20.0 * np.exp(1j * s_ang), 25.0 * np.exp(1j * s_ang)
    z1r, z0r = 30.0 * np.exp(1j * ang), 40.0 * np.exp(1j * ang)
    if homogeneous:  # same X/R everywhere in both sequence networks
        z0l = 300.0 * np.exp(1j * ang)
    e_s = 500e3 / np.sqrt(3)
    e_r = e_s * np.exp(-1j * np.deg2rad(delta_deg))
    i_load = (e_s - e_r) / (z1s + z1l + z1r)
    v_pre_f = e_s - (z1s + m * z1l) * i_load
    zs = {1: (z1s, z1l, z1r), 2: (z1s, z1l, z1r), 0: (z0s, z0l, z0r)}
    zth = {}
    cs = {}
    for k, (a, line, b) in zs.items():
        left, right = a + m * line, b + (1 - m) * line
        zth[k] = left * right / (left + right)
        cs[k] = right / (left + right)  # share of the fault current from S
    i_f1 = v_pre_f / (zth[1] + zth[2] + zth[0] + 3 * rf)
    i_s = {k: cs[k] * i_f1 for k in (0, 1, 2)}
    i_r = {k: (1 - cs[k]) * i_f1 for k in (0, 1, 2)}
    v_s = {1: e_s - z1s * (i_load + i_s[1]), 2: -z1s * i_s[2], 0: -z0s * i_s[0]}
    v_r = {1: e_r - z1r * (-i_load + i_r[1]), 2: -z1r * i_r[2], 0: -z0r * i_r[0]}
    ia, ib, ic = phase_components(i_s[0], i_s[1] + i_load, i_s[2])
    va, _, _ = phase_components(v_s[0], v_s[1], v_s[2])
    return {
        "va": va,
        "ia": ia,
        "ir": ia + ib + ic,
        "dia": ia - i_load,
        "z1l": z1l,
        "z0l": z0l,
        "v2s": v_s[2],
        "i2s": i_s[2],
        "v2r": v_r[2],
        "i2r": i_r[2],
    }


@pytest.mark.parametrize("m", [0.1, 0.35, 0.8])
@pytest.mark.parametrize("rf", [0.0, 10.0, 50.0])
def test_takagi_exact_in_homogeneous_system(m: float, rf: float) -> None:
    # Takagi et al., IEEE Trans. PAS 1982 (volume from memory): with the superimposed current
    # in phase with the fault current (homogeneous system) the reactance method is exact
    # despite load flow and RF (derived).
    c = _slg(m, rf, homogeneous=True)
    got = takagi_distance_pu(c["va"], c["ia"], c["ir"], c["dia"], z1_ohm=c["z1l"], z0_ohm=c["z0l"])
    assert float(got) == pytest.approx(m, abs=1e-9)


def test_takagi_error_small_in_nonhomogeneous_system() -> None:
    c = _slg(0.35, 20.0, homogeneous=False)
    got = takagi_distance_pu(c["va"], c["ia"], c["ir"], c["dia"], z1_ohm=c["z1l"], z0_ohm=c["z0l"])
    assert abs(float(got) - 0.35) < 0.05  # non-zero but bounded: current-distribution angle
    # a plain reactance method without the delta current is worse under load and RF
    plain = takagi_distance_pu(c["va"], c["ia"], c["ir"], c["ia"], z1_ohm=c["z1l"], z0_ohm=c["z0l"])
    assert abs(float(plain) - 0.35) > abs(float(got) - 0.35)


@pytest.mark.parametrize("m", [0.2, 0.5, 0.9])
def test_two_ended_negative_sequence_exact(m: float) -> None:
    # Novosel et al., IEEE Trans. Power Delivery 1996 (from memory):
    # |V2S − m·Z2·I2S| = |V2R − (1 − m)·Z2·I2R| holds exactly (derived), independent of the
    # phase reference of either end.
    c = _slg(m, 30.0, homogeneous=False)
    rot = np.exp(1j * 0.7)  # the remote record's own (unsynchronised) phase reference
    got = two_ended_distance_pu(c["v2s"], c["i2s"], c["v2r"] * rot, c["i2r"] * rot, z2_ohm=c["z1l"])
    assert got == pytest.approx(m, abs=1e-9)
