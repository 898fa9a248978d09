"""Panel: standard resistor values for the switching points wanted; one click puts a candidate in.

The settings are the panel's own (they are not part of the design): they stay while the design
is edited, a candidate applied or another tab opened, and start again from the design's present
points when a design under another name or with another watched unit comes in.  The fit runs
only when "Find values" is pressed; the latest result is kept in
``st.session_state["page.fit_result"]`` as ``(design JSON, FitResult)``, and :func:`latest_fit`
gives it for a design it still holds for.

"Find values" asks for the search and reruns the whole page; the search then runs in that full
run (:func:`run_requested`, called outside the panel's fragment), with a progress bar of the
combinations checked against the search's limit and a Stop button.  Streamlit ends a run at its
next Streamlit call (here, each progress update) when a widget outside a fragment asks for a
rerun: Stop, or any change in the sidebar.  A widget inside the panel's fragment could not: a
fragment's rerun waits for the run in progress.  The next run says the search was stopped; the
design and the last results stay.  Finished fits are kept for the session by the design's JSON
and the settings (not with ``st.cache_data``: a cached function may not update a progress bar
drawn outside it), so pressing "Find values" again answers at once.
"""

from __future__ import annotations

import math
from dataclasses import replace

import streamlit as st

from bandcalc.errors import BandcalcError
from bandcalc.fit.grades import DEFAULT_GRADES, parse_grades
from bandcalc.fit.robust import RANKINGS
from bandcalc.fit.selection import Candidate, FitResult, apply_candidate, builds_columns, fit
from bandcalc.model.design import Design, DividerReference
from bandcalc.model.design_file import design_from_json, design_to_json
from bandcalc.model.front_end import front_end_of
from bandcalc.model.parts import part, resistors_of, value_at
from bandcalc.model.standard_values import SERIES
from bandcalc.model.units import format_code, format_si, format_value, parse_resistance, symbol
from bandcalc.page import state
from bandcalc.page.compute import guarded
from bandcalc.page.controls import SERIES_KEY
from bandcalc.page.inputs import read_value
from bandcalc.page.literal import literal

TITLE = "Fit to target points"

__all__ = ["RESULT_KEY", "TITLE", "latest_fit", "render", "run_requested"]

RESULT_KEY = "page.fit_result"
_KEPT = "page.fit.settings"  # the settings, kept while the panel's widgets are not drawn
_WIDGET = "fit."  # widget keys: fit.upper, fit.lower, ...
_COUNT_MAX = 10
_ASKED = "page.fit.asked"  # (design JSON, arguments) of the search "Find values" asked for
_SEARCHING = "page.fit.searching"  # set while a search runs; still set in the run after an interrupted one
_DONE = "page.fit.done"  # finished fits of this session: {(design JSON, settings...): FitResult}
_DONE_KEPT = 16
_LABELS = {"upper": "Upper point wanted", "lower": "Lower point wanted", "min_ohms": "Smallest resistor",
           "max_ohms": "Largest resistor", "grades": "Tolerance grades (%)"}
_RANKED_BY = {"nominal": "Error from the points wanted", "margin": "Worst-case margin in the windows",
              "yield": "Yield of builds in the windows"}


def _holdable(design: Design) -> list[str]:
    """Positions the fit may hold at their present value: the stage's resistors and a reference divider."""
    return [k for k in resistors_of(design) if not k.startswith(("output.", "front_end."))]


def _points(sheet) -> tuple[str, str]:
    """The design's present switching points as target text (blank where there is none).

    Five digits, not four: a stage with input and feedback on a fixed reference reaches only
    some pairs of points.  The sump demo's points rounded to four digits are out of its reach in
    the allowed range and the fit adds a resistor for them; at five its own values come first.
    """
    a, unit = sheet.analysis, sheet.design.unit
    points = (float(a.points.upper), float(a.points.lower))
    return tuple(format_value(x, unit, 5) if math.isfinite(x) else "" for x in points)


def _defaults(sheet) -> dict:
    upper, lower = _points(sheet)
    return {"basis": (sheet.design.name, sheet.design.unit), "upper": upper, "lower": lower,
            "series": st.session_state.get(SERIES_KEY, "E24"), "min_ohms": "1k", "max_ohms": "10M",
            "count": 5, "hold": [], "add_leg": True, "by": "nominal", "grades": ""}


def _settings(sheet) -> dict:
    """The kept settings, started again for a design under another name or watched unit."""
    kept = st.session_state.get(_KEPT)
    if kept is None or kept["basis"] != (sheet.design.name, sheet.design.unit):
        kept = _defaults(sheet)
        for key in [k for k in st.session_state if str(k).startswith(_WIDGET)]:
            del st.session_state[key]
    kept["hold"] = [k for k in kept["hold"] if k in _holdable(sheet.design)]
    st.session_state[_KEPT] = kept
    for field, value in kept.items():  # a widget drawn again starts from the kept value
        if field != "basis":
            st.session_state.setdefault(_WIDGET + field, value)
    return kept


def _take_points(upper: str, lower: str) -> None:
    for field, text in (("upper", upper), ("lower", lower)):
        st.session_state[_KEPT][field] = st.session_state[_WIDGET + field] = text


def _form(sheet, kept: dict) -> bool:
    """The settings; returns whether "Find values" was pressed."""
    design, unit = sheet.design, literal(sheet.design.unit)
    what = f"{front_end_of(design).quantity}, {symbol(unit)}"
    with st.form("fit.form", border=False):
        row = st.columns(4)
        row[0].text_input(f"{_LABELS['upper']} ({symbol(unit)})", key=_WIDGET + "upper",
                          help=f"Where a rising input should switch; {what}")
        row[1].text_input(f"{_LABELS['lower']} ({symbol(unit)})", key=_WIDGET + "lower",
                          help=f"Where a falling input should switch back; {what}")
        row[2].selectbox("Standard series", tuple(SERIES), key=_WIDGET + "series",
                         help="IEC 60063 series every fitted value comes from")
        row[3].number_input("Candidates to list", min_value=1, max_value=_COUNT_MAX, step=1,
                            key=_WIDGET + "count")
        row = st.columns(4)
        row[0].text_input(f"{_LABELS['min_ohms']} (Ω)", key=_WIDGET + "min_ohms",
                          help="No fitted value below this: 4k7 or 4.7k")
        row[1].text_input(f"{_LABELS['max_ohms']} (Ω)", key=_WIDGET + "max_ohms",
                          help="No fitted value above this; above about 1 MΩ board leakage and bias "
                               "current start to matter (common practice)")
        row[2].multiselect("Hold at present value", _holdable(design), key=_WIDGET + "hold",
                           format_func=lambda k: f"{part(k).label} {format_code(resistors_of(design)[k], 4)}",
                           placeholder="none: all may change")
        row[3].checkbox("May add a resistor to the + pin", key=_WIDGET + "add_leg",
                        help="Where the stage as drawn cannot place both points, a resistor from the + pin "
                             "to ground, a rail or the reference is added")
        row = st.columns(4)
        row[0].selectbox("Rank by", RANKINGS, key=_WIDGET + "by", format_func=_RANKED_BY.get,
                         help="Margin and yield are measured against the design's windows "
                              "(tolerances.limits, set in the spread tab) over its tolerances and "
                              "temperature range")
        row[1].text_input(_LABELS["grades"], key=_WIDGET + "grades", placeholder="the design's own",
                          help=f"With margin or yield: grades to choose from per fitted part, such as "
                               f"{DEFAULT_GRADES}, each with a relative cost if you like (5:1,1:1.2,0.1:5); "
                               "default costs are typical of the trade, from memory")
        with st.container(horizontal=True):
            pressed = st.form_submit_button("Find values", type="primary")
            st.form_submit_button("Targets from the present points", on_click=_take_points,
                                  args=_points(sheet),
                                  help="Put the design's present switching points in the target boxes")
    for field in kept:
        if field != "basis":
            kept[field] = st.session_state[_WIDGET + field]
    return pressed


def _read(design: Design, kept: dict) -> tuple[dict, list[str]]:
    """The fit's arguments from the settings, and a message for each field that cannot be read."""
    unit, args, wrong = design.unit, {}, []
    for field in ("upper", "lower"):
        text = str(kept[field]).strip()
        try:
            if not text:
                raise BandcalcError(f"{_LABELS[field]}: needs a value in {symbol(unit)}")
            args[field] = read_value(text, unit, _LABELS[field])  # as the page writes it: "313.62 kPa"
        except ValueError as exc:
            wrong.append(str(exc))
    for field in ("min_ohms", "max_ohms"):
        try:
            args[field] = parse_resistance(str(kept[field]), _LABELS[field])
            if args[field] <= 0:
                raise BandcalcError(f"{_LABELS[field]}: must be above zero ohms, got {kept[field]!r}")
        except ValueError as exc:
            wrong.append(str(exc))
    if "upper" in args and "lower" in args and args["upper"] <= args["lower"]:
        wrong.append(f"{_LABELS['upper']} ({format_value(args['upper'], unit)}) must be above the "
                     f"{_LABELS['lower'].lower()} ({format_value(args['lower'], unit)}): a rising input "
                     "switches at the upper point, a falling one at the lower")
    if "min_ohms" in args and "max_ohms" in args and args["min_ohms"] >= args["max_ohms"]:
        wrong.append(f"{_LABELS['min_ohms']} ({format_code(args['min_ohms'], 4)}) must be below the "
                     f"{_LABELS['max_ohms'].lower()} ({format_code(args['max_ohms'], 4)})")
    args.update(series=kept["series"], count=int(kept["count"]), add_leg=bool(kept["add_leg"]),
                fixed=tuple((k, float(value_at(design, part(k).path))) for k in kept["hold"]),
                by=kept["by"], grades=str(kept["grades"]).strip())
    if args["grades"]:
        try:
            if args["by"] == "nominal":
                raise BandcalcError(f"{_LABELS['grades']}: grades are chosen when ranking by margin or yield")
            parse_grades(args["grades"], _LABELS["grades"])
        except ValueError as exc:
            wrong.append(str(exc))
    if args["by"] != "nominal":  # measured against the design's windows
        wrong = [line for line in wrong if not line.startswith((_LABELS["upper"], _LABELS["lower"]))]
        args.update(upper=None, lower=None)
    return args, wrong


def _fit_of(design: Design, args: dict) -> FitResult | None:
    """The fit, with a progress bar and a Stop button while it runs; None after a message."""
    slot = st.empty()
    with slot.container():
        bar = st.progress(0.0, text="Searching the standard values…")
        st.button("Stop the search", key=_WIDGET + "stop", help="Stop searching; the design and the last "
                  "results stay")

    def progress(checked: int, budget: int) -> None:
        bar.progress(min(checked / budget, 1.0),
                     text=f"Searching: {checked:,} of at most {budget:,} combinations checked")

    st.session_state[_SEARCHING] = True
    settings = {k: dict(v) if k == "fixed" else v for k, v in args.items() if k not in ("upper", "lower")}
    settings["grades"] = parse_grades(args["grades"]) if args["grades"] else None
    result = guarded("Find values", fit, design, args["upper"], args["lower"], **settings, progress=progress)
    del st.session_state[_SEARCHING]  # reached only where the search was not interrupted
    slot.empty()
    return result


def _holds_for(fitted: Design, design: Design, graded: bool = False) -> bool:
    """Whether a fit of ``fitted`` holds for ``design``: the two differ at most in resistor values
    (a divider's included), name and notes, and where the fit chose grades in the resistors'
    tolerances, so each candidate applied gives the figures listed."""
    ref = design.reference if isinstance(fitted.reference, DividerReference) and isinstance(
        design.reference, DividerReference) else fitted.reference
    tol = fitted.tolerances
    if graded and tol is not None and design.tolerances is not None:
        tol = replace(tol, resistors=design.tolerances.resistors)
    return replace(fitted, resistors=design.resistors, reference=ref, name=design.name, notes=design.notes,
                   tolerances=tol) == design


def latest_fit(design: Design) -> FitResult | None:
    """The page's latest fit, if it holds for ``design`` (it differs at most in resistor values)."""
    kept = st.session_state.get(RESULT_KEY)
    if kept is None or not _holds_for(design_from_json(kept[0]), design, kept[1].grades is not None):
        return None
    return kept[1]


def _find(design: Design, kept: dict) -> None:
    args, wrong = _read(design, kept)
    for line in wrong:
        st.error(literal(f"{line}. Nothing was searched; the design and the last results are kept."))
    if wrong:
        return
    text = design_to_json(design)
    result = st.session_state.get(_DONE, {}).get(_done_key(text, args))
    if result is not None:
        _keep(text, args, result)
        return
    st.session_state[_ASKED] = (text, args)
    st.rerun(scope="app")  # the search runs in the full run, where Stop can end it


def _done_key(text: str, args: dict) -> tuple:
    return (text, *sorted(args.items()))


def _keep(text: str, args: dict, result: FitResult) -> None:
    """The result shown, and kept for the session (the latest last, at most _DONE_KEPT)."""
    done = st.session_state.setdefault(_DONE, {})
    key = _done_key(text, args)
    done.pop(key, None)
    done[key] = result
    for old in list(done)[:-_DONE_KEPT]:
        del done[old]
    st.session_state[RESULT_KEY] = (text, result)


def run_requested(sheet) -> None:
    """The search "Find values" asked for, in the page's full run (outside the panel's fragment)."""
    asked = st.session_state.pop(_ASKED, None)
    if asked is None or asked[0] != design_to_json(sheet.design):
        return  # nothing asked, or the design changed since
    result = _fit_of(sheet.design, asked[1])
    if result is not None:
        _keep(*asked, result)


def _in_use(design: Design, c: Candidate) -> bool:
    return c.resistors == design.resistors.present() and c.reference in (None, design.reference)


def _table(r: FitResult, design: Design) -> dict[str, list[str]]:
    unit = literal(design.unit)
    rows = r.candidates
    table = {"Rank": [str(i) for i in range(1, len(rows) + 1)]}
    table.update({part(p).label: [format_code(c.value(p), 3) for c in rows] for p in r.fitted})
    table.update({
        "Upper": [format_value(c.upper, unit, 4) for c in rows],
        "Lower": [format_value(c.lower, unit, 4) for c in rows],
        "Worst error": [format_value(c.worst_error, unit, 3) for c in rows],
        "Network current": [format_si(c.network_current, "A") for c in rows],
    })
    table.update({heading.capitalize(): [literal(x.replace("#", "")) for x in cells]
                  for heading, cells in builds_columns(r)})
    table["On the sliders"] = ["yes" if _in_use(design, c) else "" for c in rows]
    return table


def _applied(r: FitResult, rank: int, c: Candidate, unit: str) -> str:
    values = ", ".join(f"{part(p).label.lower()} {format_code(c.value(p), 3)}"
                       + (f" at {c.grades[p]:g} %" if c.grades else "") for p in r.fitted)
    return (f"Fit candidate {rank} applied: {values}; upper {format_value(c.upper, unit, 4)}, "
            f"lower {format_value(c.lower, unit, 4)}.")


def _results(sheet) -> None:
    kept = st.session_state.get(RESULT_KEY)
    if kept is None:
        st.caption("Give the points wanted and press Find values; the list ranks standard-value sets by "
                   "the larger of the two errors, and Apply puts a set on the sliders.")
        return
    design, (fitted_json, r) = sheet.design, kept
    if not _holds_for(design_from_json(fitted_json), design, r.grades is not None):
        st.info("The stage has changed since the last search in more than resistor values; press Find "
                "values to search for the design as it is now.")
        return
    unit = literal(design.unit)
    fitted = ", ".join(part(p).label.lower() for p in r.fitted)
    targets = f"upper {format_value(r.upper, unit, 4)}, lower {format_value(r.lower, unit, 4)}"
    span = f"{format_code(r.min_ohms, 4)} to {format_code(r.max_ohms, 4)}"
    st.markdown(f"**Found for** {targets}: {fitted} from {r.series}, {span}.")
    if r.windows is not None:
        edge = lambda x, open_: open_ if math.isinf(x) else format_value(x, unit, 4)  # noqa: E731
        shown = "; ".join(f"{q} {edge(lo, 'open')} to {edge(hi, 'open')}"
                          for q, (lo, hi) in r.windows.items())
        st.markdown(f"**Ranked by** {_RANKED_BY[r.by].lower()}: {shown}.")
    if r.stopped:
        st.warning(r.stopped)
    for line in r.problems:
        st.warning(literal(line if r.by != "nominal" else f"Cannot meet the targets exactly: {line}"))
    if r.candidates:
        st.table(_table(r, design), hide_index=True)
        with st.container(horizontal=True):
            for rank, c in enumerate(r.candidates, 1):
                if st.button(f"Apply {rank}", key=f"{_WIDGET}apply.{rank}",
                             help="Put this candidate's values (and any grades, as the parts' tolerances) "
                                  "on the design"):
                    state.apply_design(apply_candidate(design, c), _applied(r, rank, c, design.unit))
    if r.exact is not None:
        exact = ", ".join(f"{part(p).label.lower()} {format_si(r.exact.value(p), 'Ohm', 4)}"
                          for p in r.fitted)
        st.caption(f"Exact values, not standard: {exact} (upper {format_value(r.exact.upper, unit, 4)}, "
                   f"lower {format_value(r.exact.lower, unit, 4)}).")
    for line in r.notes:
        st.info(literal(line))
    for line in r.assumptions:
        st.caption(literal(f"The model assumes: {line}"))


def render(sheet) -> None:
    """Target points and settings, "Find values", the ranked candidates with an Apply button each."""
    kept = _settings(sheet)
    if st.session_state.pop(_SEARCHING, False):
        st.info("The search was stopped before it finished (by Stop, or by another change on the page); "
                "the design and the last results are kept. Press Find values to search again.")
    if _form(sheet, kept):
        _find(sheet.design, kept)
    _results(sheet)
