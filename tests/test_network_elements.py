"""Companion models of the network solver against derived closed forms.

Trapezoidal rule (Dommel, "Digital computer solution of electromagnetic transients in
single- and multiphase networks", IEEE Trans. PAS-88(4), 1969): in sinusoidal steady state an
inductance L integrated with step dt behaves exactly as the reactance
(2L/dt)·tan(ω·dt/2), a capacitance C as the susceptance (2C/dt)·tan(ω·dt/2) (derived by
substituting z = exp(jω·dt) into the difference equation); both tend to ωL, ωC with a
relative error ≈ (ω·dt)²/12.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest

from recordscan.errors import ModelError
from recordscan.physics.network.elements import (
    CLARKE_T,
    Block,
    NetlistBuilder,
    TravellingWaveSegment,
    balanced_matrix,
    block_companion,
    modal_parameters,
    tw_phasor_admittance,
)

F_HZ = 50.0
W = 2 * math.pi * F_HZ
DT = 20e-6


def _one_port(builder_fn: Callable[[NetlistBuilder, np.ndarray], int]) -> Block:
    b = NetlistBuilder()
    n = b.add_nodes(1)
    builder_fn(b, n)
    return b.blocks[0]


def _run(block: Block, u_amp: complex, y_phasor: complex, n_steps: int) -> float:
    """Drive a one-port with u = Re(U e^{jωt}); largest deviation from Re(Y U e^{jωt})."""
    g, bb, aa = block_companion(block, DT)
    t_prev = -DT
    u_prev = (u_amp * np.exp(1j * W * t_prev)).real
    i_prev = (y_phasor * u_amp * np.exp(1j * W * t_prev)).real
    worst = 0.0
    for n in range(n_steps):
        t = n * DT
        u = (u_amp * np.exp(1j * W * t)).real
        h = bb[0, 0] * u_prev + aa[0, 0] * i_prev
        i = g[0, 0] * u + h
        worst = max(worst, abs(i - (y_phasor * u_amp * np.exp(1j * W * t)).real))
        u_prev, i_prev = u, i
    return worst


def test_rl_companion_steady_state_is_the_warped_phasor() -> None:
    r, l_h = 2.0, 0.1
    blk = _one_port(lambda b, n: b.add_rl(n, [-1], [[r]], [[l_h]]))
    x_d = 2 * l_h / DT * math.tan(W * DT / 2)
    i_amp = abs(1.0 / complex(r, x_d)) * 1000.0
    dev = _run(blk, 1000.0, 1.0 / complex(r, x_d), 5000)
    assert dev < 1e-9 * i_amp
    # and the warp is the (ω·dt)²/12 of the trapezoidal rule
    assert x_d / (W * l_h) - 1 == pytest.approx((W * DT) ** 2 / 12, rel=1e-3)


def test_c_companion_steady_state_is_the_warped_phasor() -> None:
    c = 1e-6
    blk = _one_port(lambda b, n: b.add_c(n, [-1], [[c]]))
    b_d = 2 * c / DT * math.tan(W * DT / 2)
    dev = _run(blk, 1000.0, 1j * b_d, 5000)
    assert dev < 1e-9 * b_d * 1000.0
    assert b_d / (W * c) - 1 == pytest.approx((W * DT) ** 2 / 12, rel=1e-3)


def test_resistor_companion_has_no_memory() -> None:
    blk = _one_port(lambda b, n: b.add_g(n, [-1], [[0.25]]))
    g, bb, aa = block_companion(blk, DT)
    assert g[0, 0] == 0.25 and not bb.any() and not aa.any()


def test_balanced_matrix_diagonalised_by_symmetrical_components() -> None:
    # Fortescue (1918): A⁻¹·Z·A = diag(Z0, Z1, Z2) with Z2 = Z1 for a transposed element.
    z1, z0 = complex(0.03, 0.33), complex(0.25, 1.0)
    a = np.exp(2j * np.pi / 3)
    fort = np.array([[1, 1, 1], [1, a * a, a], [1, a, a * a]])
    seq = np.linalg.inv(fort) @ balanced_matrix(z1, z0) @ fort
    np.testing.assert_allclose(np.diag(seq), [z0, z1, z1], rtol=1e-12)
    assert np.max(np.abs(seq - np.diag(np.diag(seq)))) < 1e-12


def test_clarke_transform_gives_modal_parameters() -> None:
    np.testing.assert_allclose(CLARKE_T.T @ CLARKE_T, np.eye(3), atol=1e-15)
    r, lm, cm = modal_parameters(
        balanced_matrix(0.03e-3, 0.25e-3),
        balanced_matrix(0.87e-6, 2.7e-6),
        balanced_matrix(12.5e-12, 7.5e-12),
    )
    np.testing.assert_allclose(r, [0.25e-3, 0.03e-3, 0.03e-3], rtol=1e-12)
    np.testing.assert_allclose(lm, [2.7e-6, 0.87e-6, 0.87e-6], rtol=1e-12)
    np.testing.assert_allclose(cm, [7.5e-12, 12.5e-12, 12.5e-12], rtol=1e-12)


def test_untransposed_line_refused_by_travelling_wave_model() -> None:
    c = balanced_matrix(12.5e-12, 7.5e-12)
    c[0, 1] = c[1, 0] = c[0, 1] * 1.2
    with pytest.raises(ModelError, match="transposed"):
        modal_parameters(balanced_matrix(0.03e-3, 0.25e-3), balanced_matrix(0.87e-6, 2.7e-6), c)


def test_lossless_bergeron_two_port_matches_telegrapher_solution() -> None:
    # Lossless line (telegrapher's equations): Y11 = −j·cot(βℓ)/Z, Y12 = j/(Z·sin(βℓ)).
    z = np.array([500.0, 280.0, 280.0])
    tau = np.array([1.2e-3, 1.0e-3, 1.0e-3])
    seg = TravellingWaveSegment(
        k=np.arange(3), m=np.arange(3, 6), z_surge_ohm=z, r_total_ohm=np.zeros(3), tau_s=tau
    )
    y = tw_phasor_admittance(seg, W)
    ym = np.array([CLARKE_T.T @ y[:3, :3] @ CLARKE_T, CLARKE_T.T @ y[:3, 3:] @ CLARKE_T])
    bl = W * tau
    np.testing.assert_allclose(np.diag(ym[0]), -1j / (z * np.tan(bl)), rtol=1e-12)
    np.testing.assert_allclose(np.diag(ym[1]), 1j / (z * np.sin(bl)), rtol=1e-12)
