"""Records and links of a session's scenario, with no Panel: file names, record JSON, import, URL query.

* ``base_name`` — ``powerlens_<design>_<date>``, shared by the exported pictures and the record.
* ``record_json`` — the assumptions record of the current scenario (``powercore.record.make_record``),
  with the basis of the assumed effect, the pinned scenarios, the page's own extras (the unit name)
  and the last simulation, if any.
* ``import_record`` — read a record (size first, then ``read_record``) and load it into the state, or
  return a message naming the field at fault while the state stays as it was.
* ``record_pins`` — the pinned scenarios and basis of a record that has loaded: the good pins, and a
  message for each bad one by its field (``pinned[2].assumptions.alpha``), so one bad pin costs only itself.
* ``scenario_query`` / ``apply_query`` — every scenario field plus the schema version as URL query
  fields, and back; a bad value in a link is reported by field while the valid fields still apply.
"""
from __future__ import annotations

import datetime as _dt
import json
import math
import urllib.parse
from typing import Any, Iterable, Mapping

import powercore as pc
from powercore import InvalidParameter, Scenario
from powercore.errors import RecordError
from powercore.record import MAX_RECORD_BYTES, Pinned, make_record, read_basis, read_pinned, read_record
from powercore.scenario import SCHEMA_VERSION

from .state import DEFAULT_ADJUSTMENTS, ExplorerState

__all__ = ["MAX_RECORD_BYTES", "VIEWS", "apply_query", "base_name", "import_record", "parse_query_string",
           "record_json", "record_pins", "scenario_query", "today"]

#: exported views: figure name in the document → the word in the file name
VIEWS = {"densities": "density", "power-effect": "power-effect", "power-n": "power-n"}
ADJ_KEYS = ("dropout", "comparisons", "multiplicity")
TOP_KEYS = ("design", "find", "direction", "alpha", "target_power", "n")
PARAM_PREFIX = "p."


def today() -> str:
    return _dt.datetime.now(_dt.timezone.utc).date().isoformat()


def base_name(design: str, date: str | None = None) -> str:
    safe = "".join(c if c.isalnum() or c in "-_" else "-" for c in design)
    return f"powerlens_{safe}_{date or today()}"


def current_scenario(state: ExplorerState) -> Scenario:
    """The scenario behind the views (the last good one)."""
    snap = state.snapshot
    if snap is None:
        raise InvalidParameter("scenario", "has no good values yet", None)
    return snap.scenario


def record_dict(state: ExplorerState, simulation: Mapping[str, Any] | None = None,
                pins: Iterable[Pinned] = (), basis: str | None = None) -> dict[str, Any]:
    snap = state.snapshot
    rec = make_record(snap.scenario, snap.result, basis=basis, pinned=pins, unit_name=snap.unit_name)
    if simulation is not None:
        rec["simulation"] = dict(simulation)
    return rec


def record_json(state: ExplorerState, simulation: Mapping[str, Any] | None = None,
                pins: Iterable[Pinned] = (), basis: str | None = None) -> str:
    return json.dumps(record_dict(state, simulation, pins, basis), indent=2, ensure_ascii=False, allow_nan=False)


def record_pins(data: bytes | str | dict) -> tuple[list[Pinned], str | None, dict[str, str]]:
    """(good pinned scenarios, basis, {field: problem} for each bad pin) of a record ``import_record`` took."""
    problems: dict[str, str] = {}
    pins = read_pinned(data, on_error=lambda e: problems.__setitem__(e.field, e.problem))
    try:
        basis = read_basis(data)
    except RecordError as e:   # read_record refuses such a record first; kept for direct callers
        problems[e.field] = e.problem
        basis = None
    return pins, basis, problems


def _field_words(field: str) -> str:
    return field.replace("assumptions.", "").replace("adjustments.", "")


def describe(err: Exception) -> str:
    """'field: problem' for an error from reading a record or link."""
    if isinstance(err, RecordError):
        return f"{err.field}: {err.problem}"
    if isinstance(err, InvalidParameter):
        value = "nothing" if err.value is None else repr(err.value)
        return f"{err.field}: {err.constraint}; got {value}"
    return str(err)


def import_record(state: ExplorerState, data: bytes | str, size: int | None = None) -> tuple[bool, str, str]:
    """Load a record into ``state``; returns (ok, field, message). On failure the state is unchanged."""
    size = len(data) if size is None else size
    if size > MAX_RECORD_BYTES:
        return False, "file", (f"file: is {size:,} bytes; records are at most {MAX_RECORD_BYTES:,} bytes "
                               "(nothing was read)")
    try:
        scenario = read_record(data)
        pc.evaluate(scenario)   # a record whose numbers cannot be computed is refused here, not shown half
        unit = None
        parsed = json.loads(data) if isinstance(data, (str, bytes)) else data
        extras = parsed.get("extras") if isinstance(parsed, dict) else None
        if isinstance(extras, dict) and isinstance(extras.get("unit_name"), str):
            unit = extras["unit_name"][:40]
    except (RecordError, InvalidParameter) as e:
        return False, getattr(e, "field", "record"), describe(e)
    except (ValueError, TypeError, ArithmeticError) as e:   # read but not computable
        return False, getattr(e, "field", "record"), f"{getattr(e, 'field', 'record')}: {e}"
    state.load(scenario, unit_name=unit if unit is not None else "")
    return True, "", "Record loaded."


# ---- links ---------------------------------------------------------------------------------
def _fmt(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v) if not v.is_integer() else str(int(v)) if abs(v) < 1e15 else repr(v)
    return str(v)


def scenario_query(state: ExplorerState) -> dict[str, str]:
    """Every field of the scenario behind the views, plus the schema version and unit name."""
    sc = current_scenario(state)
    q: dict[str, str] = {"v": str(SCHEMA_VERSION), "design": sc.design, "find": sc.find,
                         "direction": sc.direction, "target_power": _fmt(sc.target_power)}
    if sc.alpha is not None:
        q["alpha"] = _fmt(sc.alpha)
    if sc.n is not None:
        q["n"] = _fmt(sc.n)
    for k, v in sc.params.items():
        if v is not None:
            q[PARAM_PREFIX + k] = _fmt(v)
    for k in ADJ_KEYS:
        q[k] = _fmt(sc.adjustments.get(k, DEFAULT_ADJUSTMENTS[k]))
    if state.snapshot.unit_name:
        q["unit"] = state.snapshot.unit_name
    return q


def query_string(state: ExplorerState) -> str:
    return "?" + urllib.parse.urlencode(scenario_query(state), quote_via=urllib.parse.quote)


def parse_query_string(search: str) -> dict[str, str]:
    """'?a=1&b=2' → {'a': '1', 'b': '2'} (the last of repeated keys)."""
    return dict(urllib.parse.parse_qsl(search.lstrip("?"), keep_blank_values=True))


def _number(text: str, integer: bool = False) -> float | int:
    try:
        x = float(text)
    except ValueError:
        raise ValueError(f"is not a number: {text!r}") from None
    if not math.isfinite(x):
        raise ValueError(f"must be a finite number, got {text!r}")
    if integer:
        if not x.is_integer():
            raise ValueError(f"must be a whole number, got {text!r}")
        return int(x)
    return x


def apply_query(state: ExplorerState, query: Mapping[str, str]) -> dict[str, str]:
    """Load the scenario a link describes; returns {query field: problem} for every value refused.

    Fields are checked one by one: a value that cannot be read or that powercore refuses is
    reported and replaced by the page's current value, and the rest still apply.
    """
    query = {str(k): str(v) for k, v in query.items()}
    if not query:
        return {}
    problems: dict[str, str] = {}
    known = {"v", "unit", *TOP_KEYS, *ADJ_KEYS}
    version = query.get("v")
    if version is not None and version != str(SCHEMA_VERSION):
        problems["v"] = f"schema version {version!r} is not {SCHEMA_VERSION}; the values were read as version " \
                        f"{SCHEMA_VERSION}"
    design_id = query.get("design", state.design)
    try:
        d = pc.get_design(design_id)
    except (InvalidParameter, KeyError, ValueError):
        problems["design"] = f"no design called {design_id!r}; kept {state.design}"
        d = state.current_design()
    base = current_scenario(state) if state.snapshot is not None else None
    # start from the page's current values when they are the same design, else the design's defaults
    if base is not None and base.design == d.id:
        cand: dict[str, Any] = base.to_dict()
    else:
        cand = {"design": d.id, "params": d.defaults(), "n": d.n.default, "alpha": 0.05,
                "direction": "two-sided" if "two-sided" in getattr(d, "directions", pc.DIRECTIONS)
                else getattr(d, "directions")[0],
                "find": "power", "target_power": 0.8, "adjustments": dict(DEFAULT_ADJUSTMENTS)}
    cand["design"] = d.id
    cand["params"] = dict(cand.get("params") or d.defaults())
    cand["adjustments"] = {**DEFAULT_ADJUSTMENTS, **dict(cand.get("adjustments") or {})}
    fallback = json.loads(json.dumps(cand))
    param_names = {s.name: s for s in d.params}
    for key, text in query.items():
        try:
            if key in ("v", "design", "unit"):
                continue
            if key in ("find", "direction", "multiplicity"):
                target = cand["adjustments"] if key == "multiplicity" else cand
                target[key] = text
            elif key in ("alpha", "target_power"):
                cand[key] = _number(text)
            elif key == "n":
                cand["n"] = _number(text, integer=True)
            elif key == "dropout":
                cand["adjustments"]["dropout"] = _number(text)
            elif key == "comparisons":
                cand["adjustments"]["comparisons"] = _number(text, integer=True)
            elif key.startswith(PARAM_PREFIX) and key[len(PARAM_PREFIX):] in param_names:
                spec = param_names[key[len(PARAM_PREFIX):]]
                if spec.kind == "bool":
                    if text.lower() not in ("true", "false", "1", "0"):
                        raise ValueError(f"must be true or false, got {text!r}")
                    cand["params"][spec.name] = text.lower() in ("true", "1")
                elif spec.kind == "choice":
                    cand["params"][spec.name] = text   # the scenario refuses a name not offered
                else:
                    cand["params"][spec.name] = _number(text, integer=spec.kind == "int")
            elif key.startswith(PARAM_PREFIX):
                problems[key] = f"is not a parameter of design {d.id} (known: {', '.join(sorted(param_names))})"
            elif key not in known:
                problems[key] = "is not a field of a Powerlens link"
        except ValueError as e:
            problems[key] = str(e)
    if cand.get("find") == "n":
        cand["n"] = None
    if cand.get("find") == "alpha":
        cand["alpha"] = None
    scenario = None
    for _ in range(len(query) + 4):   # refuse one field at a time, keep the rest
        try:
            scenario = Scenario.from_dict(cand)
            break
        except InvalidParameter as e:
            field = e.field
            key = _query_key(field, param_names)
            problems.setdefault(key, f"{_constraint(e)}; got {text_of(query.get(key))}")
            if not _revert(cand, fallback, field):
                scenario = None
                break
    if scenario is None:
        problems.setdefault("link", "the link's values do not make a scenario; the page kept its view")
        return problems
    unit = query.get("unit")
    state.load(scenario, unit_name=unit[:40] if unit is not None else None)
    return problems


def text_of(text: str | None) -> str:
    return "nothing" if text is None else repr(text)


def _constraint(e: InvalidParameter) -> str:
    return e.constraint


def _query_key(field: str, param_names) -> str:
    field = field.replace("adjustments.", "")
    if field in param_names:
        return PARAM_PREFIX + field
    return field


def _revert(cand: dict, fallback: dict, field: str) -> bool:
    """Put the page's own value back for ``field``; False when there is nothing to put back."""
    name = field.replace("adjustments.", "")
    if field.startswith("adjustments.") or name in ADJ_KEYS:
        old = fallback["adjustments"].get(name, DEFAULT_ADJUSTMENTS.get(name))
        if cand["adjustments"].get(name) == old:
            return False
        cand["adjustments"][name] = old
        return True
    if name in cand["params"]:
        old = fallback["params"].get(name)
        if cand["params"].get(name) == old:
            return False
        cand["params"][name] = old
        return True
    if name in cand:
        old = fallback.get(name)
        if cand[name] == old:
            return False
        cand[name] = old
        return True
    return False
