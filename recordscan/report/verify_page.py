"""HTML page of a relay verification (reads the report dict only)."""

from __future__ import annotations

import base64
from collections.abc import Mapping
from typing import Any

from recordscan.report.record_page import CAUTION_HTML, _esc, _page


def render_verify_page(report: Mapping[str, Any], *, figures: Mapping[str, bytes]) -> str:
    """Return the self-contained verification page.

    Parameters
    ----------
    report : Mapping
        :meth:`recordscan.relaytest.verify.VerificationReport.to_dict` output.
    figures : Mapping of str to bytes
        Caption → PNG.
    """
    verdict = "PASSED" if report["passed"] else "FAILED"
    cls = "good" if report["passed"] else "bad"
    parts = [
        "<h1>Adaptive-reclose relay verification</h1>",
        f"<p class='{cls}' style='font-size:1.3em'>Result: {verdict}</p>",
        f"<div class='caution'>{CAUTION_HTML}</div>",
        "<h2>Acceptance criteria</h2><table><tr><th>Criterion</th><th>Limit</th>"
        "<th>Measured</th><th>Result</th></tr>",
    ]
    for c in report["criteria"]:
        ok = "pass" if c["passed"] else "FAIL"
        parts.append(
            f"<tr><td>{_esc(c['criterion'])}</td><td>{_esc(c['limit'])}</td>"
            f"<td>{_esc(c['measured'])}</td><td class='{'good' if c['passed'] else 'bad'}'>{ok}</td></tr>"
        )
    parts.append("</table>")
    counts = report["counts"]
    parts.append(
        "<h2>Totals</h2><table>"
        + "".join(
            f"<tr><th>{_esc(k.replace('_', ' '))}</th><td class='num'>{v}</td></tr>"
            for k, v in counts.items()
        )
        + "</table>"
    )
    lat = report["latency_s"]
    parts.append(
        "<h2>Detection latency after true final extinction</h2><table><tr>"
        + "".join(f"<th>{_esc(k)}</th>" for k in lat)
        + "</tr><tr>"
        + "".join(
            f"<td class='num'>{'—' if v is None else (f'{v:.0f}' if k == 'n' else f'{v * 1e3:.1f} ms')}</td>"
            for k, v in lat.items()
        )
        + "</tr></table>"
    )
    parts.append("<ul>" + "".join(f"<li>{_esc(g)}</li>" for g in report["guidance"]) + "</ul>")
    for caption, png in figures.items():
        b64 = base64.b64encode(png).decode("ascii")
        parts.append(
            f"<h2>{_esc(caption)}</h2><img alt='{_esc(caption)}' src='data:image/png;base64,{b64}'>"
        )
    parts.append(
        "<h2>Cases (premature permits first)</h2><table><tr><th>Case</th><th>Expected</th>"
        "<th>Verdict</th><th>First permit</th><th>Latency</th><th>Detail</th></tr>"
    )
    for c in report["cases"]:
        bad = c["verdict"] in ("premature_permit", "missed_permit", "no_response")
        lat_txt = "—" if c["latency_s"] is None else f"{c['latency_s'] * 1e3:.1f} ms"
        fp = "—" if c["first_permit_s"] is None else f"{c['first_permit_s']:.4f} s"
        notes = f"<br><span class='muted'>{_esc(c['notes'])}</span>" if c.get("notes") else ""
        parts.append(
            f"<tr><td style='white-space:nowrap'>{_esc(c['case'])}</td>"
            f"<td>{_esc(c['expected'])}</td>"
            f"<td class='{'bad' if bad else 'good'}'>{_esc(c['verdict'].replace('_', ' '))}</td>"
            f"<td class='num'>{fp}</td><td class='num'>{lat_txt}</td><td>{_esc(c['detail'])}{notes}</td></tr>"
        )
    parts.append("</table>")
    if report.get("unknown_cases"):
        parts.append(
            "<p class='muted'>Responses for cases not in the manifest (ignored): "
            + _esc(", ".join(report["unknown_cases"]))
            + "</p>"
        )
    return _page("relay verification", "".join(parts))
