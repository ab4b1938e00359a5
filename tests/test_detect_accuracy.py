"""Accuracy harness (issue 4): a randomised corpus from the simulator (recordscan.synth — the
network solver, arc model and instrument models, an independent implementation), analysed
by recordscan.analysis and compared with the simulator's truth.

Run: ``.venv/bin/python -m pytest -m accuracy -s tests/test_detect_accuracy.py``
(RECORDSCAN_ACCURACY_N overrides the corpus size, default 150; RECORDSCAN_ACCURACY_SEED the
corpus seed, default 2026 — check a second seed before claiming a result;
RECORDSCAN_ACCURACY_REPORT=DIR writes the Markdown report and its figures into DIR, e.g.
``docs/accuracy``).

Floors (issue 4): final extinction within one power-frequency cycle in ≥ 95 % of the events
that have one; outcome and faulted phase right in ≥ 99 %; no single-pole chain reported on a
record without one.

Restrike truth. The simulator lists every re-breakdown after its extinction criterion fired,
including re-ignitions a few ms after a current zero, before any recovery voltage has built
up. Issue 4 asks for "each recovery that collapses again": an *observable restrike* is a truth
restrike preceded by an extinction interval (from the last truth extinction before it) of at
least one power-frequency cycle — the shortest interval over which a recovery voltage is
established and a one-cycle phasor or harmonic window on the line-side voltage can tell it
from the arc voltage. Precision and recall are reported against the observable set
(detections matching a non-observable truth restrike count neither way) and against all
truth restrikes (raw).
"""

from __future__ import annotations

import dataclasses
import os
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest

from recordscan.analysis import analyse

#: an observable restrike follows an extinction interval of at least this many cycles
OBSERVABLE_RECOVERY_CYCLES = 1.0
#: an extinction whose last arc cycle departs from the recovery by at least this many noise
#: RMS (see :func:`last_cycle_visibility`) is reported apart, as a diagnostic
VISIBLE = 3.0


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


def last_cycle_visibility(ev, line) -> float | None:  # type: ignore[no-untyped-def]
    """How far the arc's last cycle stands out in the record, in units of its noise.

    The simulator's noise-free line-side voltage of the open phase at the recording end is
    fitted over the two cycles after the final extinction (from a quarter cycle on) with the
    recovery waveform (sinusoid at f, offset, slope and curvature; on a compensated line also
    the free oscillation at the line model's frequency) and extrapolated over the cycle
    before it; the RMS departure there over the record's noise σ (from its pre-fault cycle).
    Below about 3 the arc's last cycle looks like the recovery to any method that reads the
    voltage at that terminal: a diagnostic of the corpus, not of the detector. None when
    there is less than a cycle of recovery to fit.
    """
    from recordscan.detect._base import Quantities

    tr, res, rec = ev.truth, ev.raw, ev.records["local"]
    te_rec = tr["extinction_s"]
    if te_rec is None or res is None:
        return None
    f = rec.frequency_hz
    te = res.truth.extinction_s
    k = "ABC".index(tr["faulted_phase"])
    t, v = res.t_s, res.v_line_v[0, k]
    ends = [x for x in (res.truth.reclose_s or {}).values() if x is not None]
    end = min(ends) if ends else float(t[-1])
    fn = None
    if line.compensation > 0:
        from recordscan.physics.coupling import open_phase_coupling

        fn = open_phase_coupling(
            line, faulted_phase=tr["faulted_phase"], fault_at_m=tr["fault_location_m"]
        ).free_frequency_hz

    def basis(x: np.ndarray) -> np.ndarray:
        w, y = 2 * np.pi * f, x * f
        cols = [np.cos(w * x), np.sin(w * x), np.ones_like(x), y, y * y]
        if fn:
            cols += [np.cos(2 * np.pi * fn * x), np.sin(2 * np.pi * fn * x)]
        return np.stack(cols, axis=1)

    fit = (t >= te + 0.25 / f) & (t < min(te + 2.25 / f, end))
    if fit.sum() < 20:
        return None
    coef, *_ = np.linalg.lstsq(basis(t[fit] - te), v[fit], rcond=None)
    last = (t >= te - 1 / f) & (t < te)
    dev = v[last] - basis(t[last] - te) @ coef
    sigma = Quantities(rec).noise("v_" + tr["faulted_phase"].lower())
    return float(np.sqrt(np.mean(dev**2)) / max(sigma, 1e-12))


def simulate_corpus(n: int, seed: int) -> list[tuple]:
    """``(scenario, truth, local record, line)`` for ``n`` scenarios drawn with ``seed``.

    The truth gains ``last_cycle_visibility`` (:func:`last_cycle_visibility`).
    """
    from recordscan.synth import simulate
    from recordscan.synth.sweep import draw_scenarios

    out = []
    for sc in draw_scenarios(n, seed=seed):
        ev = simulate(sc, keep_raw=True)
        line = _line_of(sc)
        truth = dict(ev.truth)
        truth["last_cycle_visibility"] = last_cycle_visibility(ev, line)
        out.append((sc, truth, ev.records["local"], line))
    return out


def observable_restrikes(truth: dict, f_hz: float) -> list[float]:
    """Truth restrikes preceded by at least :data:`OBSERVABLE_RECOVERY_CYCLES` of extinction."""
    ext = sorted(truth.get("extinctions_s") or [])
    out = []
    for r in truth.get("restrike_s") or []:
        before = [e for e in ext if e < r]
        if before and (r - before[-1]) * f_hz >= OBSERVABLE_RECOVERY_CYCLES:
            out.append(float(r))
    return out


def _match(got: list[float], want: list[float], tol_s: float) -> list[tuple[int, int]]:
    """Greedy one-to-one matching of detections to truth instants within ``tol_s``."""
    pairs = sorted(
        (abs(g - w), i, j)
        for i, g in enumerate(got)
        for j, w in enumerate(want)
        if abs(g - w) < tol_s
    )
    used_i: set[int] = set()
    used_j: set[int] = set()
    out = []
    for _, i, j in pairs:
        if i not in used_i and j not in used_j:
            used_i.add(i)
            used_j.add(j)
            out.append((i, j))
    return out


@dataclass
class Score:
    """Harness tallies."""

    n: int = 0
    confusion: Counter = field(default_factory=Counter)
    false_chain: int = 0
    phase_ok: int = 0
    phase_n: int = 0
    outcome_ok: int = 0
    outcome_n: int = 0
    ext_err_cycles: list[float] = field(default_factory=list)
    ext_err_ms: list[float] = field(default_factory=list)
    ext_group: list[str] = field(default_factory=list)
    ext_missing: int = 0
    ext_missing_group: list[str] = field(default_factory=list)
    ext_false: int = 0
    n_compensated: int = 0
    rs_obs: Counter = field(default_factory=Counter)
    rs_raw: Counter = field(default_factory=Counter)
    rs_err_ms: list[float] = field(default_factory=list)
    rs_gap_cycles: list[float] = field(default_factory=list)
    rs_err_raw_ms: list[float] = field(default_factory=list)
    #: extinctions less than three cycles before the end of the observation: n, failed
    ext_late: Counter = field(default_factory=Counter)
    #: extinctions whose last arc cycle stands out of the noise (visibility ≥ 3): n, within
    ext_visible: Counter = field(default_factory=Counter)
    fails: list[str] = field(default_factory=list)
    corpus: Counter = field(default_factory=Counter)

    @property
    def with_ext(self) -> int:
        return len(self.ext_err_cycles) + self.ext_missing

    def within(self, group: str | None = None) -> tuple[int, int]:
        errs = [
            e
            for e, g in zip(self.ext_err_cycles, self.ext_group, strict=True)
            if group is None or g == group
        ]
        miss = sum(1 for g in self.ext_missing_group if group is None or g == group)
        return sum(1 for e in errs if abs(e) <= 1.0), len(errs) + miss

    @staticmethod
    def pr(c: Counter) -> tuple[float, float]:
        p = c["tp"] / max(c["tp"] + c["fp"], 1)
        r = c["tp"] / max(c["tp"] + c["fn"], 1)
        return p, r


def score(rows: list[tuple]) -> Score:
    """Compare each analysis with its truth. ``rows`` are ``(sc, truth, rec, line, a)``."""
    s = Score()
    for sc, truth, rec, line, a in rows:
        s.n += 1
        f = rec.frequency_hz
        comp = line.compensation > 0
        group = "compensated" if comp else "uncompensated"
        s.corpus[("event", truth["event"])] += 1
        s.corpus[("f", round(f))] += 1
        s.corpus[("vt", truth["recorder"]["vt"])] += 1
        s.confusion[(truth["event"], a.event)] += 1
        if truth["event"] != "single_pole_trip":
            if a.event == "single_pole_trip":
                s.false_chain += 1
                s.fails.append(f"{sc.name}: chain reported on {truth['event']}")
            continue
        s.n_compensated += comp
        s.phase_n += 1
        s.phase_ok += a.faulted_phase == truth["faulted_phase"]
        if a.event != "single_pole_trip":
            s.fails.append(f"{sc.name}: {a.event} ({a.classification.detail})")
            continue
        s.outcome_n += 1
        s.outcome_ok += a.reclose is not None and a.reclose.outcome == truth["outcome"]
        if a.reclose is None or a.reclose.outcome != truth["outcome"]:
            s.fails.append(
                f"{sc.name}: outcome {a.reclose and a.reclose.outcome} vs {truth['outcome']}"
            )
        te = truth["extinction_s"]
        tag = (
            f"[{group[:4]} {truth['recorder']['vt']} {truth['recorder']['rate_hz']:.0f} Hz "
            f"{truth['recorder']['snr_db']:.0f} dB {line.voltage_v / 1e3:.0f} kV "
            f"{line.length_m / 1e3:.0f} km]"
        )
        if te is not None:
            rc = (truth.get("reclose_s") or {}).get("local")
            end_s = float(rc) if rc is not None else float(rec.t_s[-1])
            late = (end_s - te) * f < 3.0
            s.ext_late["n"] += late
            s.ext_late["fail"] += late and (
                a.extinction_s is None or abs(a.extinction_s - te) * f > 1.0
            )
            vis = truth.get("last_cycle_visibility")
            if vis is not None and vis >= VISIBLE:
                s.ext_visible["n"] += 1
                s.ext_visible["within"] += (
                    a.extinction_s is not None and abs(a.extinction_s - te) * f <= 1.0
                )
            if a.extinction_s is None:
                s.ext_missing += 1
                s.ext_missing_group.append(group)
                s.fails.append(f"{sc.name}: extinction missed {tag} ({a.warnings[:1]})")
            else:
                err = (a.extinction_s - te) * f
                s.ext_err_cycles.append(err)
                s.ext_err_ms.append((a.extinction_s - te) * 1e3)
                s.ext_group.append(group)
                if abs(err) > 1:
                    method = a.extinction.extinction.method if a.extinction else ""
                    s.fails.append(f"{sc.name}: extinction off by {err:+.2f} cycles {tag} {method}")
        elif a.extinction_s is not None:
            s.ext_false += 1
            s.fails.append(f"{sc.name}: extinction reported, truth none {tag}")
        got = [e.t_s for e in a.restrikes]
        raw = [float(x) for x in truth.get("restrike_s") or []]
        obs = observable_restrikes(truth, f)
        ext_all = sorted(truth.get("extinctions_s") or [])
        for r in raw:
            before = [e for e in ext_all if e < r]
            if before:
                s.rs_gap_cycles.append((r - before[-1]) * f)
        m_raw = _match(got, raw, 1.0 / f)
        s.rs_raw["tp"] += len(m_raw)
        s.rs_raw["fp"] += len(got) - len(m_raw)
        s.rs_raw["fn"] += len(raw) - len(m_raw)
        m_obs = _match(got, obs, 1.0 / f)
        matched_raw = {i for i, _ in m_raw}
        matched_obs = {i for i, _ in m_obs}
        s.rs_obs["tp"] += len(m_obs)
        s.rs_obs["fn"] += len(obs) - len(m_obs)
        s.rs_obs["fp"] += sum(1 for i in range(len(got)) if i not in matched_raw)
        s.rs_obs["neither"] += len(matched_raw - matched_obs)
        s.rs_err_ms += [(got[i] - obs[j]) * 1e3 for i, j in m_obs]
        s.rs_err_raw_ms += [(got[i] - raw[j]) * 1e3 for i, j in m_raw]
        if len(m_obs) < len(obs) or len(got) > len(matched_raw):
            s.fails.append(
                f"{sc.name}: restrikes found {[round(g, 4) for g in got]} observable "
                f"{[round(o, 4) for o in obs]} (raw {len(raw)}) {tag}"
            )
    return s


def summary_lines(s: Score) -> list[str]:
    errs = np.abs(np.array(s.ext_err_cycles)) if s.ext_err_cycles else np.array([np.inf])
    ok, tot = s.within()
    p_o, r_o = s.pr(s.rs_obs)
    p_r, r_r = s.pr(s.rs_raw)
    out = [
        f"corpus: {s.n} events; confusion (truth, found): {dict(s.confusion)}",
        f"extinction: n={tot}, within one cycle {ok / max(tot, 1):.1%} ({ok}/{tot}), median "
        f"{np.median(errs):.3f} cycles, p95 {np.percentile(errs, 95):.3f} cycles, missed "
        f"{s.ext_missing}, false {s.ext_false}",
    ]
    for g in ("uncompensated", "compensated"):
        ok_g, tot_g = s.within(g)
        out.append(f"  {g}: {ok_g}/{tot_g} within one cycle")
    out.append(
        f"  last arc cycle visible (>= {VISIBLE:g} noise RMS): {s.ext_visible['within']}/"
        f"{s.ext_visible['n']} within one cycle"
    )
    out += [
        f"restrikes (observable, >= {OBSERVABLE_RECOVERY_CYCLES:g} cycle of extinction): "
        f"precision {p_o:.2f}, recall {r_o:.2f} (tp {s.rs_obs['tp']}, fp {s.rs_obs['fp']}, "
        f"fn {s.rs_obs['fn']}, matched a non-observable one {s.rs_obs['neither']})",
        f"restrikes (all truth restrikes): precision {p_r:.2f}, recall {r_r:.2f} "
        f"(tp {s.rs_raw['tp']}, fp {s.rs_raw['fp']}, fn {s.rs_raw['fn']})",
        f"faulted phase {s.phase_ok}/{s.phase_n}, outcome {s.outcome_ok}/{s.outcome_n}",
        f"single-pole chains on records without one: {s.false_chain}",
    ]
    return out


def write_report(out_dir: Path, s: Score, *, n: int, seed: int) -> Path:
    """Write ``scan-seed-<seed>.md`` and its extinction-error histogram into ``out_dir``."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out_dir.mkdir(parents=True, exist_ok=True)
    png = out_dir / f"extinction-error-seed-{seed}.png"
    errs = np.array(s.ext_err_cycles)
    fig, ax = plt.subplots(figsize=(7, 3.5))
    clipped = np.clip(errs, -5, 5)
    for g, colour in (("uncompensated", "tab:blue"), ("compensated", "tab:orange")):
        sel = np.array([x == g for x in s.ext_group], dtype=bool)
        ax.hist(
            clipped[sel] if sel.size else [],
            bins=np.arange(-5, 5.01, 0.25),
            alpha=0.7,
            label=g,
            color=colour,
        )
    ax.axvline(-1, color="k", ls=":", lw=1)
    ax.axvline(1, color="k", ls=":", lw=1)
    ax.set_xlabel("detected − true final extinction (cycles; clipped to ±5)")
    ax.set_ylabel("events")
    ax.set_title(f"Final-extinction error, simulated corpus (seed {seed}, {n} draws)")
    ax.legend()
    fig.tight_layout()
    fig.savefig(png, dpi=90)
    plt.close(fig)
    a_err = np.abs(errs) if errs.size else np.array([np.nan])
    a_ms = np.abs(np.array(s.ext_err_ms)) if s.ext_err_ms else np.array([np.nan])
    ok, tot = s.within()
    p_o, r_o = s.pr(s.rs_obs)
    p_r, r_r = s.pr(s.rs_raw)
    gaps = np.array(s.rs_gap_cycles)
    events = sorted({k for k, _ in s.confusion} | {k for _, k in s.confusion})
    lines = [
        f"# Scan accuracy on the simulated corpus — seed {seed}",
        "",
        "Written by `tests/test_detect_accuracy.py` (numbers from that run only):",
        "",
        "```sh",
        f"RECORDSCAN_ACCURACY_N={n} RECORDSCAN_ACCURACY_SEED={seed} "
        "RECORDSCAN_ACCURACY_REPORT=docs/accuracy \\",
        "  .venv/bin/python -m pytest -m accuracy -s tests/test_detect_accuracy.py",
        "```",
        "",
        "## Corpus",
        "",
        f"{s.n} events drawn by `recordscan.synth.sweep.draw_scenarios({n}, seed={seed})`: "
        + ", ".join(f"{v} {k[1]}" for k, v in sorted(s.corpus.items()) if k[0] == "event")
        + "; "
        + ", ".join(f"{v} at {k[1]} Hz" for k, v in sorted(s.corpus.items()) if k[0] == "f")
        + "; VTs "
        + ", ".join(f"{v} {k[1]}" for k, v in sorted(s.corpus.items()) if k[0] == "vt")
        + f"; {s.n_compensated} of the single-pole trips on shunt-compensated lines. Each "
        "record is analysed with its line description (reactors included).",
        "",
        "## Final extinction",
        "",
        f"Events whose truth has a final extinction: {tot}. Within one power-frequency cycle: "
        f"**{ok}/{tot} = {ok / max(tot, 1):.1%}** (floor 95 %). Missed (censored although "
        f"the arc went out): {s.ext_missing}; reported where the arc still burned at the "
        f"end of the observation: {s.ext_false}. Extinctions less than three cycles before the "
        f"end of the observation (reclose or record end): {s.ext_late['n']}, of which "
        f"{s.ext_late['fail']} failed.",
        "",
        "| lines | within one cycle |",
        "| --- | --- |",
    ]
    for g in ("uncompensated", "compensated"):
        ok_g, tot_g = s.within(g)
        lines.append(f"| {g} | {ok_g}/{tot_g} |")
    lines.append(
        f"| (diagnostic) last arc cycle at least {VISIBLE:g}× the noise away from the recovery "
        f"| {s.ext_visible['within']}/{s.ext_visible['n']} |"
    )
    lines += [
        "",
        "| |error| of the found extinctions | median | 95th percentile |",
        "| --- | --- | --- |",
        f"| cycles | {np.median(a_err):.2f} | {np.percentile(a_err, 95):.2f} |",
        f"| ms | {np.median(a_ms):.1f} | {np.percentile(a_ms, 95):.1f} |",
        "",
        f"![extinction error histogram]({png.name})",
        "",
        "## Restrikes",
        "",
        f"An *observable restrike* follows at least {OBSERVABLE_RECOVERY_CYCLES:g} "
        "power-frequency cycle of extinction (see docs/detection.md). In this corpus the "
        f"{len(s.rs_gap_cycles)} truth restrikes follow extinction intervals of "
        + (
            f"{np.min(gaps):.3f}–{np.max(gaps):.2f} cycle (median {np.median(gaps):.2f})."
            if s.rs_gap_cycles
            else "— (none)."
        ),
        "",
        "| against | true positives | false positives | missed | precision | recall |",
        "| --- | --- | --- | --- | --- | --- |",
        f"| observable restrikes | {s.rs_obs['tp']} | {s.rs_obs['fp']} | {s.rs_obs['fn']} | "
        + (f"{p_o:.2f}" if s.rs_obs["tp"] + s.rs_obs["fp"] else "—")
        + " | "
        + (f"{r_o:.2f}" if s.rs_obs["tp"] + s.rs_obs["fn"] else "— (none in the corpus)")
        + " |",
        f"| all truth restrikes (raw) | {s.rs_raw['tp']} | {s.rs_raw['fp']} | "
        f"{s.rs_raw['fn']} | {p_r:.2f} | {r_r:.2f} |",
        "",
        f"Detections matching a truth restrike that is not observable: {s.rs_obs['neither']} "
        "(counted neither way in the observable row). A detection matches a truth restrike "
        "within one cycle; |time error| of the matched detections (raw): median "
        + (
            f"{np.median(np.abs(s.rs_err_raw_ms)):.1f} ms, 95th percentile "
            f"{np.percentile(np.abs(s.rs_err_raw_ms), 95):.1f} ms."
            if s.rs_err_raw_ms
            else "— (none matched)."
        ),
        "",
        "## Event classification (rows: truth, columns: found)",
        "",
        "| truth \\ found | " + " | ".join(events) + " |",
        "| --- | " + " | ".join("---" for _ in events) + " |",
    ]
    for tr in events:
        if not any(k == tr for k, _ in s.confusion):
            continue
        lines.append(
            f"| {tr} | " + " | ".join(str(s.confusion.get((tr, fd), 0)) for fd in events) + " |"
        )
    lines += [
        "",
        "## Faulted phase, outcome, false chains",
        "",
        f"- faulted phase right: {s.phase_ok}/{s.phase_n} single-pole trips (floor 99 %)",
        f"- outcome right: {s.outcome_ok}/{s.outcome_n} classified single-pole trips (floor 99 %)",
        f"- single-pole chain reported on a record without one: {s.false_chain} (floor 0)",
        "",
        "## Every miss",
        "",
    ]
    lines += [f"- {x}" for x in s.fails] or ["- none"]
    md = out_dir / f"scan-seed-{seed}.md"
    md.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return md


def analyse_corpus(corpus: list[tuple]) -> list[tuple]:
    """Analyse each record with its line description."""
    return [(sc, tr, rec, line, analyse(rec, line=line)) for sc, tr, rec, line in corpus]


def pooled(scores: list[Score]) -> Score:
    """The tallies of several corpora together."""
    out = Score()
    for s in scores:
        for f in dataclasses.fields(Score):
            a, b = getattr(out, f.name), getattr(s, f.name)
            setattr(out, f.name, a + b)
    return out


def write_pooled(
    out_dir: Path, per_seed: dict[int, Score], *, n: int, name: str = "scan-seeds"
) -> Path:
    """Write ``<name>.md``: one row per corpus and the pooled figures."""
    seeds = list(per_seed)
    rows = [*per_seed.items(), ("all", pooled(list(per_seed.values())))]
    lines = [
        "# Scan accuracy, several simulated corpora",
        "",
        "Written by `tests/test_detect_accuracy.py` (numbers from that run only):",
        "",
        "```sh",
        f"RECORDSCAN_ACCURACY_N={n} RECORDSCAN_ACCURACY_SEED={','.join(map(str, seeds))} "
        "RECORDSCAN_ACCURACY_REPORT=docs/accuracy \\",
        "  .venv/bin/python -m pytest -m accuracy -s tests/test_detect_accuracy.py",
        "```",
        "",
        "| seed | extinction within one cycle | uncompensated | compensated | abs. error median / "
        "95th pct (cycles) | last arc cycle visible (diagnostic) | censored although out | "
        "reported while burning | observable restrikes P / R | all restrikes P / R | phase | "
        "outcome | false chains |",
        "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |",
    ]
    for label, s in rows:
        ok, tot = s.within()
        u, c = s.within("uncompensated"), s.within("compensated")
        a = np.abs(np.array(s.ext_err_cycles)) if s.ext_err_cycles else np.array([np.nan])
        po, ro = s.pr(s.rs_obs)
        pr_, rr = s.pr(s.rs_raw)
        lines.append(
            f"| {label} | {ok}/{tot} = {ok / max(tot, 1):.1%} | {u[0]}/{u[1]} | {c[0]}/{c[1]} | "
            f"{np.median(a):.2f} / {np.percentile(a, 95):.2f} | "
            f"{s.ext_visible['within']}/{s.ext_visible['n']} | {s.ext_missing} | "
            f"{s.ext_false} | {po:.2f} / {ro:.2f} ({s.rs_obs['tp']}/{s.rs_obs['fp']}/"
            f"{s.rs_obs['fn']}) | {pr_:.2f} / {rr:.2f} | {s.phase_ok}/{s.phase_n} | "
            f"{s.outcome_ok}/{s.outcome_n} | {s.false_chain} |"
        )
    lines += [
        "",
        f"'Last arc cycle visible': extinctions whose last arc cycle departs from the recovery "
        f"waveform by at least {VISIBLE:g}× the record's noise RMS in the simulator's noise-free "
        "voltage (`last_cycle_visibility`), and how many of them are found within one cycle — "
        "a diagnostic of what the terminal voltage can show, not a different floor. "
        "Restrike counts are true positives / false positives / missed. Per-corpus reports "
        "with every miss: " + ", ".join(f"[seed {k}](scan-seed-{k}.md)" for k in seeds) + ".",
    ]
    md = out_dir / f"{name}.md"
    out_dir.mkdir(parents=True, exist_ok=True)
    md.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return md


@pytest.mark.accuracy
def test_scan_accuracy_on_simulated_corpus() -> None:
    """RECORDSCAN_ACCURACY_SEED may list several seeds (``2026,7,11``): the floors then apply
    to the pooled figures, and a table of every corpus is written beside the reports
    (``scan-seeds.md``, or RECORDSCAN_ACCURACY_NAME``.md``)."""
    n = int(os.environ.get("RECORDSCAN_ACCURACY_N", "150"))
    seeds = [int(x) for x in os.environ.get("RECORDSCAN_ACCURACY_SEED", "2026").split(",")]
    report_dir = os.environ.get("RECORDSCAN_ACCURACY_REPORT")
    per_seed: dict[int, Score] = {}
    for seed in seeds:
        rows = analyse_corpus(simulate_corpus(n, seed))
        s = score(rows)
        per_seed[seed] = s
        print(f"\nseed {seed}")
        for line in summary_lines(s) + ["  " + x for x in s.fails]:
            print(line)
        if report_dir:
            write_report(Path(report_dir), s, n=n, seed=seed)
    s = pooled(list(per_seed.values()))
    if len(seeds) > 1:
        print("\npooled")
        for line in summary_lines(s):
            print(line)
        if report_dir:
            name = os.environ.get("RECORDSCAN_ACCURACY_NAME", "scan-seeds")
            write_pooled(Path(report_dir), per_seed, n=n, name=name)
    ok, tot = s.within()
    assert s.false_chain == 0
    assert ok >= 0.95 * tot
    assert s.phase_ok >= 0.99 * s.phase_n
    assert s.outcome_ok >= 0.99 * s.outcome_n
