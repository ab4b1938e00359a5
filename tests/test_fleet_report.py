"""Fleet report figures and page (recordscan.fleet.figures, recordscan.fleet.report)."""

from __future__ import annotations

from pathlib import Path

import matplotlib
import numpy as np
import pandas as pd
from fleet_results import make_fit, make_fleet

from recordscan.fleet import figures
from recordscan.fleet.report import render_report
from recordscan.fleet.store import EventFilter, open_store
from recordscan.fleet.survival import extinction_sample

matplotlib.use("Agg", force=True)


def test_survival_plot_draws_the_kaplan_meier_steps(tmp_path: Path) -> None:
    import matplotlib.pyplot as plt

    with open_store(str(tmp_path / "a.sqlite")) as store:
        store.ingest_many(make_fleet(10, seed=8))
        store.upsert_line({"name": "Corrow–Dunhallow", "dead_time_s": 0.8})
        frame = store.events(EventFilter(line="Corrow–Dunhallow"))
    ax = figures.survival_plot(frame)
    km = extinction_sample(frame, origin="pole_open").estimate()
    steps = ax.lines[0]
    np.testing.assert_allclose(steps.get_xdata()[1:-1], km.times_s * 1e3)
    np.testing.assert_allclose(steps.get_ydata()[1:-1], km.survival)
    assert any(ln.get_linestyle() == ":" for ln in ax.lines)  # the dead-time setting
    plt.close(ax.figure)


def test_report_shows_parameter_distributions_and_filter(tmp_path: Path) -> None:
    fleet = make_fleet(6, seed=9)
    with open_store(str(tmp_path / "a.sqlite")) as store:
        for r in fleet:
            store.ingest(r, fit=make_fit(r))
        text = render_report(
            store, caution="CAUTION-TEXT", flt=EventFilter(voltage_v=400e3), filter_text="400 kV"
        )
        fits = store.fits(EventFilter(voltage_v=400e3))
    assert len(fits) == 6
    assert text.startswith("<!DOCTYPE html>") and text.count("CAUTION-TEXT") == 2
    assert "400 kV · 6 events" in text
    assert "6 stored fits." in text
    assert text.count("data:image/png;base64,") == 5
    assert "Corrow–Dunhallow" not in text  # filtered out


def test_outcomes_plot_counts_per_quarter() -> None:
    import matplotlib.pyplot as plt

    frame = pd.DataFrame(make_fleet(5, seed=10))
    frame["start_ns"] = pd.to_datetime(frame["start"].str.rstrip("Z")).astype("int64")
    ax = figures.outcomes_plot(frame)
    heights = sum(p.get_height() for p in ax.patches)
    assert heights == len(frame)
    plt.close(ax.figure)
