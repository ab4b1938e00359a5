"""Write ``demo-responses.csv``: the responses of a STAND-IN relay for the demo playback set.

The stand-in is not a relay and not any real product: its "operate times" are the
manifest's truth plus invented latencies, with deliberate faults so that the verification
report shows every verdict. On its own clock the stand-in sees the fault inception
``CLOCK_OFFSET_S`` later than the playback record does (the verifier aligns on the
inception column). Invented data for demonstration only.

Usage (after ``recordscan testset sample_records/relaytest/demo-plan.toml --out out/playback``)::

    python sample_records/relaytest/make_demo_responses.py out/playback/manifest.json

What it writes, per case of the demo plan:

- a permit ``20 ms + 7 ms × (k mod 5)`` after the true final extinction (case number k);
- case-010: a slow permit, 62 ms after the extinction (over a 3-cycle latency limit);
- case-006: a permit half-way between restrikes 1 and 2 (a premature permit — the
  dangerous failure);
- case-007: no permit although the arc went out in time (a missed permit);
- case-012: left out (no response);
- block cases (permanent fault, arc burning to the end): no permit.
"""

from __future__ import annotations

import csv
import json
import sys
from pathlib import Path

CLOCK_OFFSET_S = 0.35
PREMATURE = "case-006"
MISSED = "case-007"
SLOW = "case-010"
LEFT_OUT = "case-012"


def rows(manifest: dict) -> list[dict[str, str]]:
    """The stand-in relay's rows for every case of the manifest."""
    out = []
    for k, c in enumerate(manifest["cases"], start=1):
        case = c["case"]
        if case == LEFT_OUT:
            continue
        inc = c["inception_s"] + CLOCK_OFFSET_S
        permit = ""
        if case == PREMATURE:
            r1, r2 = c["restrike_s"][:2]
            permit = f"{(r1 + r2) / 2 + CLOCK_OFFSET_S:.6f}"
            note = "stand-in: permit between restrikes 1 and 2 (deliberate)"
        elif case == MISSED:
            note = "stand-in: no permit (deliberate miss)"
        elif c["expected"] == "block":
            note = "stand-in: blocked"
        else:
            lat = 0.062 if case == SLOW else 0.020 + 0.007 * (k % 5)
            permit = f"{c['extinction_s'] + lat + CLOCK_OFFSET_S:.6f}"
            note = f"stand-in: truth + {lat * 1e3:.0f} ms"
        out.append({"case": case, "inception_s": f"{inc:.6f}", "permit_s": permit, "note": note})
    return out


def main(argv: list[str]) -> None:
    manifest_path = Path(argv[1] if len(argv) > 1 else "out/playback/manifest.json")
    manifest = json.loads(manifest_path.read_text(encoding="utf-8"))
    target = Path(__file__).with_name("demo-responses.csv")
    with target.open("w", encoding="utf-8", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=["case", "inception_s", "permit_s", "note"])
        w.writeheader()
        w.writerows(rows(manifest))
    print(f"wrote {target}")


if __name__ == "__main__":
    main(sys.argv)
