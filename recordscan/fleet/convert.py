"""Validation and conversion of scan results, fits and line descriptions into table rows.

Pure functions, run before any database work, so that a bad value is refused before a single
row is written. Values are SI; absolute instants become integer UTC nanoseconds.
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from recordscan.errors import FormatError
from recordscan.fleet import schema as S

SHA_CHARS = frozenset("0123456789abcdef")


def _jsonable(obj: Any) -> Any:
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return _jsonable({f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)})
    if isinstance(obj, Mapping):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [_jsonable(v) for v in obj]
    if hasattr(obj, "tolist") and callable(obj.tolist):  # numpy arrays and scalars
        return _jsonable(obj.tolist())
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if isinstance(obj, (str, int, float, bool)) or obj is None:
        return obj
    return str(obj)


def _dumps(obj: Any) -> str:
    return json.dumps(_jsonable(obj), ensure_ascii=False, allow_nan=False, sort_keys=True)


def _float(value: Any, *, name: str, where: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        if hasattr(value, "item"):
            return _float(value.item(), name=name, where=where)
        raise FormatError(f"{where}: field {name!r} must be a number or null, got {value!r}")
    out = float(value)
    return out if math.isfinite(out) else None


def _text(value: Any, *, name: str, where: str) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str):
        raise FormatError(f"{where}: field {name!r} must be text or null, got {value!r}")
    return value


def parse_instant_ns(text: str, *, where: str = "value") -> int:
    """ISO 8601 instant → integer UTC nanoseconds (naive instants are taken as UTC).

    Parameters
    ----------
    text : str
        e.g. ``"2026-03-14T09:26:53.589793238Z"`` or ``"2026-03-14"``.
    where : str
        Named in the error message.

    Returns
    -------
    int
        Nanoseconds since 1970-01-01T00:00:00Z.
    """
    import pandas as pd

    try:
        ts = pd.Timestamp(text)
    except (ValueError, TypeError) as exc:
        raise FormatError(f"{where}: {text!r} is not an ISO 8601 instant ({exc})") from None
    if ts is pd.NaT:
        raise FormatError(f"{where}: {text!r} is not an ISO 8601 instant")
    ts = ts.tz_localize("UTC") if ts.tzinfo is None else ts.tz_convert("UTC")
    return int(ts.value)


def _where(result: Mapping[str, Any]) -> str:
    return f"scan result for {result.get('file') or result.get('sha256') or '<unnamed record>'}"


def _check_result(result: Any) -> str:
    """Validate the parts of a scan result the store relies on; return its sha256."""
    if not isinstance(result, Mapping):
        raise FormatError(f"scan result: expected a JSON object, got {type(result).__name__}")
    where = _where(result)
    version = result.get("schema")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        raise FormatError(f"{where}: 'schema' must be a scan schema version >= 1, got {version!r}")
    sha = result.get("sha256")
    if not isinstance(sha, str) or len(sha) != 64 or not set(sha.lower()) <= SHA_CHARS:
        raise FormatError(f"{where}: 'sha256' must be 64 hexadecimal digits, got {sha!r}")
    if result.get("status") not in ("ok", "error"):
        raise FormatError(f"{where}: 'status' must be 'ok' or 'error'")
    if result["status"] == "ok" and not isinstance(result.get("event"), str):
        raise FormatError(f"{where}: 'event' must be text for an analysed record")
    times = result.get("restrike_s") or []
    volts = result.get("restrike_voltage_v") or []
    if not isinstance(times, list) or not isinstance(volts, list):
        raise FormatError(f"{where}: 'restrike_s' and 'restrike_voltage_v' must be lists")
    if volts and len(volts) != len(times):
        raise FormatError(
            f"{where}: {len(times)} restrike instants but {len(volts)} restrike voltages"
        )
    censored = result.get("extinction_censored", False)
    if censored is not None and not isinstance(censored, bool):
        raise FormatError(f"{where}: 'extinction_censored' must be true or false")
    return sha.lower()


def line_fields(line: Any) -> dict[str, Any]:
    """A line description (dataclass from ``load_line`` or plain dict) → ``lines`` columns."""
    if hasattr(line, "to_dict") and callable(line.to_dict):
        data = _jsonable(line.to_dict())
    elif dataclasses.is_dataclass(line) and not isinstance(line, type):
        data = _jsonable(line)
    elif isinstance(line, Mapping):
        data = _jsonable(dict(line))
    else:
        raise FormatError(f"line description: expected a mapping, got {type(line).__name__}")
    name = data.get("name")
    if not isinstance(name, str) or not name.strip():
        raise FormatError("line description: 'name' must be non-empty text")
    where = f"line description {name!r}"
    reactors = data.get("reactors")
    if reactors is None and ("reactor_from" in data or "reactor_to" in data):
        reactors = [r for r in (data.get("reactor_from"), data.get("reactor_to")) if r]
    compensation = data.get("compensation")
    if isinstance(compensation, (int, float)) and not isinstance(compensation, bool):
        # a positive-sequence shunt compensation degree (fraction)
        compensation = f"{100.0 * compensation:.0f} % shunt" if compensation > 0 else "none"
    if compensation is None and reactors is not None:
        compensation = "shunt reactors" if reactors else "none"
    return {
        "name": name.strip(),
        "voltage_v": _float(data.get("voltage_v"), name="voltage_v", where=where),
        "length_m": _float(data.get("length_m"), name="length_m", where=where),
        "frequency_hz": _float(data.get("frequency_hz"), name="frequency_hz", where=where),
        "dead_time_s": _float(data.get("dead_time_s"), name="dead_time_s", where=where),
        "compensation": None if compensation is None else str(compensation),
        "reactors_json": None if reactors is None else _dumps(reactors),
        "description_json": _dumps(data),
    }


def _event_row(result: Mapping[str, Any], where: str) -> dict[str, Any]:
    row: dict[str, Any] = {}
    for name in S.EVENT_TEXT_FIELDS:
        row[name] = _text(result.get(name), name=name, where=where)
    for name in S.EVENT_FLOAT_FIELDS:
        row[name] = _float(result.get(name), name=name, where=where)
    row["extinction_censored"] = bool(result.get("extinction_censored") or False)
    row["n_restrikes"] = len(result.get("restrike_s") or [])
    rules = result.get("deionisation_rules")
    row["deionisation_rules_json"] = None if rules is None else _dumps(rules)
    warns = result.get("warnings")
    row["warnings_json"] = None if warns is None else _dumps(warns)
    row["result_json"] = _dumps(result)
    return row


def fit_row(fit: Mapping[str, Any], where: str) -> dict[str, Any]:
    where = f"{where}, arc fit"
    method = fit.get("method")
    if not isinstance(method, str) or not method:
        raise FormatError(f"{where}: 'method' must be non-empty text")
    row: dict[str, Any] = {"method": method}
    for name in S.FIT_PARAMETERS:
        row[name] = _float(fit.get(name), name=name, where=where)
        row[f"{name}_stderr"] = _float(
            fit.get(f"{name}_stderr"), name=f"{name}_stderr", where=where
        )
        status = fit.get(f"{name}_status")
        row[f"{name}_status"] = None if status is None else str(status)
    row["elongation_law"] = _text(fit.get("elongation_law"), name="elongation_law", where=where)
    params = fit.get("elongation_params")
    row["elongation_params_json"] = None if params is None else _dumps(params)
    row["residual_rms"] = _float(fit.get("residual_rms"), name="residual_rms", where=where)
    success = fit.get("success")
    row["success"] = None if success is None else bool(success)
    row["message"] = None if fit.get("message") is None else str(fit.get("message"))
    row["fit_json"] = _dumps(fit)
    return row


@dataclass(frozen=True)
class Prepared:
    sha256: str
    record: dict[str, Any]
    line: dict[str, Any] | None
    event: dict[str, Any] | None
    restrikes: list[dict[str, Any]]
    fit: dict[str, Any] | None


def prepare(
    result: Mapping[str, Any],
    *,
    record_meta: Mapping[str, Any] | None,
    line: Any,
    fit: Mapping[str, Any] | None,
) -> Prepared:
    """Validate and convert everything before any database work (no partial writes)."""
    sha = _check_result(result)
    where = _where(result)
    start = _text(result.get("start"), name="start", where=where)
    versions = result.get("versions") if isinstance(result.get("versions"), Mapping) else {}
    record = {
        "sha256": sha,
        "path": _text(result.get("file"), name="file", where=where),
        "station": _text(result.get("station"), name="station", where=where),
        "device": _text(result.get("device"), name="device", where=where),
        "start": start,
        "start_ns": None if start is None else parse_instant_ns(start, where=f"{where}, 'start'"),
        "frequency_hz": _float(result.get("frequency_hz"), name="frequency_hz", where=where),
        "sample_rate_hz": _float(result.get("sample_rate_hz"), name="sample_rate_hz", where=where),
        "status": result["status"],
        "error": _text(result.get("error"), name="error", where=where),
        "scan_schema": int(result["schema"]),
        "recordscan_version": None if not versions else str(versions.get("recordscan")),
        "meta_json": None if record_meta is None else _dumps(record_meta),
    }
    line_row: dict[str, Any] | None
    if line is not None:
        line_row = line_fields(line)
    else:
        name = _text(result.get("line"), name="line", where=where)
        kv = _float(result.get("voltage_kv"), name="voltage_kv", where=where)
        line_row = None
        if name:
            line_row = {"name": name, "voltage_v": None if kv is None else kv * 1e3}
    event = None
    restrike_rows: list[dict[str, Any]] = []
    if result["status"] == "ok":
        event = _event_row(result, where)
        kv = _float(result.get("voltage_kv"), name="voltage_kv", where=where)
        event["voltage_v"] = kv * 1e3 if kv is not None else None
        if line_row is not None:
            event["line"] = line_row["name"]
            if event["voltage_v"] is None:
                event["voltage_v"] = line_row.get("voltage_v")
        else:
            event["line"] = None
        times = result.get("restrike_s") or []
        volts = result.get("restrike_voltage_v") or [None] * len(times)
        for seq, (t, v) in enumerate(zip(times, volts, strict=True)):
            t_s = _float(t, name="restrike_s", where=where)
            if t_s is None:
                raise FormatError(f"{where}: restrike instant {seq} is not a finite number")
            restrike_rows.append(
                {
                    "seq": seq,
                    "t_s": t_s,
                    "voltage_v": _float(v, name="restrike_voltage_v", where=where),
                }
            )
    fit_values = None if fit is None else fit_row(fit, where)
    return Prepared(sha, record, line_row, event, restrike_rows, fit_values)
