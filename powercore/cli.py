"""The ``powerlens`` command line: compute, batch, designs, example, serve.

The core raises named errors; this module turns them into messages at the edge.
"""
from __future__ import annotations

import argparse
import json
import sys
from typing import Any, Sequence

from .design import designs
from .engine import evaluate
from .errors import InvalidParameter, NoSolution, RecordError
from .record import make_record, read_record
from .scenario import DIRECTIONS, FINDS, Scenario

__all__ = ["main", "scenario_from_args"]

EXAMPLE = {  # invented scenario, for demonstration only
    "design": "two-means-t", "find": "n", "direction": "two-sided", "alpha": 0.05, "target_power": 0.9,
    "params": {"delta": 4.0, "sd": 9.0, "ratio": 1.0},
}


def _error_obj(e: Exception) -> dict[str, Any]:
    return {"field": getattr(e, "field", None), "message": str(e), "kind": type(e).__name__}


def _parse_value(text: str) -> Any:
    low = text.strip().lower()
    if low in ("true", "false"):
        return low == "true"
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        return text


def scenario_from_args(args: argparse.Namespace) -> Scenario:
    """Build a scenario from ``--json``/``--file`` (if given) overlaid with the flags."""
    data: dict[str, Any] = {}
    if args.json is not None or args.file is not None:
        text = args.json if args.json is not None else _read(args.file)
        data = read_record(text).to_dict()   # a bare scenario or a whole record
    for key in ("design", "find", "direction", "alpha", "target_power", "n"):
        value = getattr(args, key)
        if value is not None:
            data[key] = value
    params = dict(data.get("params") or {})
    for item in args.param or []:
        name, sep, value = item.partition("=")
        if not sep:
            raise InvalidParameter("param", "must look like NAME=VALUE", item)
        params[name.strip()] = _parse_value(value)
    if params:
        data["params"] = params
    return Scenario.from_dict(data)


def _read(path: str) -> str:
    if path == "-":
        return sys.stdin.read()
    with open(path, encoding="utf-8") as fh:
        return fh.read()


def _text(result) -> str:
    lines = [f"{result.design_title}",
             f"  power {result.power:.4f} (β = {result.beta:.4f}) at α = {result.alpha:.4g}, "
             f"{result.solved.direction}",
             f"  n = {result.n} {result.n_unit}"
             + (f"; groups {list(result.group_sizes)}, total {result.total} {result.total_unit}"
                if len(result.group_sizes) > 1 else ""),
             f"  effect {result.effect:.6g} (standardized {result.standardized_name} = "
             f"{result.standardized_effect:.4g})"]
    ss = result.sample_size
    if ss is not None:
        below = "" if ss.n_below is None else f"; at n = {ss.n_below}: {ss.power_below:.4f}"
        lines.append(f"  required n for power {ss.target:g}: {ss.n} {result.n_unit} (power {ss.power:.4f}{below}); "
                     f"total {ss.total}")
        if ss.stays_from != ss.n:
            lines.append(f"  exact test: power stays at or above the target from n = {ss.stays_from} "
                         f"(checked to {ss.checked_to})")
    det = {k: v for k, v in result.detectable.items() if v is not None}
    if det:
        lines.append("  smallest detectable effect: " + ", ".join(f"{k} {v:.6g}" for k, v in det.items()))
    lines.append("  working:")
    lines += [f"    {i}. {s.label}: {s.text}" for i, s in enumerate(result.working, 1)]
    lines += [f"  note: {m}" for m in result.messages.values()]
    return "\n".join(lines)


def _cmd_compute(args) -> int:
    if args.batch:
        return _batch(sys.stdin, sys.stdout)
    try:
        result = evaluate(scenario_from_args(args))
    except (InvalidParameter, NoSolution, RecordError) as e:
        print(f"powerlens: {e}", file=sys.stderr)
        if not args.text:
            print(json.dumps({"error": _error_obj(e)}))
        return 2
    print(_text(result) if args.text else json.dumps(result.to_dict(), ensure_ascii=False, indent=1))
    return 0


def _batch(stream, out) -> int:
    """One scenario per JSON line in, one result (or error object) per line out; the batch goes on."""
    failures = 0
    for lineno, line in enumerate(stream, 1):
        if not line.strip():
            continue
        try:
            data = json.loads(line)
            row = {"line": lineno, "result": evaluate(Scenario.from_dict(data)).to_dict()}
        except json.JSONDecodeError as e:
            failures += 1
            row = {"line": lineno, "error": {"field": "json", "message": f"invalid JSON: {e.msg}",
                                             "kind": "RecordError"}}
        except (InvalidParameter, NoSolution, RecordError, TypeError) as e:
            failures += 1
            row = {"line": lineno, "error": _error_obj(e)}
        out.write(json.dumps(row, ensure_ascii=False) + "\n")
        out.flush()
    return 0 if failures == 0 else 1


def _cmd_record(args) -> int:
    try:
        scenario = scenario_from_args(args)
        record = make_record(scenario, curves=not args.no_curves)
    except (InvalidParameter, NoSolution, RecordError) as e:
        print(f"powerlens: {e}", file=sys.stderr)
        return 2
    text = json.dumps(record, ensure_ascii=False, indent=1) + "\n"
    if args.out:
        with open(args.out, "w", encoding="utf-8") as fh:
            fh.write(text)
        print(f"wrote {args.out}", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return 0


def _cmd_simulate(args) -> int:
    from .simulate import simulate

    def progress(done, total):
        print(f"\rsimulated {done:,} of {total:,} studies", end="", file=sys.stderr, flush=True)
    try:
        scenario = scenario_from_args(args)
        res = simulate(scenario, reps=args.reps, seed=args.seed, progress=None if args.quiet else progress)
    except (InvalidParameter, NoSolution, RecordError) as e:
        print(f"powerlens: {e}", file=sys.stderr)
        return 2
    if not args.quiet:
        print(file=sys.stderr)
    if args.record:
        record = make_record(scenario, curves=False)
        record["simulation"] = res.to_dict()
        print(json.dumps(record, ensure_ascii=False, indent=1))
    else:
        print(json.dumps(res.to_dict(), ensure_ascii=False, indent=1))
    return 0


def _cmd_designs(args) -> int:
    for d in designs():
        print(f"{d.id:26s} {d.title}")
        print(f"{'':26s}   n counts {d.n.unit} (at least {d.n.minimum}); standardized effect {d.standardized_name}")
        for s in d.params:
            print(f"{'':26s}   {s.name:11s} {s.label} [{s.unit or '-'}], default {s.default}, domain "
                  f"{s.domain_text()}"
                  + (f" (used when {s.used_when[0]} is {s.used_when[1]})" if s.used_when else ""))
    return 0


def _cmd_example(args) -> int:
    print("Worked example (an invented scenario, not from any real study): a trial of a made-up\n"
          "hand-exercise programme; grip strength differs by 4 kg between arms, SD 9 kg.\n")
    result = evaluate(Scenario.from_dict(EXAMPLE))
    print(_text(result))
    print("\nTry your own:  powerlens compute --design two-means-t -p delta=4 -p sd=9 --find n --text")
    return 0


def _cmd_serve(args) -> int:
    from app import server  # the web layer is imported only when asked for
    return server.run(args)


def _scenario_flags(c: argparse.ArgumentParser) -> None:
    c.add_argument("--design", choices=[d.id for d in designs()])
    c.add_argument("--find", choices=FINDS)
    c.add_argument("--direction", choices=DIRECTIONS)
    c.add_argument("--alpha", type=float)
    c.add_argument("--target-power", dest="target_power", type=float)
    c.add_argument("--n", type=int, help="sample size in the design's unit (see `powerlens designs`)")
    c.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="a design parameter: a number, true/false, or one of a choice's names "
                        "(e.g. -p parent=laplace; see `powerlens designs`)")
    c.add_argument("--json", help="a scenario or a whole assumptions record, as a JSON string")
    c.add_argument("--file", help="read the scenario or record from this JSON file ('-' for stdin)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="powerlens", description="Plan the size of a study.")
    sub = parser.add_subparsers(dest="command", required=True)

    c = sub.add_parser("compute", help="evaluate one scenario (flags, JSON or a record), or a JSON Lines batch")
    _scenario_flags(c)
    c.add_argument("--batch", action="store_true",
                   help="read one scenario per line (JSON Lines) from stdin, write one result per line")
    c.add_argument("--text", action="store_true", help="print a readable summary instead of JSON")
    c.set_defaults(func=_cmd_compute)

    r = sub.add_parser("record", help="write the assumptions record (JSON) of a scenario")
    _scenario_flags(r)
    r.add_argument("--out", help="write to this file instead of standard output")
    r.add_argument("--no-curves", action="store_true", help="leave the curve data out")
    r.set_defaults(func=_cmd_record)

    m = sub.add_parser("simulate", help="confirm a scenario's power by simulating the study")
    _scenario_flags(m)
    m.add_argument("--reps", type=int, default=10_000, help="number of simulated studies (default 10000)")
    m.add_argument("--seed", type=int, default=None, help="random seed (printed in the result; default: fresh)")
    m.add_argument("--record", action="store_true", help="print the whole record with the simulation in it")
    m.add_argument("--quiet", action="store_true", help="no progress on stderr")
    m.set_defaults(func=_cmd_simulate)

    sub.add_parser("designs", help="list the designs and their parameters").set_defaults(func=_cmd_designs)
    sub.add_parser("example", help="print a worked example").set_defaults(func=_cmd_example)

    s = sub.add_parser("serve", help="start the explorer page on 127.0.0.1")
    try:
        from app import server
        server.add_arguments(s)
    except ImportError:  # pragma: no cover - the web layer is optional for the core
        pass
    s.set_defaults(func=_cmd_serve)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except BrokenPipeError:  # output piped into `head` and the like
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())
