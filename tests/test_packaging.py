"""The package as pip builds it: every package folder listed, the demo designs carried as package
data, the install requirements equal to requirements.txt.  Cheap checks of pyproject.toml; the
wheel itself is built and installed in tests/test_install.py."""

import tomllib
from pathlib import Path

import pytest

from bandcalc import demos
from bandcalc.errors import DesignError

ROOT = Path(__file__).resolve().parent.parent
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
SETUPTOOLS = PYPROJECT["tool"]["setuptools"]


def _package_folders() -> set[str]:
    package = ROOT / "bandcalc"
    return {".".join(("bandcalc", *init.parent.relative_to(package).parts))
            for init in package.rglob("__init__.py")}


def test_every_package_folder_is_listed():
    # setuptools installs only the listed packages (no discovery once package-dir maps a folder).
    assert set(SETUPTOOLS["packages"]) == _package_folders() | {demos.DEMO_PACKAGE}


def test_demo_designs_install_from_the_top_level_folder():
    assert SETUPTOOLS["package-dir"] == {demos.DEMO_PACKAGE: "demo_data"}
    assert SETUPTOOLS["package-data"] == {demos.DEMO_PACKAGE: ["*.json"]}
    assert (ROOT / "demo_data" / "__init__.py").is_file()


def _requirement_lines(path: Path) -> list[str]:
    lines = (line.split("#")[0].strip() for line in path.read_text(encoding="utf-8").splitlines())
    return [line for line in lines if line and not line.startswith("-")]


def test_install_requirements_equal_requirements_txt():
    assert PYPROJECT["project"]["dependencies"] == _requirement_lines(ROOT / "requirements.txt")


def test_every_demo_file_is_listed_default_first():
    files = sorted(p.stem for p in (ROOT / "demo_data").glob("*.json"))
    stems = list(demos.demo_paths())
    assert stems[0] == demos.DEFAULT_DEMO
    assert sorted(stems) == files
    assert list(demos.demo_designs()) == stems


def test_a_demo_loads_by_name_and_an_unknown_name_is_refused():
    assert demos.load_demo("rain_tank_overflow").name
    with pytest.raises(DesignError, match=r"no demo design named 'rain_tank'.*sump_level_switch"):
        demos.load_demo("rain_tank")
