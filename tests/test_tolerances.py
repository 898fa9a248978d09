"""The tolerances section of a design file: shape, defaults, round trips and clear messages."""

import copy

import eseries
import pytest

from bandcalc.errors import DesignError
from bandcalc.model.design_file import design_from_dict, design_to_dict
from bandcalc.model.parts import series_tolerance
from bandcalc.model.tolerances import Limits, PerResistor, ResistorNetwork, ToleranceError, Tolerances

BASE = {
    "format": 1,
    "stage": "non-inverting",
    "supply": {"positive": 5.0},
    "reference": {"volts": 2.5},
    "resistors": {"input": "10k", "feedback": "39k"},
}

FULL = {
    "distribution": "uniform",
    "resistors": {"default": 1.0, "feedback": 0.1},
    "reference": 0.5,
    "supply": 5.0,
    "offset": "4m",
    "bias_current": "100n",
    "offset_current": "20n",
    "temperature": [-20, 70],
    "resistor_tempco": {"default": 100, "feedback": 25},
    "resistor_networks": {"RN1": {"resistors": ["to_ground", "to_positive"], "tempco": 50, "tracking": 5}},
    "reference_drift": 50,
    "offset_drift": 5e-6,
    "output": {"high_drop": ["0 mV", "150 mV"], "low_drop": [0, 0.1], "resistance": ["20", "80"]},
    "comparator_hysteresis": ["2 mV", "6 mV"],
    "limits": {"upper": [3.0, 3.3], "lower": [None, 2.0], "hysteresis": [1.0, None]},
}


def with_tolerances(section):
    data = copy.deepcopy(BASE)
    data["tolerances"] = section
    return data


def test_full_section_reads_in_file_units():
    tol = design_from_dict(with_tolerances(FULL)).tolerances
    assert tol.resistors == PerResistor(1.0, (("feedback", 0.1),))
    assert tol.resistors.get("feedback") == 0.1 and tol.resistors.get("input") == 1.0
    assert tol.offset == pytest.approx(0.004) and tol.bias_current == pytest.approx(1e-7)
    assert tol.temperature == (-20.0, 70.0)
    assert tol.limits.windows()["lower"] == (float("-inf"), 2.0)
    assert tol.distribution == "uniform"
    assert tol.offset_current == pytest.approx(20e-9)
    assert tol.resistor_networks == (ResistorNetwork("RN1", ("to_ground", "to_positive"), 50.0, 5.0),)
    assert tol.output.high_drop == pytest.approx((0.0, 0.15)) and tol.output.resistance == (20.0, 80.0)
    assert tol.output.low_volts is None
    assert tol.comparator_hysteresis == pytest.approx((0.002, 0.006))


@pytest.mark.parametrize("name", ["normal", "screened", "uniform"])
def test_three_distributions(name):
    assert design_from_dict(with_tolerances({"distribution": name})).tolerances.distribution == name


@pytest.mark.parametrize("section", [FULL, {}, {"resistors": 1.0}, {"resistors": {"feedback": 0.1}},
                                     {"limits": {"hysteresis": [0.5, None]}},
                                     {"output": {"low_volts": [0, 0.4], "pullup_volts": [3.2, 3.4]}}])
def test_round_trip(section):
    d = design_from_dict(with_tolerances(section))
    assert design_from_dict(design_to_dict(d)) == d


def test_files_without_the_section_still_load_and_round_trip():
    d = design_from_dict(BASE)
    assert d.tolerances is None
    assert "tolerances" not in design_to_dict(d)
    assert design_from_dict(design_to_dict(d)) == d


@pytest.mark.parametrize("section, message", [
    ({"resistor": 1.0}, "tolerances.resistor: unknown key; allowed: distribution, resistors"),
    ({"resistors": {"feedbak": 1.0}}, "tolerances.resistors.feedbak: unknown key; allowed: default, input"),
    ({"resistors": 60}, "tolerances.resistors: must be from 0 to 50 percent, got 60.0"),
    ({"resistors": {"default": 1, "input": -1}}, "tolerances.resistors.input: must be from 0 to 50 percent"),
    ({"supply": "5%"}, "tolerances.supply: cannot read '5%'"),
    ({"offset": -0.001}, "tolerances.offset: must be from 0 to 100000 V, got -0.001"),
    ({"bias_current": "10nV"}, "tolerances.bias_current: cannot read '10nV'"),
    ({"distribution": "triangular"}, "tolerances.distribution: 'triangular' is not a distribution; "
                                     "allowed: normal, screened, uniform"),
    ({"temperature": [70, -20]}, "tolerances.temperature: the lowest temperature must be below the highest"),
    ({"temperature": 25}, "tolerances.temperature: give [lowest, highest] in degrees Celsius"),
    ({"temperature": [-300, 25]}, "tolerances.temperature: must be from -273.15 to 500 degrees C"),
    ({"limits": {"upper": [3.3, 3.0]}}, "tolerances.limits.upper: the lowest value (3.3 V) must be below"),
    ({"limits": {"width": [1, 2]}}, "tolerances.limits.width: unknown key; allowed: upper, lower"),
    ({"limits": {"upper": [None, None]}}, "tolerances.limits.upper: give [lowest, highest] in volts"),
    ({"resistor_tempco": True}, "tolerances.resistor_tempco: expected a number, got True"),
    ({"resistor_tempco": -50}, "tolerances.resistor_tempco: must be from 0 to 5000 ppm/K, got -50.0"),
    ({"resistor_tempco": {"feedback": 6000}},
     "tolerances.resistor_tempco.feedback: must be from 0 to 5000 ppm/K, got 6000.0"),
    ({"temperature": [-40, 85], "resistor_tempco": 4000},
     "tolerances.resistor_tempco: 4000 ppm/K over -40 to 85 °C moves a resistor by up to 26 %"),
    ({"temperature": [-40, 85], "reference_drift": 5000},
     "tolerances.reference_drift: 5000 ppm/K over -40 to 85 °C moves the reference by up to 62.5 %"),
    ({"resistor_networks": {"RN1": {"resistors": ["input"], "tempco": 25}}},
     "tolerances.resistor_networks.RN1.resistors: give two or more resistors"),
    ({"resistor_networks": {"RN1": {"resistors": ["input", "feedbak"], "tempco": 25}}},
     "tolerances.resistor_networks.RN1.resistors: 'feedbak' is not a resistor; allowed: input, feedback"),
    ({"resistor_networks": {"RN1": {"resistors": ["input", "feedback"], "tempco": 25, "ratio": 1}}},
     "tolerances.resistor_networks.RN1.ratio: unknown key; allowed: resistors, tempco, tracking"),
    ({"resistor_networks": {"RN1": {"resistors": ["input", "feedback"], "tracking": -1}}},
     "tolerances.resistor_networks.RN1.tracking: must be from 0 to 5000 ppm/K"),
    ({"resistor_networks": {"A": {"resistors": ["input", "feedback"]},
                            "B": {"resistors": ["feedback", "to_ground"]}}},
     "tolerances.resistor_networks.B: feedback is already in network A"),
    ({"resistor_tempco": {"feedback": 25}, "resistor_networks": {"A": {"resistors": ["input", "feedback"]}}},
     "tolerances.resistor_tempco.feedback: feedback is in network A, whose tempco and tracking apply"),
    ({"resistor_networks": [["input", "feedback"]]},
     "tolerances.resistor_networks: must be an object of networks by name"),
    ({"output": {"high_drop": [0.2, 0.1]}}, "tolerances.output.high_drop: the least value (0.2) must not be "
                                              "above the greatest (0.1)"),
    ({"output": {"resistance": [-1, 10]}},
     "tolerances.output.resistance: must be from 0 to 1e+12 ohm, got -1.0"),
    ({"output": {"swing": [0, 1]}}, "tolerances.output.swing: unknown key; allowed: high_drop, low_drop"),
    ({"output": {"low_drop": 0.1}}, "tolerances.output.low_drop: give [least, greatest] in volts"),
    ({"comparator_hysteresis": [0.006, None]}, "tolerances.comparator_hysteresis: give both ends in volts"),
    ({"offset_current": -1e-9}, "tolerances.offset_current: must be from 0 to 1 A, got -1e-09"),
    ([1, 2], "tolerances: must be an object with keys distribution"),
])
def test_bad_input_names_the_key(section, message):
    with pytest.raises(DesignError) as err:
        design_from_dict(with_tolerances(section))
    assert message in str(err.value)


def test_errors_are_value_errors_when_built_in_code():
    with pytest.raises(ToleranceError, match="tolerances.reference: must be from 0 to 50 percent"):
        Tolerances(reference=80.0)
    with pytest.raises(ValueError, match="tolerances.limits.hysteresis"):
        Limits(hysteresis=(2.0, 1.0))


# Usual tolerances per series (common practice; IEC 60063 pairs each series with a tolerance, from
# memory): E24 5 %, E48 2 %, E96 1 %, E192 0.5 %.
@pytest.mark.parametrize("ohms, percent, series", [
    (4700.0, 5.0, "E24"),      # also in E3; we start at E24 on purpose
    (10e3, 5.0, "E24"),
    (1.1e3, 5.0, "E24"),       # in E24 and in E48 (1.10): the coarser wins
    (1.05e3, 2.0, "E48"),
    (4.99e3, 1.0, "E96"),
    (1.01e3, 0.5, "E192"),
    (1234.0, 1.0, None),       # in no series: a precision part (common practice)
])
def test_series_tolerance(ohms, percent, series):
    assert series_tolerance(ohms) == (percent, series)


@pytest.mark.parametrize("ohms", [4700.0, 1050.0, 4990.0, 1010.0, 8660.0, 9200.0])
def test_series_tolerance_agrees_with_the_eseries_package(ohms):
    # Reference library: eseries 1.2.1 (PyPI); membership from find_nearest, tolerance from
    # eseries.tolerance, taking the coarsest series from E24 up.
    for name in ("E24", "E48", "E96", "E192"):
        key = eseries.ESeries[name]
        if eseries.find_nearest(key, ohms) == pytest.approx(ohms, rel=1e-9):
            assert series_tolerance(ohms) == (100 * eseries.tolerance(key), name)
            break
    else:
        pytest.fail(f"{ohms} ohm is in no series from E24 up")


# --- tolerances that would take a part where none goes --------------------------------------------

@pytest.mark.parametrize("section, message", [
    # No electronic part works at 1e300 C; beyond about 500 C nothing of a circuit board survives
    # (common practice: high-temperature parts are rated to about 200 to 225 C).
    ({"temperature": [0, 1e300]}, r"tolerances\.temperature: must be from -273\.15 to 500 degrees C"),
    # resistor_tempco is a bound on each resistor's own coefficient (+/-), so never below zero; a
    # tempco of -10,000 ppm/K would take a resistor to 1 - 0.01 x (125 - 25) = 0 at 125 C.
    ({"temperature": [-40, 125], "resistor_tempco": -10000},
     r"tolerances\.resistor_tempco: must be from 0 to 5000 ppm/K, got -10000"),
    ({"temperature": [-40, 125], "resistor_tempco": {"default": 50, "feedback": 20000}},
     r"tolerances\.resistor_tempco\.feedback: must be from 0 to 5000 ppm/K"),
    # 5000 ppm/K x 225 K (from 25 C down to -200 C) = 112.5 %: the resistor would go to -12.5 %.
    ({"temperature": [-200, 125], "resistor_tempco": {"default": 50, "feedback": 5000}},
     r"tolerances\.resistor_tempco\.feedback: 5000 ppm/K over -200 to 125 °C moves a resistor by up to "
     r"112 %"),
    ({"temperature": [-40, 400], "reference_drift": 9000},
     r"tolerances\.reference_drift: must be from 0 to 5000 ppm/K"),
    # Box method: 1000 ppm/K x 440 K = 44 % either way of the reference.
    ({"temperature": [-40, 400], "reference_drift": 1000},
     r"tolerances\.reference_drift: 1000 ppm/K over -40 to 400 °C moves the reference by up to 44 %"),
    ({"bias_current": 1e3}, r"tolerances\.bias_current: must be from 0 to 1 A"),
    ({"offset": 1e300}, r"tolerances\.offset: must be from 0 to 100000 V"),
    ({"offset_drift": 1e300}, r"tolerances\.offset_drift: must be from 0 to 1 V/K"),
    ({"reference": None, "supply": 2}, None),  # null leaves a value out, as elsewhere in the file
])
def test_tolerances_no_part_follows_are_refused_naming_the_key(section, message):
    if message is None:
        assert design_from_dict(with_tolerances(section)).tolerances.reference == 0.0
        return
    with pytest.raises(DesignError, match=message):
        design_from_dict(with_tolerances(section))
