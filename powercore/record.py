"""The assumptions record: scenario, results, working, curves, versions, cautions, justification.

``make_record`` builds it; ``read_record`` checks size, JSON syntax, structure and
version and returns the scenario, naming the field at fault; ``verify_record``
recomputes the numbers and lists any that differ from those stored.
"""
from __future__ import annotations

import datetime as _dt
import json
import math
import platform
from typing import Any

import numpy as np
import scipy

from .curves import curve_effect, curve_n, densities, effect_range, n_range
from .engine import evaluate
from .errors import RecordError
from .justification import CAUTIONS, justification
from .result import Result
from .scenario import SCHEMA_VERSION, Scenario

__all__ = ["MAX_RECORD_BYTES", "RECORD_KIND", "make_record", "read_record", "verify_record"]

RECORD_KIND = "powerlens.assumptions-record"
MAX_RECORD_BYTES = 2_000_000   # far below the ~15 MB at which a browser session's connection dies
MAX_DEPTH = 12
_TOP = {"kind", "schema_version", "created", "software", "assumptions", "results", "working",
        "curves", "cautions", "justification", "simulation", "extras"}
_CHECKED = ("power", "n", "total", "alpha", "effect", "standardized_effect")


def _version() -> str:
    from . import __version__
    return __version__


def make_record(scenario: Scenario, result: Result | None = None, *, curves: bool = True,
                created: str | None = None) -> dict[str, Any]:
    """The full JSON-ready record of a scenario (evaluated here unless ``result`` is given)."""
    result = evaluate(scenario) if result is None else result
    body = result.to_dict()
    working = body.pop("working")
    body.pop("scenario")
    record: dict[str, Any] = {
        "kind": RECORD_KIND,
        "schema_version": SCHEMA_VERSION,
        "created": created or _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "software": {"powerlens": _version(), "python": platform.python_version(),
                     "numpy": np.__version__, "scipy": scipy.__version__},
        "assumptions": scenario.to_dict(),
        "results": body,
        "working": working,
        "cautions": list(CAUTIONS),
        "justification": justification(result, _version()),
    }
    if curves:
        solved = result.solved
        lo, hi = effect_range(result)
        n_lo, n_hi = n_range(result)
        dens = densities(solved, "statistic")
        record["curves"] = {
            "power_vs_effect": curve_effect(solved, lo, hi, 200).to_dict(),
            "power_vs_n": curve_n(solved, n_lo, n_hi, 200).to_dict(),
            "densities": {"x": dens.x.tolist(), "null": dens.null.tolist(), "alt": dens.alt.tolist(),
                          "critical": [None if math.isnan(c) else c for c in dens.critical],
                          "scale": dens.scale, "discrete": dens.discrete, "x_label": dens.x_label},
        }
    return _finite(record)


def _finite(x: Any) -> Any:
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: _finite(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_finite(v) for v in x]
    return x


def _reject_constant(name: str) -> Any:
    raise RecordError("json", f"contains {name}, which is not valid JSON; write numbers or null")


def _depth(x: Any, level: int = 0) -> int:
    if level > MAX_DEPTH:
        return level
    if isinstance(x, dict):
        return max([_depth(v, level + 1) for v in x.values()] or [level])
    if isinstance(x, list):
        return max([_depth(v, level + 1) for v in x] or [level])
    return level


def read_record(data: str | bytes | dict[str, Any]) -> Scenario:
    """The scenario stored in a record (or a bare scenario), after checking it all.

    Raises :class:`RecordError` (or :class:`InvalidParameter`) naming the field at fault.
    """
    if isinstance(data, (bytes, bytearray)):
        if len(data) > MAX_RECORD_BYTES:
            raise RecordError("file", f"is {len(data):,} bytes; records are at most {MAX_RECORD_BYTES:,} bytes")
        try:
            data = data.decode("utf-8")
        except UnicodeDecodeError:
            raise RecordError("file", "is not UTF-8 text") from None
    if isinstance(data, str):
        if len(data.encode("utf-8")) > MAX_RECORD_BYTES:
            raise RecordError("file", f"is larger than {MAX_RECORD_BYTES:,} bytes")
        try:
            data = json.loads(data, parse_constant=_reject_constant)
        except RecursionError:
            raise RecordError("json", "is nested too deeply") from None
        except json.JSONDecodeError as e:
            raise RecordError("json", f"is not valid JSON: {e.msg} (line {e.lineno}, column {e.colno})") from None
    if not isinstance(data, dict):
        raise RecordError("record", f"must be a JSON object, got {type(data).__name__}")
    if _depth(data) > MAX_DEPTH:
        raise RecordError("record", f"is nested more than {MAX_DEPTH} levels deep")
    if "assumptions" not in data:       # a bare scenario
        return Scenario.from_dict(data)
    unknown = sorted(set(data) - _TOP)
    if unknown:
        raise RecordError(unknown[0], f"is not a field of an assumptions record (known: {sorted(_TOP)})")
    if data.get("kind", RECORD_KIND) != RECORD_KIND:
        raise RecordError("kind", f"must be {RECORD_KIND!r}, got {data.get('kind')!r}")
    version = data.get("schema_version")
    if isinstance(version, bool) or version != SCHEMA_VERSION:
        raise RecordError("schema_version", f"must be {SCHEMA_VERSION}, got {version!r}")
    if not isinstance(data["assumptions"], dict):
        raise RecordError("assumptions", "must be an object")
    try:
        return Scenario.from_dict(data["assumptions"])
    except RecordError:
        raise
    except ValueError as e:
        field = getattr(e, "field", "?")
        raise RecordError(f"assumptions.{field}", str(e)) from None
    except TypeError as e:
        raise RecordError("assumptions", str(e)) from None


def verify_record(record: dict[str, Any], rtol: float = 1e-9) -> dict[str, tuple[Any, Any]]:
    """Recompute a record's numbers; return ``{field: (stored, recomputed)}`` for those that differ."""
    fresh = evaluate(read_record(record)).to_dict()
    stored = record.get("results", {})
    out = {}
    for key in _CHECKED:
        a, b = stored.get(key), fresh.get(key)
        if isinstance(a, (int, float)) and isinstance(b, (int, float)):
            if not math.isclose(a, b, rel_tol=rtol, abs_tol=1e-12):
                out[key] = (a, b)
        elif a != b:
            out[key] = (a, b)
    return out
