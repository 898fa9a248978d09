"""The command line: ``python -m bandcalc COMMAND ...``.

Each command reads design files, calls the package and prints a readable table, or JSON with
``--json``.  A file that cannot be used gets a message on stderr naming it and the problem;
the other files are still processed and the exit status is 2.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import textwrap
from collections.abc import Callable, Sequence

from . import __version__
from .analysis import Analysis, analysis_to_dict, analyze
from .design import Design, load_design
from .factors import QUANTITIES, Factor
from .spread import DEFAULT_SAMPLES, DEFAULT_SEED, MAX_SAMPLES, MIN_SAMPLES, Spread, spread, spread_to_dict
from .units import format_si

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


def _print_results(results: list, status: int, as_json: bool) -> int:
    """Print JSON (one object, or a list for several files) or the tables; return the status."""
    if as_json:
        if results:
            _emit_json(results)
    else:
        print("\n\n".join(results))
    return status


def _cmd_analyze(args: argparse.Namespace) -> int:
    def work(path: str, design: Design) -> object:
        a = analyze(design)
        return {"file": path, **analysis_to_dict(a)} if args.json else _analysis_table(path, a)

    return _print_results(*_for_each_file(args.files, work), as_json=args.json)


def _factor_value(f: Factor, value: float) -> str:
    if f.unit == "degC":
        return f"{value:g} C"
    if f.unit == "ppm/K":
        return f"{value:+g} ppm/K"
    return format_si(value, f.unit, 4)


def _volts(x: float) -> str:
    return format_si(x, "V", 4)


def _window(quantity: str, low: float, high: float) -> str:
    v = _volts
    if math.isinf(high):
        return f"{quantity} at least {v(low)}"
    return f"{quantity} at most {v(high)}" if math.isinf(low) else f"{quantity} {v(low)} to {v(high)}"


def _short(name: str) -> str:
    return name.removeprefix("resistors.")


def _spread_table(path: str, s: Spread) -> str:
    v = _volts
    wc, mc, se = s.worst_case, s.monte_carlo, s.sensitivity
    wrap = lambda text: textwrap.fill(text, 100, initial_indent="    ", subsequent_indent="      ")  # noqa: E731
    by_name = {f.name: f for f in s.factors}
    lines = [f"{s.design.name or '(unnamed design)'}  [{path}]", "  varied:"]
    lines += [wrap(f"{_short(f.name)} {_factor_value(f, f.low)} to {_factor_value(f, f.high)} ({f.origin})")
              for f in s.factors] or ["    nothing: every part is exact"]
    rows = [("nominal", wc.nominal), ("worst-case min", {q: getattr(wc, q).min for q in QUANTITIES}),
            ("worst-case max", {q: getattr(wc, q).max for q in QUANTITIES}),
            ("mean", {q: getattr(mc, q).mean for q in QUANTITIES}),
            ("std deviation", {q: getattr(mc, q).std for q in QUANTITIES})]
    rows += [(f"{p:g} % of builds", {q: getattr(mc, q).percentiles[p] for q in QUANTITIES})
             for p in (0.135, 99.865)]
    spread_kind = ("normal, tolerance = 3 sigma" if s.tolerances.distribution == "normal"
                   else "uniform within the tolerance")
    lines.append(f"  Monte Carlo: {mc.samples:,} builds, {spread_kind}, seed {mc.seed}")
    lines.append(f"  {'':<18} {'upper':>12} {'lower':>12} {'hysteresis':>12}")
    lines += [f"  {label:<18} " + " ".join(f"{v(vals[q]):>12}" for q in QUANTITIES) for label, vals in rows]
    y = mc.build_yield
    if y is not None:
        windows = ", ".join(_window(q, lo, hi) for q, (lo, hi) in y.windows.items())
        lines.append(wrap(f"yield: {100 * y.fraction:.3f} % of builds inside {windows} "
                          f"(95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} %)")[2:])
    lines.append(f"  worst corners ({wc.method}):")
    for q in QUANTITIES:
        for end in ("min", "max"):
            corner = getattr(getattr(wc, q), f"{end}_corner")
            at = ", ".join(f"{_short(k)} {_factor_value(by_name[k], x)}" for k, x in corner.items())
            lines.append(wrap(f"{q} {end} {v(getattr(getattr(wc, q), end))} at: {at or 'nominal'}"))
    lines.append("  largest shares of the variance (first order):")
    for q in QUANTITIES:
        top = [f"{_short(sh.factor)} {100 * sh.share:.0f} %" for sh in getattr(se, q)[:4]
               if sh.share >= 0.005]
        lines.append(wrap(f"{q}: {', '.join(top) or 'none'}"))
    for title, items in (("notes", s.notes), ("cautions", s.cautions)):
        if items:
            lines.append(f"  {title}:")
            lines += [wrap(f"- {item}") for item in items]
    return "\n".join(lines)


def _samples(text: str) -> int:
    try:
        n = int(text.replace("_", "").replace(",", ""))
    except ValueError:
        n = 0
    if not MIN_SAMPLES <= n <= MAX_SAMPLES:
        raise argparse.ArgumentTypeError(f"must be a whole number from {MIN_SAMPLES:,} to {MAX_SAMPLES:,}, "
                                         f"got {text!r}")
    return n


def _seed(text: str) -> int:
    if not text.isdigit():
        raise argparse.ArgumentTypeError(f"must be a whole number, 0 or more, got {text!r}")
    return int(text)


def _progress(done: int, total: int) -> None:
    if total >= 1_000_000 and sys.stderr.isatty():
        end = "\n" if done == total else ""
        print(f"\r  sampling: {done:,} of {total:,} builds", end=end, file=sys.stderr, flush=True)


def _cmd_spread(args: argparse.Namespace) -> int:
    def work(path: str, design: Design) -> object:
        s = spread(design, samples=args.samples, seed=args.seed, progress=_progress)
        return {"file": path, **spread_to_dict(s)} if args.json else _spread_table(path, s)

    return _print_results(*_for_each_file(args.files, work), as_json=args.json)


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m bandcalc",
                                     description="Design comparator stages with hysteresis.")
    parser.add_argument("--version", action="version", version=f"bandcalc {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    p = sub.add_parser("analyze", help="switching points, levels and findings of design files")
    p.add_argument("files", nargs="+", metavar="FILE", help="design file(s) (JSON)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_analyze)
    p = sub.add_parser("spread", help="worst case, Monte Carlo yield and sensitivity of the switching points")
    p.add_argument("files", nargs="+", metavar="FILE", help="design file(s) (JSON)")
    p.add_argument("--samples", type=_samples, default=DEFAULT_SAMPLES, metavar="N",
                   help=f"Monte Carlo builds, {MIN_SAMPLES:,} to {MAX_SAMPLES:,} "
                        f"(default {DEFAULT_SAMPLES:,})")
    p.add_argument("--seed", type=_seed, default=DEFAULT_SEED, metavar="S",
                   help=f"random seed; the same seed gives the same numbers (default {DEFAULT_SEED})")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_spread)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    args = _parser().parse_args(argv)
    return args.run(args)
