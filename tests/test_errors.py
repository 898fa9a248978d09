"""One error base: everything a user can cause is a BandcalcError (a ValueError) naming what is wrong."""

import importlib
import inspect
import pkgutil

import pytest

import bandcalc
from bandcalc.errors import BandcalcError, DesignError
from bandcalc.model.network import switching_points
from bandcalc.model.parts import part, value_at, with_value
from bandcalc.model.points import design_points
from bandcalc.signal_check.waveform import synthesize

# The page's modules need a Streamlit session to import cleanly; their errors are the package's.
MODULES = sorted(m.name for m in pkgutil.walk_packages(bandcalc.__path__, "bandcalc.")
                 if not m.name.startswith(("bandcalc.page", "bandcalc.__main__")))


def test_every_error_class_of_the_package_derives_from_the_one_base():
    found = []
    for name in MODULES:
        module = importlib.import_module(name)
        for _, cls in inspect.getmembers(module, inspect.isclass):
            if issubclass(cls, Exception) and cls.__module__ == name:
                found.append(cls)
                assert issubclass(cls, BandcalcError), f"{name}.{cls.__name__} is not a BandcalcError"
    assert len(found) >= 7  # design, units, series, tolerances, recording, fit, spread


@pytest.mark.parametrize(("call", "names"), [
    (lambda d: switching_points(d, {"resistors.nope": 1.0}), "resistors.nope"),
    (lambda d: design_points(d, {"front_end.top": 1.0}), "front_end.top"),
    (lambda d: value_at(d, "resistors.nothing"), "resistors.nothing"),
    (lambda d: with_value(d, "supply.positive", "twelve"), "supply.positive"),
    (lambda d: part("nowhere"), "nowhere"),
])
def test_bad_keys_are_named_in_a_design_error(demo, call, names):
    with pytest.raises(DesignError, match=names):
        call(demo("sump_level_switch"))


def test_bad_signal_settings_are_a_bandcalc_error():
    with pytest.raises(BandcalcError, match="duration must be greater than 0 s"):
        synthesize("sine", 0.0, 1.0, 0.01, -5.0, 50.0)
