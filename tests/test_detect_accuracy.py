"""Accuracy harness (issue 4): a randomised corpus from the simulator (recordscan.synth — the
network solver, arc model and instrument models, an independent implementation), analysed
by recordscan.analysis and compared with the simulator's truth.

Run: ``.venv/bin/python -m pytest -m accuracy -s tests/test_detect_accuracy.py``
(RECORDSCAN_ACCURACY_N overrides the corpus size, default 150).
Floors (issue 4): final extinction within one power-frequency cycle in ≥ 95 % of the events
that have one; outcome and faulted phase right in ≥ 99 %; no single-pole chain reported on a
record without one.
"""

from __future__ import annotations

import os
from collections import Counter

import numpy as np
import pytest

from recordscan.analysis import analyse


def _line_of(sc):  # type: ignore[no-untyped-def]
    """The scenario's line description with the reactor banks the simulator used."""
    from recordscan.physics.reactors import FourLeggedReactor
    from recordscan.synth.generate import _reactor_spec, resolve_line

    line = resolve_line(sc)
    banks = []
    for setting, own in (
        (sc.reactor_local, line.reactor_from),
        (sc.reactor_remote, line.reactor_to),
    ):
        spec = _reactor_spec(setting, own, line.voltage_v)
        banks.append(
            None
            if spec is None
            else FourLeggedReactor(
                x_phase_ohm=spec.x_phase_ohm,
                x_neutral_ohm=spec.x_neutral_ohm,
                quality_factor=spec.q_factor,
            )
        )
    return line.with_reactors(*banks)


def _run(n: int, seed: int) -> dict:
    from recordscan.synth import simulate
    from recordscan.synth.sweep import draw_scenarios

    rows = []
    for sc in draw_scenarios(n, seed=seed):
        ev = simulate(sc)
        truth = ev.truth
        rec = ev.records["local"]
        a = analyse(rec, line=_line_of(sc))
        rows.append((sc, truth, rec, a))
    return {"rows": rows}


@pytest.mark.accuracy
def test_scan_accuracy_on_simulated_corpus() -> None:
    n = int(os.environ.get("RECORDSCAN_ACCURACY_N", "150"))
    rows = _run(n, seed=2026)["rows"]
    confusion: Counter = Counter()
    ext_err_cycles: list[float] = []
    ext_missing = 0
    ext_false = 0
    phase_ok = phase_n = 0
    outcome_ok = outcome_n = 0
    false_chain = 0
    tp = fp = fn = 0
    fails: list[str] = []
    for sc, truth, rec, a in rows:
        f = rec.frequency_hz
        confusion[(truth["event"], a.event)] += 1
        if truth["event"] != "single_pole_trip":
            if a.event == "single_pole_trip":
                false_chain += 1
                fails.append(f"{sc.name}: chain reported on {truth['event']}")
            continue
        phase_n += 1
        phase_ok += a.faulted_phase == truth["faulted_phase"]
        if a.event != "single_pole_trip":
            fails.append(f"{sc.name}: {a.event} ({a.classification.detail})")
            continue
        outcome_n += 1
        outcome_ok += a.reclose is not None and a.reclose.outcome == truth["outcome"]
        if a.reclose is None or a.reclose.outcome != truth["outcome"]:
            fails.append(
                f"{sc.name}: outcome {a.reclose and a.reclose.outcome} vs {truth['outcome']}"
            )
        te = truth["extinction_s"]
        if te is not None:
            if a.extinction_s is None:
                ext_missing += 1
                fails.append(f"{sc.name}: extinction missed ({a.warnings[:1]})")
            else:
                err = (a.extinction_s - te) * f
                ext_err_cycles.append(err)
                if abs(err) > 1:
                    fails.append(f"{sc.name}: extinction off by {err:+.2f} cycles")
        elif a.extinction_s is not None:
            ext_false += 1
            fails.append(f"{sc.name}: extinction reported, truth none")
        got = [e.t_s for e in a.restrikes]
        want = list(truth.get("restrike_s") or [])
        used = set()
        for g in got:
            j = next((k for k, w in enumerate(want) if k not in used and abs(g - w) < 1 / f), None)
            if j is None:
                fp += 1
            else:
                used.add(j)
                tp += 1
        fn += len(want) - len(used)
    errs = np.abs(np.array(ext_err_cycles)) if ext_err_cycles else np.array([np.inf])
    with_ext = len(ext_err_cycles) + ext_missing
    within = float(np.sum(errs <= 1.0)) / max(with_ext, 1)
    print(f"\ncorpus: {len(rows)} events; confusion (truth, found): {dict(confusion)}")
    print(
        f"extinction: n={with_ext}, within one cycle {within:.1%}, median "
        f"{np.median(errs):.3f} cycles, p95 {np.percentile(errs, 95):.3f} cycles, missed "
        f"{ext_missing}, false {ext_false}"
    )
    print(f"restrikes: precision {tp / max(tp + fp, 1):.2f}, recall {tp / max(tp + fn, 1):.2f}")
    print(f"faulted phase {phase_ok}/{phase_n}, outcome {outcome_ok}/{outcome_n}")
    print(f"single-pole chains on records without one: {false_chain}")
    for line in fails:
        print("  ", line)
    assert false_chain == 0
    assert within >= 0.95
    assert phase_ok >= 0.99 * phase_n
    assert outcome_ok >= 0.99 * outcome_n
