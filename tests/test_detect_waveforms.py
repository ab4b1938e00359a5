"""Hand-built three-phase waveforms with known instants, for the detector tests.

The waveforms follow derived circuit behaviour, not a simulator: a load flow, a phase-A fault
current with decaying DC offset, pole openings at natural current zeros, a square-wave arc
voltage in phase with a sinusoidal secondary-arc current, and after each extinction the
recovery voltage of a capacitively coupled open phase — the forced component leads the arc
current by 90° (i = C·dv/dt), plus the trapped charge left by the arc (a decaying offset, as a
voltage transformer drains it) or, on a compensated line, a free oscillation at f_n that beats
with the forced one. Instants are exact by construction.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pytest

from recordscan.core.record import AnalogChannel, Record, StatusChannel

V_LL = 500e3
V_PH = V_LL / np.sqrt(3.0)


@dataclass
class Scenario:
    """Settings of a hand-built single-pole trip on phase A."""

    f_hz: float = 60.0
    fs_hz: float = 10000.0
    duration_s: float = 1.5
    inception_s: float = 0.1
    load_a: float = 800.0
    fault_a: float = 12000.0
    trip_delay_s: float = 0.045
    remote_delay_s: float = 0.0
    arc_peak_v: float = 8000.0
    recovery_pu: float = 0.16
    extinction_after_s: float = 0.35
    restrikes_after_s: tuple[float, ...] = ()
    recovery_before_restrike_s: float = 0.012
    reclose_after_s: float | None = 0.9
    reclose_onto_fault: bool = False
    free_hz: float | None = None
    trapped_tau_s: float = 0.05
    noise_snr_db: float | None = None
    quantise_bits: int | None = None
    pole_status: bool = False
    aux_lag_s: float = 0.004
    arc_current_channel: bool = False
    cvt_transient: bool = False
    three_pole: bool = False
    second_phase_after_s: float | None = None
    seed: int = 11
    truth: dict[str, object] = field(default_factory=dict)


def _zero_after(t: np.ndarray, x: np.ndarray, t0: float) -> int:
    k0 = int(np.searchsorted(t, t0))
    s = np.sign(x[k0:])
    hit = np.flatnonzero(s[1:] * s[:-1] <= 0)
    return k0 + int(hit[0]) + 1


def build(sc: Scenario) -> tuple[Record, dict[str, object]]:
    """Build the record and its truth (instants in seconds from the first sample)."""
    w = 2 * np.pi * sc.f_hz
    n = int(sc.duration_s * sc.fs_hz)
    t = np.arange(n) / sc.fs_hz
    shift = {"A": 0.0, "B": -2 * np.pi / 3, "C": 2 * np.pi / 3}
    v = {p: np.sqrt(2) * V_PH * np.cos(w * t + shift[p]) for p in "ABC"}
    i = {p: np.sqrt(2) * sc.load_a * np.cos(w * t + shift[p] - 0.3) for p in "ABC"}
    tf = sc.inception_s
    k_f = int(np.searchsorted(t, tf))
    psi = 1.2
    on = t >= tf
    tau_dc = 0.04
    i_fault = (
        np.sqrt(2)
        * sc.fault_a
        * (np.sin(w * (t - tf) + psi) - np.sin(psi) * np.exp(-(t - tf) / tau_dc))
    )
    i["A"] = np.where(on, i["A"] + i_fault, i["A"])
    share = 0.12 * i_fault
    for p in "BC":
        i[p] = np.where(on, i[p] + share, i[p])
    v["A"] = np.where(on, 0.3 * v["A"] + 4000 * np.sign(i["A"]), v["A"])
    if sc.second_phase_after_s is not None:  # evolving fault: B joins, then three poles trip
        t2 = tf + sc.second_phase_after_s
        on2 = t >= t2
        i_b = np.sqrt(2) * sc.fault_a * (np.sin(w * (t - t2) + psi + shift["B"]))
        i["B"] = np.where(on2, i["B"] + i_b, i["B"])
        v["B"] = np.where(on2, 0.3 * v["B"], v["B"])
    if sc.three_pole or sc.second_phase_after_s is not None:
        for p in "ABC":
            k = _zero_after(t, i[p], tf + sc.trip_delay_s + 0.02 * (sc.second_phase_after_s or 0))
            i[p][k:] = 0.0
            v[p][k:] = 0.02 * v[p][k:]
        truth = {"inception_s": float(t[k_f])}
        return _record(sc, t, v, i, [], np.zeros(n)), truth
    # local opening at the first current zero after the contacts part
    k_lo = _zero_after(t, i["A"], tf + sc.trip_delay_s)
    y0, y1 = i["A"][k_lo - 1], i["A"][k_lo]
    t_lo = t[k_lo - 1] + (y0 / (y0 - y1) if y0 != y1 else 1.0) / sc.fs_hz  # the true zero
    t_ro = t_lo + sc.remote_delay_s
    k_ro = int(np.searchsorted(t, t_ro))
    i["A"][k_lo:] = 0.0
    for p in "BC":  # the remote infeed keeps a zero-sequence share until the far end opens
        i[p][k_ro:] -= share[k_ro:]
        i[p][k_lo:k_ro] -= 0.5 * share[k_lo:k_ro]
    # secondary arc: current leads the coupled forced voltage by 90°
    theta = 0.4
    i_arc = np.sin(w * t + theta)
    vf_pk = np.sqrt(2) * sc.recovery_pu * V_PH
    v_forced = -vf_pk * np.cos(w * t + theta)
    t_sa = max(t_lo, t_ro)
    k_sa = int(np.searchsorted(t, t_sa))

    def arc_v(k0: int, k1: int) -> np.ndarray:
        grow = 1.0 + 1.5 * (t[k0:k1] - t_sa)
        return sc.arc_peak_v * grow * np.sign(i_arc[k0:k1]) + 0.05 * v_forced[k0:k1]

    va = v["A"].copy()
    va[k_lo:k_sa] = 3000 * np.sign(i_arc[k_lo:k_sa])  # primary arc fed from the far end
    t_rc = None if sc.reclose_after_s is None else t_lo + sc.reclose_after_s
    k_end = n if t_rc is None else int(np.searchsorted(t, t_rc))
    # stretches: burn → (recover → restrike → burn)* → final recovery
    burn_start = k_sa
    restrikes: list[float] = []
    extinctions: list[float] = []
    plan = [*(t_sa + r for r in sc.restrikes_after_s), None]
    final: float | None = None
    final_ext = t_sa + sc.extinction_after_s
    for r_at in plan:
        t_ex_target = (r_at - sc.recovery_before_restrike_s) if r_at is not None else final_ext
        if t_ex_target >= t[k_end - 1]:
            va[burn_start:k_end] = arc_v(burn_start, k_end)
            burn_start = k_end
            break
        k_ex = _zero_after(t, i_arc, t_ex_target)
        va[burn_start:k_ex] = arc_v(burn_start, k_ex)
        t_ex = t[k_ex]
        extinctions.append(float(t_ex))
        v0 = va[k_ex - 1]
        dt = t[k_ex:k_end] - t_ex
        if sc.free_hz is None:
            rec = v_forced[k_ex:k_end] + (v0 - v_forced[k_ex]) * np.exp(-dt / sc.trapped_tau_s)
            if sc.cvt_transient:  # a decaying low-frequency ring, as a CVT's subsidence
                rec = rec + 0.4 * vf_pk * np.exp(-dt / 0.04) * np.sin(2 * np.pi * 12.0 * dt)
        else:
            wn = 2 * np.pi * sc.free_hz
            rec = v_forced[k_ex:k_end] + (v0 - v_forced[k_ex]) * np.cos(wn * dt) * np.exp(-dt / 1.0)
        if r_at is None:
            va[k_ex:k_end] = rec
            burn_start = k_end
            final = float(t_ex)
            break
        k_rs = int(np.searchsorted(t, t_ex + sc.recovery_before_restrike_s))
        va[k_ex:k_rs] = rec[: k_rs - k_ex]
        restrikes.append(float(t[k_rs]))
        burn_start = k_rs
    v["A"][k_lo:] = va[k_lo:]
    arc_i = np.zeros(n)
    # reclose
    if t_rc is not None:
        k_rc = k_end
        v["A"][k_rc:] = np.sqrt(2) * V_PH * np.cos(w * t[k_rc:])
        if sc.reclose_onto_fault:
            i["A"][k_rc:] = np.sqrt(2) * sc.fault_a * np.sin(w * (t[k_rc:] - t[k_rc]) + psi)
            v["A"][k_rc:] *= 0.3
            k_3p = _zero_after(t, i["A"], t[k_rc] + 0.06)
            for p in "ABC":
                i[p][k_3p:] = 0.0
            v["A"][k_3p:] = 0.0
        else:
            i["A"][k_rc:] = np.sqrt(2) * sc.load_a * np.cos(w * t[k_rc:] - 0.3)
    for k0, k1 in _burning(t, k_sa, k_end, extinctions, restrikes):
        arc_i[k0:k1] = 20 * np.sqrt(2) * i_arc[k0:k1]
    truth = {
        "inception_s": float(t[k_f]),
        "pole_open_s": float(t_lo),
        "remote_pole_open_s": float(t_ro),
        "arc_start_s": float(t_sa),
        "restrike_s": restrikes,
        "extinction_s": final,
        "reclose_s": None if t_rc is None else float(t[k_end]),
    }
    digital = []
    if sc.pole_status:
        for p in "ABC":
            closed = np.ones(n, dtype=bool)
            if p == "A":
                k_aux = int(np.searchsorted(t, t_lo + sc.aux_lag_s))
                closed[k_aux:] = False
                if t_rc is not None:
                    closed[int(np.searchsorted(t, t_rc - sc.aux_lag_s)) :] = True
            digital.append(StatusChannel(f"52{p}", closed, p, f"pole_{p.lower()}"))
    return _record(sc, t, v, i, digital, arc_i), truth


def _record(
    sc: Scenario,
    t: np.ndarray,
    v: dict[str, np.ndarray],
    i: dict[str, np.ndarray],
    digital: list[StatusChannel],
    arc_i: np.ndarray,
) -> Record:
    n = t.shape[0]
    rng = np.random.default_rng(sc.seed)
    if sc.noise_snr_db is not None:
        for p in "ABC":
            v[p] = v[p] + rng.normal(scale=V_PH * 10 ** (-sc.noise_snr_db / 20), size=n)
            i[p] = i[p] + rng.normal(scale=sc.load_a * 10 ** (-sc.noise_snr_db / 20), size=n)
    if sc.quantise_bits is not None:
        for key, full in (("v", 2.5 * np.sqrt(2) * V_PH), ("i", 2.5 * np.sqrt(2) * sc.fault_a)):
            lsb = 2 * full / 2**sc.quantise_bits
            table = v if key == "v" else i
            for p in "ABC":
                table[p] = np.round(table[p] / lsb) * lsb
    analog = [AnalogChannel(f"V{p}", v[p], "V", p, f"v_{p.lower()}") for p in "ABC"]
    analog += [AnalogChannel(f"I{p}", i[p], "A", p, f"i_{p.lower()}") for p in "ABC"]
    if sc.arc_current_channel:
        analog.append(AnalogChannel("IARC", arc_i, "A", None, "arc_i"))
    rec = Record(
        t_s=t,
        analog=tuple(analog),
        digital=tuple(digital),
        frequency_hz=sc.f_hz,
        station="Ashcombe",
        device="demo recorder",
        start_ns=1_780_000_000_000_000_000,
        trigger_ns=1_780_000_000_000_000_000 + int(sc.inception_s * 1e9),
    )
    return rec


def _burning(
    t: np.ndarray, k_sa: int, k_end: int, ext: list[float], rs: list[float]
) -> list[tuple[int, int]]:
    starts = [k_sa] + [int(np.searchsorted(t, r)) for r in rs]
    stops = [int(np.searchsorted(t, e)) for e in ext] + [k_end]
    return list(zip(starts, stops[: len(starts)], strict=True))


def test_builder_truth_is_consistent() -> None:
    rec, truth = build(Scenario(restrikes_after_s=(0.1,)))
    assert truth["inception_s"] < truth["pole_open_s"] < truth["extinction_s"] < truth["reclose_s"]
    assert len(truth["restrike_s"]) == 1
    k = int(np.searchsorted(rec.t_s, truth["pole_open_s"]))
    assert np.all(rec.analog_by_role("i_a").values[k : k + 100] == 0.0)


def draw_hand_built(k: int, rng: np.random.Generator) -> Scenario:
    """One random hand-built case for the accuracy sweep (invented settings, derived shapes)."""
    f = float(rng.choice([50.0, 60.0]))
    n_rs = int(rng.integers(0, 4))
    ext = float(rng.uniform(0.2, 0.6))
    # observable restrikes: 1–3 cycles of recovery before each, the recoveries in the first
    # 80 % of the burning time and at least 4 cycles apart
    rec_s = float(rng.uniform(1.0, 3.0)) / f
    starts = np.sort(rng.uniform(0.06, 0.8 * ext, n_rs))
    keep: list[float] = []
    for s in starts:
        if not keep or s - keep[-1] > 4.0 / f + rec_s:
            keep.append(float(s))
    compensated = bool(rng.random() < 0.35)
    return Scenario(
        f_hz=f,
        fs_hz=float(rng.choice([960.0, 1920.0, 4800.0, 10000.0, 20000.0])),
        extinction_after_s=ext,
        restrikes_after_s=tuple(keep),
        recovery_before_restrike_s=rec_s,
        recovery_pu=float(rng.uniform(0.05, 0.1)) if compensated else 0.16,
        free_hz=float(rng.uniform(0.75, 0.92)) * f if compensated else None,
        noise_snr_db=float(rng.choice([40.0, 50.0, 60.0])),
        quantise_bits=16,
        cvt_transient=bool(rng.random() < 0.4),
        remote_delay_s=float(rng.choice([0.0, 0.0, 0.03])),
        seed=1000 + k,
    )


@pytest.mark.accuracy
def test_hand_built_sweep_accuracy() -> None:
    """120 random hand-built cases: extinction error, observable-restrike precision/recall.

    Every restrike here follows 1–3 cycles of recovery (observable, as defined in
    tests/test_detect_accuracy.py). Run: ``.venv/bin/python -m pytest -m accuracy -s
    tests/test_detect_waveforms.py``.
    """
    from recordscan.analysis import analyse

    rng = np.random.default_rng(2026)
    errs: list[float] = []
    missed = tp = fp = fn = 0
    t_err: list[float] = []
    worst: list[str] = []
    for k in range(120):
        sc = draw_hand_built(k, rng)
        rec, truth = build(sc)
        a = analyse(rec)
        f = sc.f_hz
        if truth["extinction_s"] is not None:
            if a.extinction_s is None:
                missed += 1
                worst.append(f"case {k}: missed {sc}")
            else:
                e = (a.extinction_s - float(truth["extinction_s"])) * f
                errs.append(e)
                if abs(e) > 1:
                    worst.append(
                        f"case {k}: {e:+.2f} cycles (fs {sc.fs_hz:.0f}, free {sc.free_hz})"
                    )
        want = list(truth["restrike_s"])
        got = [e.t_s for e in a.restrikes]
        used: set[int] = set()
        for g in got:
            j = next((i for i, w in enumerate(want) if i not in used and abs(g - w) < 1 / f), None)
            if j is None:
                fp += 1
                worst.append(f"case {k}: spurious restrike at {g:.4f} s (truth {want})")
            else:
                used.add(j)
                tp += 1
                t_err.append(abs(g - want[j]) * f)
        fn += len(want) - len(used)
    ae = np.abs(np.array(errs))
    within = float(np.sum(ae <= 1.0)) / (len(errs) + missed)
    prec, rec_ = tp / max(tp + fp, 1), tp / max(tp + fn, 1)
    print(
        f"\nhand-built sweep: extinction within one cycle {within:.1%} of {len(errs) + missed} "
        f"(median {np.median(ae):.2f}, p95 {np.percentile(ae, 95):.2f} cycles, missed {missed}); "
        f"observable restrikes precision {prec:.2f}, recall {rec_:.2f} (tp {tp}, fp {fp}, "
        f"fn {fn}; time error median {np.median(t_err) if t_err else float('nan'):.3f} cycle)"
    )
    for line in worst:
        print("  ", line)
    assert within >= 0.95
    assert prec >= 0.9 and rec_ >= 0.9
