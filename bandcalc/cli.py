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
from pathlib import Path

import numpy as np

from . import __version__
from .analysis import Analysis, analysis_to_dict, analyze
from .design import Design, load_design
from .signal import design_points, run_design
from .sweep import sweep_design
from .units import format_si, format_value
from .waveform import synthesize

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
        ("watched upper", f"{format_value(w.upper, unit)}  (the stage's {stage_up} point; "
                          f"rising through it sets the output {rising})"),
        ("watched lower", f"{format_value(w.lower, unit)}  (the stage's {stage_low} point; "
                          f"falling through it sets the output {falling})"),
        ("watched hysteresis", format_value(w.hysteresis, unit)),
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


def _synthetic(args: argparse.Namespace, design: Design):
    """The synthetic signal of the options; offset and amplitude default to the design's band."""
    upper, lower, _ = design_points(design)
    offset = 0.5 * (upper + lower) if args.offset is None else args.offset
    amplitude = upper - lower if args.amplitude is None else args.amplitude
    return synthesize(args.shape, offset, amplitude, args.frequency, args.duration, args.rate,
                      noise_rms=args.noise, hum_amplitude=args.hum, hum_frequency=args.hum_frequency,
                      seed=args.seed)


def _signal_dict(run, sweep, unit: str) -> dict:
    delays = run.edge_delays
    finite = delays[np.isfinite(delays)] if delays is not None else np.array([])
    out = {
        "unit": unit, "upper": run.upper, "lower": run.lower, "edges": run.edge_count,
        "edge_times": run.edge_times.tolist(), "edge_directions": run.edge_directions.tolist(),
        "clean_edges": run.clean_edge_count, "extra_edges": run.extra_edges, "missed": run.missed_count,
        "delay_mean": float(finite.mean()) if finite.size else None,
        "delay_max": float(finite.max()) if finite.size else None,
        "output_high_fraction": run.output_high_fraction,
        "noise_rms": run.noise.rms, "noise_peak_to_peak": run.noise.peak_to_peak,
        "findings": list(run.findings),
    }
    if sweep is not None:
        out["sweep"] = {"centre": sweep.centre, "widths": sweep.widths.tolist(),
                        "edge_counts": sweep.edge_counts.tolist(), "best_width": sweep.best_width,
                        "best_mean_delay": sweep.best_mean_delay, "best_max_delay": sweep.best_max_delay}
    return out


def _signal_table(path: str, d: dict) -> str:
    v = lambda x: format_value(x, d["unit"])  # noqa: E731
    s = lambda x: "n/a" if x is None else format_si(x, "s")  # noqa: E731
    rows = [("points", f"{v(d['upper'])} / {v(d['lower'])}"),
            ("edges", f"{d['edges']} (noise-free signal: {d['clean_edges']})"),
            ("delay mean / max", f"{s(d['delay_mean'])} / {s(d['delay_max'])}"),
            ("output high", f"{100 * d['output_high_fraction']:.1f} % of the time"),
            ("noise", f"{v(d['noise_rms'])} RMS, about {v(d['noise_peak_to_peak'])} peak-to-peak")]
    if d["unit"] != "V":
        rows.insert(0, ("signal", f"the watched quantity, in {d['unit']}"))
    if "sweep" in d:
        best = d["sweep"]["best_width"]
        rows.append(("narrowest clean width", "none in the sweep" if best is None else
                     f"{v(best)} (mean delay {s(d['sweep']['best_mean_delay'])})"))
    lines = [f"signal check  [{path}]"] + [f"  {k:<22} {val}" for k, val in rows]
    lines += ["  findings:"] + [f"    - {f}" for f in d["findings"]]
    return "\n".join(lines)


def _cmd_signal(args: argparse.Namespace) -> int:
    from .wavefile import read_waveform_csv  # pandas: imported only when a command needs it

    recorded = None
    if args.csv:
        try:
            recorded = read_waveform_csv(args.csv)
        except ValueError as exc:
            print(f"bandcalc: {args.csv}: {exc}", file=sys.stderr)
            return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> object:
        wave = recorded if recorded is not None else _synthetic(args, design)
        unit = design.front_end.unit if design.front_end is not None else "V"
        d = _signal_dict(run_design(design, wave), sweep_design(design, wave) if args.sweep else None, unit)
        return {"file": path, **d} if args.json else _signal_table(path, d)

    results, status = _for_each_file([args.file], work)
    if results:
        _emit_json(results) if args.json else print(results[0])
    return status


def _cmd_report(args: argparse.Namespace) -> int:
    from .report import design_summary

    def work(path: str, design: Design) -> object:
        return design_summary(design)

    results, status = _for_each_file([args.file], work)
    if not results:
        return status
    if args.output:
        try:
            Path(args.output).write_text(results[0], encoding="utf-8")
        except OSError as exc:
            print(f"bandcalc: {args.output}: cannot write the summary ({exc.strerror})", file=sys.stderr)
            return EXIT_BAD_INPUT
    else:
        print(results[0], end="")
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

    p = sub.add_parser("signal", help="run a recorded or synthetic signal through a design")
    p.add_argument("file", metavar="FILE", help="design file (JSON)")
    p.add_argument("--csv", metavar="WAVE.csv", help="recorded signal: time (s) and volts columns")
    p.add_argument("--shape", default="sine", choices=["sine", "triangle", "ramp", "steps"])
    p.add_argument("--offset", type=float, default=None, help="V (default: the design's centre)")
    p.add_argument("--amplitude", type=float, default=None, help="V (default: the design's hysteresis)")
    p.add_argument("--frequency", type=float, default=50.0, help="Hz")
    p.add_argument("--duration", type=float, default=0.1, help="s")
    p.add_argument("--rate", type=float, default=100e3, help="samples per second")
    p.add_argument("--noise", type=float, default=0.0, help="Gaussian noise, V RMS")
    p.add_argument("--hum", type=float, default=0.0, help="mains hum amplitude, V")
    p.add_argument("--hum-frequency", type=float, default=50.0, choices=[50.0, 60.0])
    p.add_argument("--seed", type=int, default=1, help="noise generator seed (runs repeat)")
    p.add_argument("--sweep", action="store_true", help="also sweep the hysteresis width")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_signal)

    p = sub.add_parser("report", help="write the design summary (Markdown)")
    p.add_argument("file", metavar="FILE", help="design file (JSON)")
    p.add_argument("-o", "--output", metavar="OUT.md", help="write to this file instead of printing")
    p.set_defaults(run=_cmd_report)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    args = _parser().parse_args(argv)
    try:
        return args.run(args)
    except BrokenPipeError:  # output piped into a reader that stopped early (| head)
        sys.stderr.close()
        return 0
