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
from .units import format_si
from .watched import format_watched

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
    if a.watched is not None:
        rows[1:1] = _watched_rows(a)
    lines = [f"{a.design.name or '(unnamed design)'}  [{path}]"]
    lines += [f"  {k:<18} {val}" for k, val in rows]
    for title, items in (("findings", a.findings), ("cautions", a.cautions)):
        if items:
            lines.append(f"  {title}:")
            lines += [f"    - {item}" for item in items]
    return "\n".join(lines)


def _watched_rows(a: Analysis) -> list[tuple[str, str]]:
    """The points in the watched quantity, each with the volts point it comes from."""
    w, unit = a.watched, a.watched_unit or ""
    assert w is not None
    stage_up, stage_low = ("upper", "lower") if w.rises else ("lower", "upper")
    rising = a.watched_rising_output
    falling = "low" if rising == "high" else "high"
    return [
        ("watched upper", f"{format_watched(w.upper, unit)}  (the stage's {stage_up} point; "
                          f"rising through it sets the output {rising})"),
        ("watched lower", f"{format_watched(w.lower, unit)}  (the stage's {stage_low} point; "
                          f"falling through it sets the output {falling})"),
        ("watched hysteresis", format_watched(w.hysteresis, unit)),
    ]


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


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m bandcalc",
                                     description="Design comparator stages with hysteresis.")
    parser.add_argument("--version", action="version", version=f"bandcalc {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    p = sub.add_parser("analyze", help="switching points, levels and findings of design files")
    p.add_argument("files", nargs="+", metavar="FILE", help="design file(s) (JSON)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_analyze)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    args = _parser().parse_args(argv)
    return args.run(args)
