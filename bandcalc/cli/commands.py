"""The command line: ``python -m bandcalc COMMAND ...``.

Each command reads design files, calls the package and prints a readable table, or strict JSON
with ``--json``.  A file that cannot be used gets a message on stderr naming it and the problem;
the other files are still processed and the exit status is 2.  Text the user wrote is printed
with control characters escaped ("\\x1b"), so a name cannot drive the terminal.
"""

from __future__ import annotations

import argparse
import math
import sys
import textwrap
from collections.abc import Callable, Sequence
from pathlib import Path

from bandcalc import __version__
from bandcalc.cli.page_server import add_page_command
from bandcalc.cli.visible_text import visible_text
from bandcalc.errors import BandcalcError
from bandcalc.fit.grades import DEFAULT_GRADES, parse_grades
from bandcalc.fit.robust import RANKINGS
from bandcalc.fit.selection import MAX_COUNT, FitResult, builds_columns, fit, fit_to_dict
from bandcalc.model.design import Design
from bandcalc.model.design_file import load_design
from bandcalc.model.operating import Analysis, analysis_to_dict, analyze
from bandcalc.model.units import (
    format_interval,
    format_ohms,
    format_probability,
    format_si,
    format_value,
    parse_quantity,
    parse_resistance,
)
from bandcalc.outputs.netlist import BENCHES, netlist
from bandcalc.outputs.strict_json import dumps
from bandcalc.signal_check.edges import run_design, run_points
from bandcalc.signal_check.hysteresis_choice import filter_table_for, filter_table_to_dict
from bandcalc.signal_check.noise import given_disturbance
from bandcalc.signal_check.signal_json import check_to_dict, signal_to_dict
from bandcalc.signal_check.waveform import DEFAULT_NOISE_BANDWIDTH, SyntheticSignal
from bandcalc.signal_check.width_trade import DEFAULT_SEEDS, MAX_SEEDS, sweep_design
from bandcalc.spread.factors import QUANTITIES
from bandcalc.spread.propagation import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    MAX_SAMPLES,
    MIN_SAMPLES,
    Spread,
    corner_words,
    failure_places,
    spread,
    spread_to_dict,
)

__all__ = ["main"]

EXIT_BAD_INPUT = 2

# C0 controls but tab and line feed, DEL, C1 controls (ECMA-48), and lone surrogates (no UTF-8 form).


def _complain(path: str | None, message: str) -> None:
    """A message on stderr, naming the file unless the message starts with it already."""
    if path is not None and not message.startswith(path):
        message = f"{path}: {message}"
    print(f"bandcalc: {visible_text(message)}", file=sys.stderr)


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
        ("positive rail current", format_si(a.positive_rail_current, "A")),
    ]
    if a.design.front_end is not None:  # the points in the watched quantity, above the stage's volts
        rows[1:1] = _watched_rows(a)
    lines = [_heading(a.design, path)]
    lines += [f"  {k:<18} {val}" for k, val in rows]
    lines += _listed((("findings", a.warnings), ("cautions", a.cautions)))
    return "\n".join(lines)


def _heading(design: Design, path: str) -> str:
    """A table's first line: the design's name and its file, as text (user text: visible_text)."""
    return f"{visible_text(design.name) or '(unnamed design)'}  [{visible_text(path)}]"


def _listed(sections, form: Callable[[str], str] = lambda text: f"    - {text}") -> list[str]:
    """Titled lists (findings, cautions, notes); their texts may quote a name or a unit, so each
    goes through visible_text."""
    lines: list[str] = []
    for title, items in sections:
        if items:
            lines.append(f"  {title}:")
            lines += [form(visible_text(item)) for item in items]
    return lines


def _watched_rows(a: Analysis) -> list[tuple[str, str]]:
    """The points in the watched quantity, each with the volts point it comes from."""
    w, unit = a.points, visible_text(a.design.unit)
    stage_up, stage_low = ("upper", "lower") if w.rises else ("lower", "upper")
    rising = a.rising_output
    falling = "low" if rising == "high" else "high"
    return [
        ("watched upper", f"{format_value(w.upper, unit)}  (the stage's {stage_up} point; "
                          f"rising through it sets the output {rising})"),
        ("watched lower", f"{format_value(w.lower, unit)}  (the stage's {stage_low} point; "
                          f"falling through it sets the output {falling})"),
        ("watched hysteresis", format_value(w.hysteresis, unit)),
    ]


def _for_each_file(paths: Sequence[str], work: Callable[[str, Design], object]) -> tuple[list, int]:
    """Run ``work`` on each loadable design; report bad files on stderr and keep going.

    Anything else that goes wrong with one file is named with the file too, and the batch goes on:
    one file never costs the others their results.
    """
    results, status = [], 0
    for path in paths:
        try:
            results.append(work(path, load_design(path)))
        except ValueError as exc:
            _complain(path, str(exc))
            status = EXIT_BAD_INPUT
        except Exception as exc:  # noqa: BLE001 - the per-file boundary: report it, keep the batch
            _complain(path, f"internal error ({type(exc).__name__}: {exc}); the file could not be "
                            "analysed. Please report it with the file.")
            status = EXIT_BAD_INPUT
    return results, status


def _emit_json(objects: list) -> None:
    """Strict JSON: NaN and infinities become null, listed under "not_finite" (outputs.strict_json)."""
    print(dumps(objects[0] if len(objects) == 1 else objects, indent=2))


def _print_results(results: list, status: int, as_json: bool) -> int:
    """Print JSON (one object, or a list for several files) or the tables; return the status."""
    if as_json:
        if results:
            _emit_json(results)
    else:
        print(visible_text("\n\n".join(results), keep_lines=True))
    return status


def _signal_settings(design: Design):
    """The design's own signal settings, or empty ones."""
    from bandcalc.model.signal_settings import SignalSettings

    return design.signal or SignalSettings()


# synthesize's settings by the options that set them, so its messages name what the user typed.
_SIGNAL_OPTIONS = {"shape": "--shape", "offset": "--offset", "amplitude": "--amplitude",
                   "frequency": "--frequency", "duration": "--duration", "sample_rate": "--rate",
                   "noise_rms": "--noise", "hum_amplitude": "--hum", "hum_frequency": "--hum-frequency",
                   "seed": "--seed", "noise_bandwidth": "--noise-bandwidth"}
def _synthetic(args: argparse.Namespace, design: Design):
    """The synthetic signal of the options; offset and amplitude default to the design's band,
    noise and hum to the design's signal settings."""
    given = _signal_settings(design)
    upper, lower, _ = run_points(design)
    harmonics = dict(given.hum_harmonics) | dict(args.hum_harmonic)
    return SyntheticSignal(
        args.shape, 0.5 * (upper + lower) if args.offset is None else args.offset,
        upper - lower if args.amplitude is None else args.amplitude, args.frequency, args.duration, args.rate,
        noise_rms=(given.noise or 0.0) if args.noise is None else args.noise,
        hum_amplitude=(given.hum or 0.0) if args.hum is None else args.hum,
        hum_frequency=given.hum_frequency if args.hum_frequency is None else args.hum_frequency,
        seed=args.seed, noise_bandwidth=given.noise_bandwidth if args.noise_bandwidth is None
        else args.noise_bandwidth, hum_harmonics=tuple(sorted(harmonics.items())),
        names=tuple(_SIGNAL_OPTIONS.items()), unit=design.unit)


def _signal_table(path: str, d: dict) -> str:
    unit = visible_text(d["unit"])
    v = lambda x: format_value(x, unit)  # noqa: E731
    s = lambda x: "n/a" if x is None else format_si(x, "s")  # noqa: E731
    clean = "not known, a recorded signal has none" if d["clean_edges"] is None else d["clean_edges"]
    rows = [("points", f"{v(d['upper'])} / {v(d['lower'])}"),
            ("edges", f"{d['edges']} (noise-free signal: {clean})"),
            ("delay mean / max", f"{s(d['delay_mean'])} / {s(d['delay_max'])}"),
            ("output high", f"{100 * d['output_high_fraction']:.1f} % of the time"),
            ("noise", f"{v(d['noise_rms'])} RMS, flat to {format_si(d['noise_bandwidth'], 'Hz')} "
                      f"({d['noise_source']})"),
            ("noise at the stage", f"{v(d['noise_rms_at_stage'])} RMS" + (
                "" if d["filter_pole"] is None else f", behind the filter's pole at "
                                                    f"{format_si(d['filter_pole'], 'Hz')}")),
            ("parked false switching", "never expected" if d["parked_mean_time_between"] is None else
             f"once every {format_interval(d['parked_mean_time_between'])}")]
    extra = d["extra_edges_per_crossing"]
    rows.append(("extra edges per crossing", " / ".join(
        "n/a" if extra[k] is None else f"{extra[k]:.3g}" for k in ("upper", "lower")) + " (upper / lower)"))
    if d["unit"] != "V":
        rows.insert(0, ("signal", f"the watched quantity, in {unit}"))
    if "sweep" in d:
        sweep = d["sweep"]
        best, predicted = sweep["best_width"], sweep["predicted_best_width"]
        drawn = [w for w in sweep["run_best_widths"] if w is not None]
        spread = f"; each draw: {v(min(drawn))} to {v(max(drawn))}" if drawn else ""
        clean = "none in the sweep" if best is None else (
            f"{v(best)} in all {sweep['seeds']} noise draws (mean delay {s(sweep['best_mean_delay'])})")
        rows.append(("narrowest clean width", clean + spread))
        rows.append(("predicted (Rice)", "none in the sweep" if predicted is None else v(predicted)))
    lines = [f"signal check  [{visible_text(path)}]"] + [f"  {k:<26} {val}" for k, val in rows]
    if "filter_table" in d:
        table = d["filter_table"]
        lines.append(f"  hysteresis and filter for at most {table['false_edges_per_year']:g} false edge(s) "
                     f"a year (slope {format_value(table['slope'], unit + '/s', 3)}):")
        lines.append(f"    {'time constant':>14} {'pole':>10} {'hysteresis':>12} {'delay':>10}")
        for i, row in enumerate(table["rows"]):
            mark = "  <- least delay" if i == table["least_delay"] else ""
            budget = "" if row["within_budget"] else "  (over the delay budget)"
            pole = "none" if row["pole"] is None else format_si(row["pole"], "Hz")
            lines.append(f"    {format_si(row['time_constant'], 's'):>14} {pole:>10} "
                         f"{v(row['hysteresis']):>12} {format_si(row['delay'], 's'):>10}{mark}{budget}")
    lines += _listed([("findings", d["findings"]), ("model", d["simplifications"])])
    return "\n".join(lines)


def _recording(path: str):
    """The recorded signal in ``path``, or None after naming the file and the line at fault."""
    from bandcalc.signal_check.recording import read_waveform_csv  # pandas: only when a command needs it

    try:
        return read_waveform_csv(path)
    except ValueError as exc:
        _complain(path, str(exc))
        return None


def _cmd_signal(args: argparse.Namespace) -> int:
    recorded = _recording(args.csv) if args.csv else None
    if args.csv and recorded is None:
        return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> object:
        given = _signal_settings(design)
        if recorded is not None:
            wave, disturbance, signal = recorded, None, recorded
        else:
            spec = _synthetic(args, design)
            wave, signal = spec.make(), spec
            disturbance = given_disturbance(spec)
        run = run_design(design, wave, disturbance=disturbance)
        sweep = (sweep_design(design, signal, seeds=args.seeds, disturbance=run.check.source)
                 if args.sweep else None)
        target = args.false_edges_per_year or given.false_edges_per_year
        budget = args.delay_budget or given.delay_budget
        table = None if target is None else filter_table_for(
            run.check, target, budget, slope=given.slope,
            crossings_per_second=given.crossings_per_second or 0.0)
        d = signal_to_dict(run, design.unit, sweep, table)
        return {"file": path, **d} if args.json else _signal_table(path, d)

    return _print_results(*_for_each_file([args.file], work), as_json=args.json)


def _cmd_from_recording(args: argparse.Namespace) -> int:
    from bandcalc.model.design_file import save_design
    from bandcalc.signal_check.from_recording import design_from_recording

    wave = _recording(args.csv)
    if wave is None:
        return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> object:
        unit = design.unit
        where = {k: parse_quantity(getattr(args, k), unit, f"--{k}") for k in ("centre", "upper", "lower")
                 if getattr(args, k) is not None}
        made = design_from_recording(design, wave, **where, false_edges_per_year=args.false_edges_per_year,
                                     delay_budget=args.delay_budget, allow_filter=not args.no_filter,
                                     series=args.series)
        return made

    results, status = _for_each_file([args.file], work)
    if not results:
        return status
    made = results[0]
    try:
        save_design(made.design, args.output)
    except OSError as exc:
        _complain(args.output, f"cannot write the design ({exc.strerror})")
        return EXIT_BAD_INPUT
    if args.json:
        _emit_json([{"file": args.output, "steps": list(made.steps),
                     "filter_table": filter_table_to_dict(made.table),
                     "check": check_to_dict(made.check)}])
    else:
        print(visible_text(f"wrote {args.output}\n" + "\n".join(
            f"  {i}. {step}" for i, step in enumerate(made.steps, 1)), keep_lines=True))
    return status


def _cmd_report(args: argparse.Namespace) -> int:
    from bandcalc.outputs.summary import SummaryInputs, design_summary

    def work(path: str, design: Design) -> object:
        run = spread(design, samples=args.samples, seed=args.seed) if args.spread else None
        return design_summary(design, SummaryInputs(spread=run))

    results, status = _for_each_file([args.file], work)
    return _write_or_print(results[0], args.output, "the summary") if results else status


def _write_or_print(text: str, output: str | None, what: str) -> int:
    """Write ``text`` to the file ``output`` (UTF-8), or print it without one (controls escaped, line
    breaks kept); the status."""
    if not output:
        print(visible_text(text, keep_lines=True), end="")
        return 0
    try:
        Path(output).write_text(text, encoding="utf-8")
    except OSError as exc:
        _complain(output, f"cannot write {what} ({exc.strerror})")
        return EXIT_BAD_INPUT
    return 0


def _signal_defaults() -> dict:
    """The signal options and their defaults, by attribute name."""
    parser = argparse.ArgumentParser(add_help=False)
    _add_signal_options(parser)
    return vars(parser.parse_args([]))


def _cmd_netlist(args: argparse.Namespace) -> int:
    typed = [key for key in _signal_defaults() if hasattr(args, key)]  # the netlist's are suppressed
    if args.bench == "sweep" and typed:
        _complain(None, f"--{typed[0].replace('_', '-')}: describes the signal of --bench signal; the "
                        "sweep bench (the default) drives its own slow triangle")
        return EXIT_BAD_INPUT
    for key, value in _signal_defaults().items():
        if not hasattr(args, key):
            setattr(args, key, value)
    recorded = _recording(args.csv) if args.csv else None
    if args.csv and recorded is None:
        return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> str:
        if args.bench == "sweep":
            return netlist(design)
        return netlist(design, recorded if recorded is not None else _synthetic(args, design).make())

    results, status = _for_each_file([args.file], work)
    return _write_or_print(results[0], args.output, "the netlist") if results else status


def _cmd_analyze(args: argparse.Namespace) -> int:
    def work(path: str, design: Design) -> object:
        a = analyze(design)
        return {"file": path, **analysis_to_dict(a)} if args.json else _analysis_table(path, a)

    return _print_results(*_for_each_file(args.files, work), as_json=args.json)


def _window(quantity: str, low: float, high: float, unit: str) -> str:
    v = lambda x: format_value(x, unit, 4)  # noqa: E731
    if math.isinf(high):
        return f"{quantity} at least {v(low)}"
    return f"{quantity} at most {v(high)}" if math.isinf(low) else f"{quantity} {v(low)} to {v(high)}"


def _short(name: str) -> str:
    return name.removeprefix("resistors.")


def _failure_line(f) -> str:
    return (f"failure probability: {format_probability(f.probability)} (95 % interval "
            f"{format_probability(f.low)} to {format_probability(f.high)}); {f.method}")


def _spread_table(path: str, s: Spread) -> str:
    unit = visible_text(s.unit)
    v = lambda x: format_value(x, unit, 4)  # noqa: E731
    wc, mc, se = s.worst_case, s.monte_carlo, s.sensitivity
    wrap = lambda text: textwrap.fill(text, 100, initial_indent="    ", subsequent_indent="      ")  # noqa: E731
    lines = [_heading(s.design, path), "  varied:"]  # a network's name is the user's text
    lines += [wrap(visible_text(f"{_short(f.name)} {f.format(f.low)} to {f.format(f.high)} ({f.origin})"))
              for f in s.factors] or ["    nothing: every part is exact"]
    span = s.tolerances.temperature
    lines.append("  temperature: " + ("25 °C only (no range given)" if span is None else
                                      f"{span[0]:g} to {span[1]:g} °C; each build must hold at every "
                                      "temperature of the range"))
    rows = [("nominal", wc.nominal), ("worst-case min", {q: getattr(wc, q).min for q in QUANTITIES}),
            ("worst-case max", {q: getattr(wc, q).max for q in QUANTITIES}),
            ("mean", {q: getattr(mc, q).mean for q in QUANTITIES}),
            ("std deviation", {q: getattr(mc, q).std for q in QUANTITIES}),
            ("0.135 % of builds", {q: mc.lowest[q].percentiles[0.135] for q in QUANTITIES}),
            ("99.865 % of builds", {q: mc.highest[q].percentiles[99.865] for q in QUANTITIES})]
    spread_kind = {"normal": "normal, tolerance = 3 sigma", "screened": "normal cut at the tolerance",
                   "uniform": "uniform within the tolerance"}[s.tolerances.distribution]
    middle = "" if span is None else (f"; mean and std at {mc.middle:g} °C, percentiles of each build's "
                                      "extremes")
    lines.append(f"  Monte Carlo: {mc.samples:,} builds, {spread_kind}, seed {mc.seed}{middle}")
    lines.append(f"  {'':<18} {'upper':>12} {'lower':>12} {'hysteresis':>12}")
    lines += [f"  {label:<18} " + " ".join(f"{v(vals[q]):>12}" for q in QUANTITIES) for label, vals in rows]
    y = mc.build_yield
    if y is not None:
        windows = ", ".join(_window(q, lo, hi, unit) for q, (lo, hi) in y.windows.items())
        lines.append(wrap(f"yield: {100 * y.fraction:.3f} % of builds inside {windows}"
                          f"{'' if span is None else ' over the whole range'} "
                          f"(95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} %)")[2:])
        if y.failure is not None:
            lines.append(wrap(_failure_line(y.failure))[2:])
        lines += _listed((("where builds fail", failure_places(s)),), lambda text: wrap(f"- {text}"))
    lines.append(f"  worst corners ({wc.method}):")
    for q in QUANTITIES:
        for end in ("min", "max"):
            corner = getattr(getattr(wc, q), f"{end}_corner")
            at = visible_text(corner_words(s.factors, corner, _short))
            lines.append(wrap(f"{q} {end} {v(getattr(getattr(wc, q), end))} at: {at or 'nominal'}"))
    lines.append("  largest shares of the variance (first order):")
    for q in QUANTITIES:
        top = [f"{_short(sh.factor)} {100 * sh.share:.0f} %" for sh in getattr(se, q)[:4]
               if sh.share >= 0.005]
        lines.append(wrap(visible_text(f"{q}: {', '.join(top) or 'none'}")))
    lines += _listed((("model", s.simplifications), ("notes", s.notes), ("cautions", s.cautions)),
                     lambda text: wrap(f"- {text}"))
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


def _positive(unit: str) -> Callable[[str], float]:
    """An argparse type: a number above 0, SI prefixes and ``unit`` read ("10k", "2.5 kHz")."""

    def read(text: str) -> float:
        try:
            value = parse_quantity(text, unit, "value")
        except ValueError:
            value = math.nan
        if not value > 0:
            raise argparse.ArgumentTypeError(f"must be a number above 0{' in ' + unit if unit else ''}, "
                                             f"got {text!r}")
        return value

    return read


def _harmonic(text: str) -> tuple[int, float]:
    order, sep, amplitude = text.partition("=")
    try:
        k, a = int(order), float(amplitude)
    except ValueError:
        k, a = 0, math.nan
    if not sep or not 2 <= k <= 40 or not (math.isfinite(a) and a >= 0):
        raise argparse.ArgumentTypeError(f"write ORDER=AMPLITUDE, an order from 2 to 40 and an amplitude of "
                                         f"at least 0, e.g. 3=0.01; got {text!r}")
    return k, a


def _seed(text: str) -> int:
    # Digits 0-9 only: str.isdigit() also passes "²", which int() refuses, and argparse would
    # then name this function in its message.
    if not (text.isascii() and text.isdigit()):
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


def _fit_table(path: str, r: FitResult, code: bool) -> str:
    unit = visible_text(r.design.unit)
    v = lambda x: format_value(x, unit, 4)  # noqa: E731
    ohms = lambda x: format_ohms(x, code)  # noqa: E731

    extra = builds_columns(r)
    head = ["#", *r.fitted, "upper", "lower", "worst error", "current", *(h for h, _ in extra)]
    rows = [[str(i), *(ohms(c.value(p)) for p in r.fitted), v(c.upper), v(c.lower),
             format_value(c.worst_error, unit, 3), format_si(c.network_current, "A"),
             *(visible_text(cells[i - 1]) for _, cells in extra)]
            for i, c in enumerate(r.candidates, 1)]
    widths = [max(len(row[j]) for row in [head, *rows]) for j in range(len(head))]
    lines = [_heading(r.design, path),
             f"  targets   upper {v(r.upper)}, lower {v(r.lower)}"]
    if r.windows is not None:
        shown = "; ".join(f"{q} {_span(w, v)}" for q, w in r.windows.items())
        lines.append(f"  ranked    by {r.by}: windows {shown}")
        if r.grades is not None:
            offered = zip(r.grades.percents, r.grades.costs, strict=True)
            lines.append(f"  grades    {', '.join(f'{p:g} % (cost {c:g})' for p, c in offered)}")
    lines += [
             f"  fitting   {', '.join(r.fitted)} from {r.series}, {format_ohms(r.min_ohms, code)} to "
             f"{format_ohms(r.max_ohms, code)}"]
    lines += _listed((("cannot meet the targets exactly" if r.by == "nominal" else "problems", r.problems),
                      ("not proven the best", (r.stopped,) if r.stopped else ()), ("notes", r.notes),
                      ("the model assumes", r.assumptions)))
    lines += ["  " + "  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip()
              for row in [head, *rows]]
    if r.exact is not None:
        exact = ", ".join(f"{p} {format_ohms(r.exact.value(p), code, 4)}" for p in r.fitted)
        lines.append(f"  exact     {exact}")
    return "\n".join(lines)


def _span(w: tuple[float, float], v: Callable[[float], str]) -> str:
    lo, hi = w
    return f"{v(lo)} to {v(hi)}" if math.isfinite(lo) and math.isfinite(hi) else (
        f"at least {v(lo)}" if math.isfinite(lo) else f"at most {v(hi)}")


# fit's settings by the options that set them, so its messages name what the user typed.
_FIT_OPTIONS = {"series": "--series", "min_ohms": "--min-ohms", "max_ohms": "--max-ohms", "count": "--count",
                "fixed": "--hold ", "upper": "--upper", "lower": "--lower", "by": "--by",
                "grades": "--grades", "min_yield": "--min-yield"}


def _aim(text: str | None, unit: str, option: str, by: str) -> float | tuple[float, float] | None:
    """A point (X), or with --by margin or yield a window (LOWEST,HIGHEST; a side may be empty)."""
    if text is None:
        if by == "nominal":
            raise BandcalcError(f"{option}: required with --by nominal (the point wanted)")
        return None
    if "," not in text:
        return parse_quantity(text, unit, option)
    if by == "nominal":
        raise BandcalcError(f"{option}: a window (LOWEST,HIGHEST) is for --by margin or yield; give the "
                            f"point wanted, got {text!r}")
    low, _, high = text.partition(",")
    return tuple(parse_quantity(x, unit, option) if x.strip() else (math.inf if i else -math.inf)
                 for i, x in enumerate((low, high)))


def _percent(text: str) -> float:
    """An argparse type: a percentage above 0 and at most 100 (--min-yield), as a fraction."""
    try:
        value = float(text.strip().removesuffix("%"))
    except ValueError:
        value = math.nan
    if not 0 < value <= 100:
        raise argparse.ArgumentTypeError(f"must be a percentage above 0 and at most 100, got {text!r}")
    return value / 100


def _count(most: int) -> Callable[[str], int]:
    """An argparse type: a whole number from 1 to ``most`` (--count, --seeds), refused at once
    outside."""

    def read(text: str) -> int:
        count = int(text) if text.isascii() and text.isdigit() and len(text) <= 6 else 0
        if not 1 <= count <= most:
            raise argparse.ArgumentTypeError(f"must be a whole number from 1 to {most}, got {text!r}")
        return count

    return read


def _cmd_fit(args: argparse.Namespace) -> int:
    try:
        grades = None if args.grades is None else parse_grades(args.grades)
        low_ohms = parse_resistance(args.min_ohms, "--min-ohms")
        high_ohms = parse_resistance(args.max_ohms, "--max-ohms")
        fixed = {}
        for item in args.hold:
            key, sep, text = item.partition("=")
            if not sep:
                raise BandcalcError(f"--hold: write KEY=R, e.g. feedback=1M2; got {item!r}")
            fixed[key.strip()] = parse_resistance(text, f"--hold {key.strip()}")
    except ValueError as exc:
        _complain(None, str(exc))
        return EXIT_BAD_INPUT

    def work(path: str, design: Design) -> FitResult:
        unit = design.unit  # "3.1V", "32C" read too
        upper = _aim(args.upper, unit, "--upper", args.by)
        lower = _aim(args.lower, unit, "--lower", args.by)
        return fit(design, upper, lower, series=args.series, min_ohms=low_ohms, max_ohms=high_ohms,
                   count=args.count, fixed=fixed, add_leg=not args.no_extra_leg, names=_FIT_OPTIONS,
                   by=args.by, grades=grades, min_yield=args.min_yield)

    results, status = _for_each_file([args.file], work)
    if not results:
        return status
    result = results[0]
    if args.json:
        _emit_json([{"file": args.file, **fit_to_dict(result)}])
    else:
        print(visible_text(_fit_table(args.file, result, args.code), keep_lines=True))
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
    p.add_argument("--upper", metavar="X",
                   help="wanted upper switching point: volts, or the watched quantity with a front end; "
                        "with --by margin or yield a window LOWEST,HIGHEST (default: the design's "
                        "tolerances.limits)")
    p.add_argument("--lower", metavar="X", help="wanted lower switching point (as --upper)")
    p.add_argument("--by", choices=RANKINGS, default="nominal",
                   help="rank by the nominal error (default), the worst-case margin over tolerances and "
                        "temperature, or the per-build yield")
    p.add_argument("--grades", metavar="G", default=None,
                   help=f"tolerance grades in percent to choose from per fitted part, e.g. {DEFAULT_GRADES}, "
                        "optionally with relative costs, 5:1,1:1.2,0.1:5 (defaults typical of the trade, "
                        "from memory)")
    p.add_argument("--min-yield", type=_percent, default=0.99, metavar="PERCENT",
                   help="with --by yield --grades: the least yield a grade must give (default 99)")
    p.add_argument("--series", default="E24", help="IEC 60063 series, E3 to E192 (default E24)")
    p.add_argument("--min-ohms", default="1k", metavar="R", help="smallest value allowed (default 1k)")
    p.add_argument("--max-ohms", default="10M", metavar="R", help="largest value allowed (default 10M)")
    p.add_argument("--count", type=_count(MAX_COUNT), default=5, metavar="N",
                   help=f"candidates to list, 1 to {MAX_COUNT} (default 5)")
    p.add_argument("--hold", action="append", default=[], metavar="KEY=R",
                   help="hold a resistor at a value, e.g. feedback=1M2 (repeat for more)")
    p.add_argument("--no-extra-leg", action="store_true",
                   help="never add a leg to the + pin, even where the stage needs one")
    p.add_argument("--code", action="store_true", help="print resistances in the IEC 60062 code (4k7)")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_fit)

    p = sub.add_parser("signal", help="run a recorded or synthetic signal through a design")
    p.add_argument("file", metavar="FILE", help="design file (JSON)")
    _add_signal_options(p)
    p.add_argument("--sweep", action="store_true", help="also sweep the hysteresis width")
    p.add_argument("--seeds", type=_count(MAX_SEEDS), default=DEFAULT_SEEDS, metavar="N",
                   help=f"noise draws the sweep runs (default {DEFAULT_SEEDS})")
    p.add_argument("--false-edges-per-year", type=_positive(""), default=None, metavar="N",
                   help="also tabulate the narrowest hysteresis for this target over filter time constants")
    p.add_argument("--delay-budget", type=_positive("s"), default=None, metavar="S",
                   help="mark the table's rows whose delay is within this")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_signal)

    p = sub.add_parser("from-recording",
                       help="choose hysteresis and filter for a recorded signal and write the design")
    p.add_argument("file", metavar="FILE",
                   help="design file (JSON): the stage as drawn; its values are a start")
    p.add_argument("--csv", required=True, metavar="WAVE.csv",
                   help="the recorded signal (as for signal --csv)")
    where = p.add_mutually_exclusive_group(required=True)
    where.add_argument("--centre", metavar="X", help="centre of the two points wanted (design's unit)")
    where.add_argument("--upper", metavar="X", help="or the upper point wanted")
    where.add_argument("--lower", metavar="X", help="or the lower point wanted")
    p.add_argument("--false-edges-per-year", type=_positive(""), default=1.0, metavar="N",
                   help="false edges allowed a year (default 1)")
    p.add_argument("--delay-budget", type=_positive("s"), default=None, metavar="S",
                   help="longest delay allowed from the centre crossing to the switching")
    p.add_argument("--no-filter", action="store_true", help="do not add an input filter")
    p.add_argument("--series", default="E24", help="IEC 60063 series for the stage's resistors (default E24)")
    p.add_argument("-o", "--output", required=True, metavar="OUT.json", help="the design file to write")
    p.add_argument("--json", action="store_true", help="print JSON instead of the steps")
    p.set_defaults(run=_cmd_from_recording)

    p = sub.add_parser("report", help="write the design summary (Markdown)")
    p.add_argument("file", metavar="FILE", help="design file (JSON)")
    p.add_argument("-o", "--output", metavar="OUT.md", help="write to this file instead of printing")
    p.add_argument("--spread", action="store_true", help="include the spread over tolerances")
    p.add_argument("--samples", type=_samples, default=DEFAULT_SAMPLES, metavar="N",
                   help=f"Monte Carlo builds with --spread (default {DEFAULT_SAMPLES:,})")
    p.add_argument("--seed", type=_seed, default=DEFAULT_SEED, metavar="S", help="random seed for --spread")
    p.set_defaults(run=_cmd_report)

    p = sub.add_parser("spread", help="worst case, Monte Carlo yield and sensitivity of the switching points")
    p.add_argument("files", nargs="+", metavar="FILE", help="design file(s) (JSON)")
    p.add_argument("--samples", type=_samples, default=DEFAULT_SAMPLES, metavar="N",
                   help=f"Monte Carlo builds, {MIN_SAMPLES:,} to {MAX_SAMPLES:,} "
                        f"(default {DEFAULT_SAMPLES:,})")
    p.add_argument("--seed", type=_seed, default=DEFAULT_SEED, metavar="S",
                   help=f"random seed; the same seed gives the same numbers (default {DEFAULT_SEED})")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(run=_cmd_spread)

    p = sub.add_parser("netlist", help="write the stage as a SPICE netlist with a bench that measures it")
    p.add_argument("file", metavar="FILE", help="design file (JSON)")
    p.add_argument("-o", "--output", metavar="OUT.cir", help="write to this file instead of printing")
    p.add_argument("--bench", choices=BENCHES, default="sweep",
                   help="sweep: a slow triangle over the input's range, printing the points (default); "
                        "signal: the signal check's signal, printing each output edge's time")
    _add_signal_options(p, typed_only=True)
    p.set_defaults(run=_cmd_netlist)

    add_page_command(sub)
    return parser


def _add_signal_options(p: argparse.ArgumentParser, typed_only: bool = False) -> None:
    """The options that describe a signal: a recording, or a synthetic one.  With ``typed_only`` an
    option the user does not type leaves no attribute, so the command can tell which were typed."""
    default = (lambda value: argparse.SUPPRESS) if typed_only else (lambda value: value)
    p.add_argument("--csv", metavar="WAVE.csv", default=default(None),
                   help="recorded signal: time (s) and volts columns")
    p.add_argument("--shape", default=default("sine"), choices=["sine", "triangle", "ramp", "steps"])
    p.add_argument("--offset", type=float, default=default(None),
                   help="in the design's unit, V or the watched quantity's (default: the design's centre)")
    p.add_argument("--amplitude", type=float, default=default(None),
                   help="in the design's unit (default: the design's hysteresis)")
    p.add_argument("--frequency", type=float, default=default(50.0), help="Hz")
    p.add_argument("--duration", type=float, default=default(0.1), help="s")
    p.add_argument("--rate", type=float, default=default(100e3),
                   help="samples per second (raised to 10 x the noise bandwidth where noise is added)")
    p.add_argument("--noise", type=float, default=default(None),
                   help="Gaussian noise, RMS, in the design's unit (default: the design's signal "
                        "settings, else none)")
    p.add_argument("--noise-bandwidth", type=_positive("Hz"), default=default(None), metavar="HZ",
                   help=f"the noise is flat from 0 to here (default: the design's, else "
                        f"{DEFAULT_NOISE_BANDWIDTH:g} Hz); 10k, 2.5 kHz read too")
    p.add_argument("--hum", type=float, default=default(None),
                   help="mains hum amplitude (peak), in the design's unit (default: the design's)")
    p.add_argument("--hum-frequency", type=float, default=default(None), choices=[50.0, 60.0])
    p.add_argument("--hum-harmonic", action="append", default=default([]), type=_harmonic, metavar="N=V",
                   help="a hum harmonic's amplitude (peak, in the design's unit), e.g. 3=0.01 "
                        "(repeat for more)")
    p.add_argument("--seed", type=int, default=default(1), help="noise generator seed (runs repeat)")


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status."""
    args = _parser().parse_args(argv)
    try:
        return args.run(args)
    except BrokenPipeError:  # output piped into a reader that stopped early (| head)
        sys.stderr.close()
        return 0
    except ValueError as exc:  # a user error outside the files (every one is a BandcalcError)
        _complain(None, str(exc))
        return EXIT_BAD_INPUT
    except Exception as exc:  # noqa: BLE001 - never a traceback on the command line
        _complain(None, f"internal error ({type(exc).__name__}: {exc}). Please report it with the command.")
        return EXIT_BAD_INPUT
