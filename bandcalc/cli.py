"""The command line: ``python -m bandcalc COMMAND ...``.

Each command reads design files, calls the package and prints a readable table, or JSON with
``--json``.  A file that cannot be used gets a message on stderr naming it and the problem;
the other files are still processed and the exit status is 2.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable, Sequence

from . import __version__
from .analysis import Analysis, analysis_to_dict, analyze
from .design import Design, load_design
from .fit import Candidate, FitResult, fit, fit_to_dict
from .units import format_ohms, format_si, parse_quantity, parse_resistance

__all__ = ["main"]

EXIT_BAD_INPUT = 2


def _describe(d: Design) -> str:
    supply = (f"single supply {format_si(d.supply.positive, 'V')}" if d.supply.negative == 0
              else f"supply {format_si(d.supply.negative, 'V')} / {format_si(d.supply.positive, 'V')}")
    return f"{d.stage} stage, {supply}, {d.output.kind} output"


def _analysis_table(path: str, a: Analysis) -> str:
    v = lambda x: format_si(x, "V", 4)  # noqa: E731
    rows = [
        ("stage", _describe(a.design)),
        ("upper point", v(a.upper)),
        ("lower point", v(a.lower)),
        ("hysteresis", v(a.hysteresis)),
        ("centre", v(a.centre)),
        ("output high / low", f"{v(a.output_high)} / {v(a.output_low)}"),
        ("network current", format_si(a.network_current, "A")),
    ]
    lines = [f"{a.design.name or '(unnamed design)'}  [{path}]"]
    lines += [f"  {k:<18} {val}" for k, val in rows]
    for title, items in (("findings", a.findings), ("cautions", a.cautions)):
        if items:
            lines.append(f"  {title}:")
            lines += [f"    - {item}" for item in items]
    return "\n".join(lines)


def _for_each_file(paths: Sequence[str], work: Callable[[str, Design], object]) -> tuple[list, int]:
    """Run ``work`` on each loadable design; report bad files on stderr and keep going."""
    results, status = [], 0
    for path in paths:
        try:
            results.append(work(path, load_design(path)))
        except ValueError as exc:
            msg = str(exc)
            print(f"bandcalc: {msg if msg.startswith(path) else f'{path}: {msg}'}", file=sys.stderr)
            status = EXIT_BAD_INPUT
    return results, status


def _emit_json(objects: list) -> None:
    print(json.dumps(objects[0] if len(objects) == 1 else objects, indent=2))


def _cmd_analyze(args: argparse.Namespace) -> int:
    def work(path: str, design: Design) -> object:
        a = analyze(design)
        return {"file": path, **analysis_to_dict(a)} if args.json else _analysis_table(path, a)

    results, status = _for_each_file(args.files, work)
    if args.json:
        if results:
            _emit_json(results)
    else:
        print("\n\n".join(results))
    return status


def _fit_table(path: str, r: FitResult, code: bool) -> str:
    v = lambda x: format_si(x, "V", 4)  # noqa: E731
    ohms = lambda x: format_ohms(x, code)  # noqa: E731

    def value(c: Candidate, position: str) -> float:
        return getattr(c.reference, position.split(".")[1]) if "." in position else c.resistors[position]

    head = ["#", *r.fitted, "upper", "lower", "worst error", "current"]
    rows = [[str(i), *(ohms(value(c, p)) for p in r.fitted), v(c.upper), v(c.lower),
             format_si(c.worst_error, "V"), format_si(c.network_current, "A")]
            for i, c in enumerate(r.candidates, 1)]
    widths = [max(len(row[j]) for row in [head, *rows]) for j in range(len(head))]
    lines = [f"{r.design.name or '(unnamed design)'}  [{path}]",
             f"  targets   upper {v(r.upper)}, lower {v(r.lower)}",
             f"  fitting   {', '.join(r.fitted)} from {r.series}, {format_ohms(r.min_ohms, code)} to "
             f"{format_ohms(r.max_ohms, code)}"]
    for title, items in (("cannot meet the targets exactly", r.problems), ("notes", r.notes)):
        if items:
            lines.append(f"  {title}:")
            lines += [f"    - {item}" for item in items]
    lines += ["  " + "  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip()
              for row in [head, *rows]]
    if r.exact is not None:
        exact = ", ".join(f"{p} {format_ohms(value(r.exact, p), code, 4)}" for p in r.fitted)
        lines.append(f"  exact     {exact}")
    return "\n".join(lines)


def _cmd_fit(args: argparse.Namespace) -> int:
    try:
        upper = parse_quantity(args.upper, "V", "--upper")
        lower = parse_quantity(args.lower, "V", "--lower")
        low_ohms = parse_resistance(args.min_ohms, "--min-ohms")
        high_ohms = parse_resistance(args.max_ohms, "--max-ohms")
        fixed = {}
        for item in args.hold:
            key, sep, text = item.partition("=")
            if not sep:
                raise ValueError(f"--hold: write KEY=R, e.g. feedback=1M2; got {item!r}")
            fixed[key.strip()] = parse_resistance(text, f"--hold {key.strip()}")
    except ValueError as exc:
        print(f"bandcalc: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> FitResult:
        return fit(design, upper, lower, series=args.series, min_ohms=low_ohms, max_ohms=high_ohms,
                   count=args.count, fixed=fixed, add_leg=not args.no_extra_leg)

    results, status = _for_each_file([args.file], work)
    if not results:
        return status
    result = results[0]
    if args.json:
        _emit_json([{"file": args.file, **fit_to_dict(result)}])
    else:
        print(_fit_table(args.file, result, args.code))
    return EXIT_BAD_INPUT if result.problems else 0


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m bandcalc",
                                     description="Design comparator stages with hysteresis.")
    parser.add_argument("--version", action="version", version=f"bandcalc {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    p = sub.add_parser("analyze", help="switching points, levels and findings of design files")
    p.add_argument("files", nargs="+", metavar="FILE", help="design file(s) (JSON)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_analyze)
    p = sub.add_parser("fit", help="standard resistor values that place the switching points you want")
    p.add_argument("file", metavar="FILE",
                   help="design file (JSON); its resistor values are only a starting point")
    p.add_argument("--upper", required=True, metavar="V", help="wanted upper switching point, volts")
    p.add_argument("--lower", required=True, metavar="V", help="wanted lower switching point, volts")
    p.add_argument("--series", default="E24", help="IEC 60063 series, E3 to E192 (default E24)")
    p.add_argument("--min-ohms", default="1k", metavar="R", help="smallest value allowed (default 1k)")
    p.add_argument("--max-ohms", default="10M", metavar="R", help="largest value allowed (default 10M)")
    p.add_argument("--count", type=int, default=5, metavar="N", help="candidates to list (default 5)")
    p.add_argument("--hold", action="append", default=[], metavar="KEY=R",
                   help="hold a resistor at a value, e.g. feedback=1M2 (repeat for more)")
    p.add_argument("--no-extra-leg", action="store_true",
                   help="never add a leg to the + pin, even where the stage needs one")
    p.add_argument("--code", action="store_true", help="print resistances in the IEC 60062 code (4k7)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_fit)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    args = _parser().parse_args(argv)
    return args.run(args)
