"""Rules of thumb of the trade (common practice), checked as arithmetic."""

from __future__ import annotations

import pytest

from recordscan.detect.triage import (
    RULE_CYCLES,
    RULE_MS,
    deionisation_rules_s,
    deionisation_time_cycles,
    deionisation_time_ms_rule,
    triage,
)


@pytest.mark.parametrize(("kv", "cycles"), [(345, 20.50), (500, 24.99), (765, 32.67)])
def test_deionisation_cycles_rule(kv: float, cycles: float) -> None:
    # 10.5 + kV/34.5 cycles: common practice (attributed from memory to Boisseau, Wyman &
    # Skeats, AIEE Trans. 1949, as reproduced in IEEE Std C37.104).
    assert deionisation_time_cycles(kv) == pytest.approx(cycles, abs=0.005)


def test_deionisation_ms_rule_and_seconds() -> None:
    # 175 + 0.5·kV ms: common practice. 500 kV → 425 ms; 24.99 cycles of 60 Hz → 416.5 ms.
    assert deionisation_time_ms_rule(500) == pytest.approx(425.0)
    rules = deionisation_rules_s(500)
    assert rules[RULE_CYCLES] == pytest.approx(0.4165, abs=5e-5)
    assert rules[RULE_MS] == pytest.approx(0.425)


def test_triage_ratio_rule() -> None:
    # primary / secondary-arc current ≳ 50 favours success: common practice
    tr = triage(
        primary_fault_current_rms_a=12000.0,
        secondary_arc_current_rms_a=20.0,
        secondary_arc_current_source="estimated",
        dead_time_s=0.8,
        voltage_kv=500.0,
    )
    assert tr.current_ratio == pytest.approx(600.0)
    assert tr.ratio_favourable is True
    assert tr.dead_time_margin_s[RULE_CYCLES] == pytest.approx(0.8 - 0.4165, abs=5e-5)
    low = triage(
        primary_fault_current_rms_a=2000.0,
        secondary_arc_current_rms_a=50.0,
        secondary_arc_current_source="measured",
        dead_time_s=None,
        voltage_kv=None,
    )
    assert low.ratio_favourable is False and low.deionisation_rules == {}
