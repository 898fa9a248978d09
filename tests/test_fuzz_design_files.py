"""Random design files (edits of the demos) through every analysis: a file is refused with a message
naming what is wrong, or analysed through; nothing but a BandcalcError ever escapes."""

import json
import math

from hypothesis import HealthCheck, example, given, settings
from strategies import hostile_design_files

from bandcalc.demos import demo_paths
from bandcalc.errors import BandcalcError
from bandcalc.fit.selection import fit, fit_to_dict
from bandcalc.model.design_file import design_from_json
from bandcalc.model.operating import analysis_to_dict, analyze
from bandcalc.model.transfer import transfer_curve
from bandcalc.outputs.strict_json import dumps
from bandcalc.outputs.summary import SummaryInputs, design_summary
from bandcalc.spread.propagation import MIN_SAMPLES, spread, spread_to_dict


def _edited(stem: str, **sections) -> str:
    """A demo's design file with some sections replaced: the cases Hypothesis found, kept."""
    data = json.loads(demo_paths()[stem].read_text())
    for key, value in sections.items():
        data[key] = {**data[key], **value}
    return json.dumps(data)


def _strict(text: str):
    def refuse(name):
        raise AssertionError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


@settings(max_examples=3 * settings.default.max_examples, deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(hostile_design_files())
# A source resistance at the bound plus the thermistor divider's own: the stage saw more than 1 TOhm.
@example(_edited("greenhouse_fan_thermostat", source={"resistance": 1e12}))
# 15 kV on the rail: the fit's solver took exp() of a reference voltage (an overflow warning).
@example(_edited("strain_overload_alarm", supply={"positive": 15000.0},
                 resistors={"to_positive": 0.001}))
# A temperature range narrower than any float step: the drift's derivative divided by its zero width.
@example(_edited("sump_level_switch", tolerances={"temperature": [0, 5e-324]}))
def test_a_design_file_is_refused_with_a_message_or_analysed_through(text):
    try:
        design = design_from_json(text)
    except BandcalcError as exc:
        assert str(exc).startswith("design: ") and len(str(exc)) > len("design: ")
        return
    a = analyze(design)
    assert math.isfinite(a.upper) and math.isfinite(a.lower)
    upper, lower = float(a.points.upper), float(a.points.lower)
    if not (math.isfinite(upper) and math.isfinite(lower)):  # the stage latches: a finding says so
        assert any(f.startswith("Latches: no value the input reaches") for f in a.warnings), a.warnings
    _strict(dumps(analysis_to_dict(a)))
    design_summary(design, SummaryInputs())
    transfer_curve(design)
    try:
        _strict(dumps(spread_to_dict(spread(design, samples=MIN_SAMPLES * 10))))
    except BandcalcError:
        pass
    if math.isfinite(upper) and math.isfinite(lower) and upper > lower:
        try:
            _strict(dumps(fit_to_dict(fit(design, upper, lower, count=2))))
        except BandcalcError:
            pass
