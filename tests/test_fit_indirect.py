"""Indirect arc-parameter fit from terminal records and the line description.

External checks:
- the open-phase circuit without an arc reproduces the capacitive-divider recovery voltage
  of a transposed line, ``V_open/V_phase = (C1 − C0)/(2·C1 + C0)`` (derived from the charge
  balance of the isolated conductor; the same ratio is the classic result used by Kimbark,
  "Suppression of ground-fault arcs on single-pole-switched EHV lines by shunt reactors",
  IEEE Trans. PAS-83, 1964 — from memory); value 0.153846 for C0/C1 = 0.6;
- the reactor matrix Γ of the time-domain bank, ``Y(jω) = Γ/(jω + 1/T)``, equals the
  complex admittance matrix ``y_p·I − y_p²/(3·y_p + y_n)·J`` of a four-legged bank
  (derived; computed independently by ``FourLeggedReactor.admittance_matrix_siemens``);
- the arc current estimated from the terminal voltages by the circuit identity
  ``i_arc = −d/dt(Σ_j C_kj·v_j)`` equals the true arc current of the time-domain network
  simulator (an independent solver: pi sections, sources, breakers, compensation method);
- round trip: a record simulated by the network simulator with a known arc, passed through
  the recorder model (anti-alias filter, 2.4 kHz, noise, 16-bit quantisation), is fitted
  and the elongation rate and the final extinction instant are recovered.
"""

from __future__ import annotations

import json
import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from recordscan.errors import FitError
from recordscan.fit import IndirectFitOptions, fit_indirect, fit_record
from recordscan.fit.circuit import (
    _gamma,
    estimate_arc_current,
    open_phase_circuit,
    simulate_open_phase,
)
from recordscan.physics.arc import ArcParameters, LinearElongation
from recordscan.physics.line import LineDescription
from recordscan.physics.line_constants import LineConstants
from recordscan.physics.reactors import FourLeggedReactor
from recordscan.synth import simulate
from recordscan.synth.generate import resolve_line
from recordscan.synth.scenario import (
    ArcSettings,
    BreakerSettings,
    FaultSettings,
    InlineLine,
    InstrumentSettings,
    LineSettings,
    LoadSettings,
    OutputSettings,
    ReactorSettings,
    Scenario,
)

# 400 kV class sequence data per metre (common practice, the simulator's sweep class)
R1, L1, C1 = 0.028e-3, 0.88e-6, 13.29e-12
R0, L0, C0 = 0.24e-3, 2.8e-6, 7.62e-12


def _scenario(
    *,
    u0: float = 1000.0,
    tau0: float = 0.8e-3,
    alpha: float = -0.7,
    v: float = 8.0,
    dead_s: float = 1.2,
    rate_hz: float = 2400.0,
    snr_db: float | None = 50.0,
    kind: str = "single_phase",
    seed: int = 4,
    ends: tuple[str, ...] = ("local",),
) -> Scenario:
    f = 50.0
    w = 2 * math.pi * f
    line = InlineLine(
        name="Corrow–Dunhallow 400 kV (test)",
        voltage_v=400e3,
        frequency_hz=f,
        length_m=200e3,
        r1_ohm_per_m=R1,
        x1_ohm_per_m=w * L1,
        c1_f_per_m=C1,
        r0_ohm_per_m=R0,
        x0_ohm_per_m=w * L0,
        c0_f_per_m=C0,
        local_station="Corrow",
        remote_station="Dunhallow",
    )
    return Scenario(
        name="indirect-test",
        line=LineSettings(inline=line),
        seed=seed,
        arc=ArcSettings(
            u0_v_per_m=u0,
            r0_ohm_per_m=0.02,
            tau0_s=tau0,
            alpha=alpha,
            l0_m=3.0,
            elongation="linear",
            elongation_speed_m_per_s=v,
        ),
        breaker=BreakerSettings(dead_time_s=dead_s),
        fault=FaultSettings(kind=kind, phases=("A",) if kind != "none" else ()),
        load=LoadSettings(angle_deg=5.0),
        instruments=InstrumentSettings(
            vt="ideal",
            rate_hz=rate_hz,
            snr_db=snr_db,
            record_length_s=0.15 + dead_s + 0.3,
            pre_fault_s=0.1,
        ),
        reactor_local=ReactorSettings(mode="none"),
        reactor_remote=ReactorSettings(mode="none"),
        output=OutputSettings(ends=ends, values="primary"),
    )


@pytest.fixture(scope="module")
def event() -> object:
    return simulate(_scenario())


def _transposed_line(length_m: float = 200e3) -> LineDescription:
    w = 2 * math.pi * 50.0
    consts = LineConstants.from_sequence(R1, w * L1, C1, R0, w * L0, C0, 50.0)
    return LineDescription(
        name="test",
        from_station="Corrow",
        to_station="Dunhallow",
        voltage_v=400e3,
        frequency_hz=50.0,
        length_m=length_m,
        transposed=True,
        constants=consts,
    )


def test_capacitive_divider_recovery_voltage() -> None:
    # REFERENCE: derived charge balance of an isolated conductor of a transposed line,
    # V_open/V_ph = (C1 − C0)/(2·C1 + C0) = 0.153846 for C0/C1 = 0.6 (check value [DER]).
    w = 2 * math.pi * 50.0
    consts = LineConstants.from_sequence(R1, w * L1, 10e-12, R0, w * L0, 6e-12, 50.0)
    line = LineDescription(
        name="t", from_station="a", to_station="b", voltage_v=400e3, frequency_hz=50.0,
        length_m=150e3, transposed=True, constants=consts,
    )  # fmt: skip
    circ = open_phase_circuit(line, "A")
    t = np.arange(0.0, 0.2, 20e-6)
    vp = 400e3 * math.sqrt(2.0 / 3.0)
    vb = vp * np.cos(w * t - 2 * math.pi / 3)
    vc = vp * np.cos(w * t + 2 * math.pi / 3)
    b = circ.c_f[0, 1] * vb + circ.c_f[0, 2] * vc
    v0 = -b[0] / circ.c_self_f
    resp = simulate_open_phase(
        t, b, np.zeros_like(t), circ, params=ArcParameters(), law=LinearElongation(0.0),
        t_elongation_s=0.0, v0_v=v0, g0_siemens=0.0,
    )  # fmt: skip
    amp = float(np.max(np.abs(resp.v_v[t > 0.1])))
    assert amp / vp == pytest.approx(0.153846, rel=1e-4)
    assert resp.extinction_s is None  # no arc: nothing to go out


@pytest.mark.parametrize("x_n", [0.0, 450.0])
def test_reactor_matrix_matches_complex_admittance(x_n: float) -> None:
    # REFERENCE: derived, Y(s) = Γ/(s + 1/T) for phase and neutral reactors of one Q;
    # compared with FourLeggedReactor.admittance_matrix_siemens (y_p·I − y_p²/(3y_p + y_n)·J)
    w = 2 * math.pi * 60.0
    q = 300.0
    bank = FourLeggedReactor(1010.0, x_n, q)
    y_ref = bank.admittance_matrix_siemens()
    gam = _gamma(1010.0, x_n, w)
    y_time = gam / (1j * w + w / q)
    np.testing.assert_allclose(y_time, y_ref, rtol=1e-10, atol=1e-15)


def test_estimated_arc_current_matches_the_simulator() -> None:
    # REFERENCE: circuit identity i_arc = −d/dt(Σ C_kj v_j) (derived), checked against the
    # network simulator's own arc current (independent time-domain solver)
    sc = _scenario(snr_db=None, dead_s=0.5, v=10.0)
    ev = simulate(sc, keep_raw=True)
    raw = ev.raw
    tr = raw.truth
    line = resolve_line(sc)
    circ = open_phase_circuit(line, "A")
    t = np.asarray(raw.t_s)
    v_avg = 0.5 * (np.asarray(raw.v_line_v[0]) + np.asarray(raw.v_line_v[1]))
    fc = 120.0  # below the open conductor's standing-wave resonances (lumped model)
    i_est = estimate_arc_current(t, v_avg, circ, t_ref_s=tr.inception_s, cutoff_hz=fc)
    from recordscan.fit.circuit import _lowpass

    i_true = _lowpass(np.asarray(raw.arc_i_a), fs_hz=1 / (t[1] - t[0]), cutoff_hz=fc)
    closes = [x for x in tr.reclose_s.values() if x is not None]
    stop = tr.extinction_s if tr.extinction_s is not None else min(closes)
    sel = (t > tr.secondary_arc_start_s + 0.04) & (t < stop - 0.02)
    assert sel.sum() > 1000
    rms_true = float(np.sqrt(np.mean(i_true[sel] ** 2)))
    err = float(np.sqrt(np.mean((i_est[sel] - i_true[sel]) ** 2)))
    assert 10.0 < rms_true < 200.0
    assert err / rms_true < 0.03, err / rms_true  # measured 0.9 %


def test_round_trip_recovers_elongation_rate_and_extinction(event: object) -> None:
    # REFERENCE: truth of the simulated event (network simulator, recorder model at 2.4 kHz,
    # 50 dB noise, 16-bit quantisation); floors of the task: rate ±25 %, extinction ±1 cycle
    ev = event
    tr = ev.truth
    assert tr["extinction_s"] is not None and not tr["restrike_s"]
    res = fit_indirect(ev.records["local"], resolve_line(ev.scenario))
    assert res.method == "indirect" and res.period == "secondary"
    assert res.success, res.message
    assert res.value("v_m_per_s") == pytest.approx(8.0, rel=0.25)
    assert res.extinction_s == pytest.approx(tr["extinction_s"], abs=0.02)
    assert res.value("u0_v_per_m") == pytest.approx(1000.0, rel=0.25)
    assert res.estimates["l0_m"].status == "held at prior"
    assert res.estimates["r0_ohm_per_m"].status == "held at prior"
    c = res.curves
    n = len(c["t_s"])
    for key in ("i_a", "u_measured_v", "u_fitted_v", "g_measured_siemens", "g_fitted_siemens",
                "l_m"):  # fmt: skip
        assert len(c[key]) == n
    # the fitted length follows the linear law from l0
    assert c["l_m"][0] == pytest.approx(3.0, abs=0.5)


def test_record_without_secondary_arc_is_a_fit_error() -> None:
    sc = _scenario(kind="none", dead_s=0.3)
    ev = simulate(sc)
    with pytest.raises(FitError, match="no secondary arc"):
        fit_indirect(ev.records["local"], resolve_line(sc))


def test_terminal_record_without_line_asks_for_it(event: object) -> None:
    with pytest.raises(FitError, match="line description"):
        fit_record(event.records["local"])


def test_unknown_law_is_refused(event: object) -> None:
    with pytest.raises(FitError, match="elongation law"):
        fit_indirect(
            event.records["local"],
            resolve_line(event.scenario),
            options=IndirectFitOptions(law="spiral"),
        )


_LINE_TOML = """schema = 1
name = "Corrow–Dunhallow 400 kV (test)"
from_station = "Corrow"
to_station = "Dunhallow"
voltage_kv = 400.0
frequency_hz = 50.0
length_km = 200.0

[sequence]
r1_ohm_per_km = {r1}
x1_ohm_per_km = {x1}
c1_nf_per_km = {c1}
r0_ohm_per_km = {r0}
x0_ohm_per_km = {x0}
c0_nf_per_km = {c0}
"""


def test_cli_fit_with_line_json(event: object, tmp_path: Path, capsys: object) -> None:
    from recordscan.cli.main import main
    from recordscan.synth import write_event

    w = 2 * math.pi * 50.0
    line_path = tmp_path / "line.toml"
    line_path.write_text(
        _LINE_TOML.format(
            r1=R1 * 1e3, x1=w * L1 * 1e3, c1=C1 * 1e12, r0=R0 * 1e3, x0=w * L0 * 1e3,
            c0=C0 * 1e12,
        ),
        encoding="utf-8",
    )  # fmt: skip
    files = write_event(event, tmp_path)
    cfg = next(p for p in files if p.suffix == ".cfg")
    with pytest.raises(SystemExit) as exc:
        main(["fit", str(cfg), "--line", str(line_path), "--json"])
    assert exc.value.code == 0
    out = capsys.readouterr().out  # type: ignore[attr-defined]
    d = json.loads(out.strip().splitlines()[-1])
    assert d["method"] == "indirect"
    for key in ("u0_v_per_m", "r0_ohm_per_m", "tau0_s", "alpha", "l0_m", "v_m_per_s"):
        assert key in d and f"{key}_stderr" in d and f"{key}_status" in d
    assert d["elongation_law"] == "linear"
    assert d["success"] is True
    assert d["extinction_s"] == pytest.approx(event.truth["extinction_s"], abs=0.02)
    # bad line path: one-line error, exit code 2
    with pytest.raises(SystemExit) as exc:
        main(["fit", str(cfg), "--line", str(tmp_path / "missing.toml")])
    assert exc.value.code == 2


def test_fit_figure_draws_indirect_curves(event: object) -> None:
    from recordscan.plot.fit import plot_fit

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        res = fit_indirect(event.records["local"], resolve_line(event.scenario))
    fig = plot_fit(res)
    assert len(fig.axes) == 4
    import matplotlib.pyplot as plt

    plt.close(fig)


def test_fit_command_attaches_the_fit_to_a_stored_record(tmp_path: Path) -> None:
    """scan --db stores the record; fit --db attaches the secondary-arc fit; an unknown
    record is refused with a one-line hint (exit 2)."""
    import subprocess
    import sys

    root = Path(__file__).resolve().parents[1]
    staged = root / "sample_records" / "CD345-20261020-1010-staged.cfg"
    db = tmp_path / "arcs.sqlite"

    def run(*args: str) -> subprocess.CompletedProcess[str]:
        return subprocess.run(
            [sys.executable, "-m", "recordscan.cli", *args],
            cwd=root,
            capture_output=True,
            text=True,
            timeout=300,
        )

    refused = run("fit", str(staged), "--db", str(db))
    assert refused.returncode == 2 and "store the record first" in refused.stderr
    assert refused.stderr.strip().count("\n") == 0
    assert run("scan", str(staged), "--db", str(db)).returncode == 0
    ok = run("fit", str(staged), "--db", str(db))
    assert ok.returncode == 0, ok.stderr
    from recordscan.fleet.store import open_store

    with open_store(str(db)) as store:
        fits = store.fits(None)
    assert len(fits) == 1
