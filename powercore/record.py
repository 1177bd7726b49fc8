"""The assumptions record: scenario, results, working, curves, versions, cautions, justification.

``make_record`` builds it, optionally with the basis of the assumed effect and a list of
pinned scenarios (name, assumptions, key results, justification) to compare with; ``read_record``
checks size, JSON syntax, structure and version and returns the main scenario, naming the field at
fault; ``read_pinned`` returns the pinned scenarios (``pinned[2].assumptions.alpha``-style fields
in its errors) and ``read_basis`` the basis; ``verify_record`` recomputes the numbers and lists any
that differ from those stored.
"""
from __future__ import annotations

import datetime as _dt
import json
import math
import platform
from typing import Any, Callable, Iterable, NamedTuple

import numpy as np
import scipy

from .curves import curve_effect, curve_n, densities, effect_range, n_range
from .engine import evaluate
from .errors import RecordError
from .design import get_design
from .justification import check_basis, cautions_for, justification
from .result import Result
from .scenario import SCHEMA_VERSION, Scenario

__all__ = ["MAX_NAME", "MAX_PINNED", "MAX_RECORD_BYTES", "PINNED_KEYS", "RECORD_KIND", "Pinned", "check_pin_name",
           "make_record", "pinned_entry", "read_basis", "read_pinned", "read_record", "verify_record"]

RECORD_KIND = "powerlens.assumptions-record"
MAX_RECORD_BYTES = 2_000_000   # far below the ~15 MB at which a browser session's connection dies
MAX_DEPTH = 12
_TOP = {"kind", "schema_version", "created", "software", "assumptions", "results", "working",
        "curves", "cautions", "justification", "simulation", "extras", "basis", "pinned"}
_CHECKED = ("power", "n", "total", "alpha", "effect", "standardized_effect")
MAX_PINNED = 6     # scenarios pinned beside the main one
MAX_NAME = 40      # characters in a pinned scenario's name
#: fields of one pinned entry; ``results`` holds these keys of ``Result.to_dict``
PINNED_KEYS = ("name", "assumptions", "results", "justification", "unit_name", "basis")
_PINNED_RESULTS = ("design_title", "power", "beta", "n", "n_unit", "group_sizes", "total", "total_unit", "alpha",
                   "alpha_test", "enrolled_sizes", "enrolled_total", "effect", "standardized_effect",
                   "standardized_name", "sample_size", "detectable", "notes")


class Pinned(NamedTuple):
    """A scenario pinned beside the main one: its name, the scenario, the planner's unit name and the
    basis of its assumed effect (a key of ``justification.BASES``); ``result`` saves evaluating again."""

    name: str
    scenario: Scenario
    unit_name: str = ""
    basis: str | None = None
    result: Result | None = None


def check_pin_name(name: object, taken: Iterable[str] = (), field: str = "name") -> str:
    """The trimmed name, or RecordError naming ``field``: text, 1 to MAX_NAME characters, not taken."""
    if not isinstance(name, str):
        raise RecordError(field, f"must be text, got {type(name).__name__}")
    name = name.strip()
    if not name:
        raise RecordError(field, "must not be empty")
    if len(name) > MAX_NAME:
        raise RecordError(field, f"must be at most {MAX_NAME} characters, got {len(name)}")
    if name in set(taken):
        raise RecordError(field, f"{name!r} is already used by another pinned scenario")
    return name


def _version() -> str:
    from . import __version__
    return __version__


def _method(result: Result) -> dict[str, str]:
    d = get_design(result.scenario.design)
    return {"test": d.test, "method": d.method}


def pinned_entry(pin: Pinned | tuple) -> dict[str, Any]:
    """One JSON-ready entry of a record's ``pinned`` list."""
    pin = Pinned(*pin)
    result = evaluate(pin.scenario) if pin.result is None else pin.result
    body = result.to_dict()
    entry: dict[str, Any] = {
        "name": pin.name,
        "assumptions": pin.scenario.to_dict(),
        "results": {**{k: body[k] for k in _PINNED_RESULTS}, **_method(result)},
        "justification": justification(result, _version(), pin.basis, pin.unit_name),
    }
    if pin.unit_name:
        entry["unit_name"] = pin.unit_name
    if pin.basis is not None:
        entry["basis"] = pin.basis
    return entry


def make_record(scenario: Scenario, result: Result | None = None, *, curves: bool = True,
                created: str | None = None, basis: str | None = None,
                pinned: Iterable[Pinned | tuple] = (), unit_name: str = "") -> dict[str, Any]:
    """The full JSON-ready record of a scenario (evaluated here unless ``result`` is given).

    ``unit_name`` (the planner's word for the data units) goes into the justification and, when
    given, into ``extras.unit_name``.

    ``basis`` (a key of ``justification.BASES``) says where the assumed effect comes from; it goes
    into the record, its cautions and its justification. ``pinned`` lists scenarios to compare
    with, each ``(name, scenario[, unit_name[, basis[, result]]])``: at most ``MAX_PINNED``, names
    trimmed, unique and at most ``MAX_NAME`` characters (else RecordError naming ``pinned[i].name``).
    """
    check_basis(basis)
    pins = [Pinned(*p) for p in pinned]
    if len(pins) > MAX_PINNED:
        raise RecordError("pinned", f"holds {len(pins)} scenarios; at most {MAX_PINNED} can be pinned")
    names: list[str] = []
    for i, pin in enumerate(pins):
        names.append(check_pin_name(pin.name, names, f"pinned[{i}].name"))
        check_basis(pin.basis, f"pinned[{i}].basis")
        pins[i] = pin._replace(name=names[-1])
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
        "results": {**body, **_method(result)},
        "working": working,
        "cautions": cautions_for(get_design(scenario.design), basis),
        "justification": justification(result, _version(), basis, unit_name),
    }
    if unit_name:
        record["extras"] = {"unit_name": unit_name}
    if basis is not None:
        record["basis"] = basis
    if pins:
        record["pinned"] = [pinned_entry(p) for p in pins]
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


def _parse(data: str | bytes | dict[str, Any]) -> dict[str, Any]:
    """Size, encoding, JSON syntax, object and depth checks; the parsed object."""
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
    return data


def read_record(data: str | bytes | dict[str, Any]) -> Scenario:
    """The main scenario stored in a record (or a bare scenario), after checking it all.

    Raises :class:`RecordError` (or :class:`InvalidParameter`) naming the field at fault. The
    ``pinned`` list is not read here (``read_pinned`` does), so a bad pin never blocks the main scenario.
    """
    data = _parse(data)
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
    check_basis(data.get("basis"))
    return _scenario(data["assumptions"], "assumptions")


def _scenario(assumptions: Any, where: str) -> Scenario:
    if not isinstance(assumptions, dict):
        raise RecordError(where, "must be an object")
    try:
        return Scenario.from_dict(assumptions)
    except RecordError as e:
        raise RecordError(f"{where}.{e.field}" if where != "assumptions" else e.field, e.problem) from None
    except ValueError as e:
        field = getattr(e, "field", "?")
        raise RecordError(f"{where}.{field}", str(e)) from None
    except TypeError as e:
        raise RecordError(where, str(e)) from None


def read_basis(data: str | bytes | dict[str, Any]) -> str | None:
    """The record's basis of the assumed effect (a key of ``justification.BASES``), or None."""
    data = _parse(data)
    return check_basis(data.get("basis")) if "assumptions" in data else None


def _pin(entry: Any, i: int, taken: list[str]) -> Pinned:
    where = f"pinned[{i}]"
    if not isinstance(entry, dict):
        raise RecordError(where, f"must be an object, got {type(entry).__name__}")
    unknown = sorted(str(k) for k in set(entry) - set(PINNED_KEYS))
    if unknown:
        raise RecordError(f"{where}.{unknown[0]}", f"is not a field of a pinned scenario (known: {list(PINNED_KEYS)})")
    for key in ("name", "assumptions"):
        if key not in entry:
            raise RecordError(f"{where}.{key}", "is required")
    name = check_pin_name(entry["name"], taken, f"{where}.name")
    unit = entry.get("unit_name", "")
    if not isinstance(unit, str) or len(unit) > MAX_NAME:
        raise RecordError(f"{where}.unit_name", f"must be text of at most {MAX_NAME} characters")
    basis = check_basis(entry.get("basis"), f"{where}.basis")
    if not isinstance(entry.get("results", {}), dict):
        raise RecordError(f"{where}.results", "must be an object")
    if not isinstance(entry.get("justification", ""), str):
        raise RecordError(f"{where}.justification", "must be text")
    return Pinned(name, _scenario(entry["assumptions"], f"{where}.assumptions"), unit, basis)


def read_pinned(data: str | bytes | dict[str, Any],
                on_error: Callable[[RecordError], None] | None = None) -> list[Pinned]:
    """The record's pinned scenarios, each checked; errors name the field (``pinned[2].assumptions.alpha``).

    Without ``on_error`` the first bad entry raises :class:`RecordError`; with it, each error is
    passed to ``on_error`` and the bad entry skipped, so the good ones still come back. Entries past
    ``MAX_PINNED`` are refused the same way. The stored results are not trusted: evaluate the scenarios.
    """
    data = _parse(data)
    pinned = data.get("pinned", []) if "assumptions" in data else []
    if pinned is None:
        return []
    if not isinstance(pinned, list):
        err = RecordError("pinned", f"must be a list of pinned scenarios, got {type(pinned).__name__}")
        if on_error is None:
            raise err
        on_error(err)
        return []
    out: list[Pinned] = []
    for i, entry in enumerate(pinned):
        try:
            if i >= MAX_PINNED:
                raise RecordError(f"pinned[{i}]", f"is one too many: at most {MAX_PINNED} scenarios can be pinned")
            out.append(_pin(entry, i, [p.name for p in out]))
        except RecordError as e:
            if on_error is None:
                raise
            on_error(e)
    return out


def verify_record(record: dict[str, Any], rtol: float = 1e-9) -> dict[str, tuple[Any, Any]]:
    """Recompute a record's numbers; return ``{field: (stored, recomputed)}`` for those that differ."""
    out = _compare(record.get("results", {}), evaluate(read_record(record)).to_dict(), rtol, "")
    for i, pin in enumerate(read_pinned(record)):
        stored = record["pinned"][i].get("results", {})
        out.update(_compare(stored, evaluate(pin.scenario).to_dict(), rtol, f"pinned[{i}].results."))
    return out


def _compare(stored: dict, fresh: dict, rtol: float, prefix: str) -> dict[str, tuple[Any, Any]]:
    out = {}
    for key in _CHECKED:
        a, b = stored.get(key), fresh.get(key)
        if isinstance(a, (int, float)) and isinstance(b, (int, float)):
            if not math.isclose(a, b, rel_tol=rtol, abs_tol=1e-12):
                out[prefix + key] = (a, b)
        elif a != b:
            out[prefix + key] = (a, b)
    return out
