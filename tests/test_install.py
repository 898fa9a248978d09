"""The installable package: build the wheel from this checkout, install it into a fresh virtual
environment and use it from a folder outside the checkout: the command, the demo designs as
package data, and ``bandcalc page`` serving the page.

Marked ``install``; some seconds, longer where pip must fetch setuptools.  The dependencies are
not downloaded: the fresh environment sees the test interpreter's site-packages through a
``.pth`` file (a plain path, so that folder's own ``.pth`` files, among them an editable install
of bandcalc, stay out); the tests check that the wheel's copy is the one imported.  The wheel is
built without build isolation where setuptools 77 or newer is installed; otherwise pip
fetches setuptools for an isolated build, and the tests are skipped, saying why, where it cannot.
"""

import json
import os
import shutil
import site
import subprocess
import sys
import zipfile
from importlib import metadata
from pathlib import Path

import pytest
from serving import free_port, refuses, serving

from bandcalc import __version__
from bandcalc.cli.commands import main

pytestmark = pytest.mark.install

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted(p.name for p in (ROOT / "demo_data").glob("*.json"))
BUILD_BACKEND_MIN = 77  # pyproject.toml: [build-system] requires setuptools>=77 (PEP 639 license)
# pip's words when the build backend cannot be fetched for an isolated build
_NO_INDEX = ("No matching distribution found for setuptools", "Could not find a version that satisfies",
             "Failed to establish a new connection", "Temporary failure in name resolution",
             "Network is unreachable")


def _run(args, cwd, env, timeout=120) -> subprocess.CompletedProcess:
    return subprocess.run([str(a) for a in args], cwd=cwd, env=env, capture_output=True, text=True,
                          timeout=timeout)


def _setuptools_major() -> int:
    try:
        return int(metadata.version("setuptools").split(".")[0])
    except (metadata.PackageNotFoundError, ValueError):
        return 0


def _build_wheel(source: Path, out: Path) -> Path:
    if _run([sys.executable, "-m", "pip", "--version"], source, os.environ).returncode != 0:
        pytest.skip("building the wheel needs pip in the test interpreter")
    isolated = _setuptools_major() < BUILD_BACKEND_MIN
    command = [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", out, source]
    if not isolated:
        command.insert(4, "--no-build-isolation")  # offline: the installed setuptools builds it
    try:
        built = _run(command, source, {**os.environ, "PIP_DEFAULT_TIMEOUT": "20"}, timeout=240)
    except subprocess.TimeoutExpired:
        pytest.skip("building the wheel timed out fetching setuptools>=77 for an isolated build "
                    "(no package index reachable); install setuptools>=77 to build offline")
    if built.returncode != 0:
        if isolated and any(words in built.stderr for words in _NO_INDEX):
            pytest.skip("building the wheel needs setuptools>=77: not installed here and no package "
                        "index reachable to fetch it for an isolated build")
        pytest.fail(f"pip wheel failed:\n{built.stdout}\n{built.stderr}")
    (wheel,) = out.glob("bandcalc-*.whl")
    return wheel


class Installed:
    """A fresh virtual environment with the wheel installed, used from a folder outside the checkout."""

    def __init__(self, base: Path):
        source, self.venv, self.outside = base / "source", base / "venv", base / "elsewhere"
        # Build from a copy: no build/ or *.egg-info left in the checkout, none read from it.
        shutil.copytree(ROOT, source, ignore=shutil.ignore_patterns(
            ".git", ".venv", "build", "dist", "*.egg-info", "__pycache__", ".*_cache", ".hypothesis"))
        self.wheel = _build_wheel(source, base / "wheel")
        made = _run([sys.executable, "-m", "venv", "--without-pip", self.venv], base, os.environ)
        assert made.returncode == 0, made.stderr
        self.python = self.venv / ("Scripts/python.exe" if os.name == "nt" else "bin/python")
        self.bandcalc = self.python.with_name("bandcalc.exe" if os.name == "nt" else "bandcalc")
        purelib = _run([self.python, "-c", "import sysconfig; print(sysconfig.get_path('purelib'))"],
                       base, os.environ).stdout.strip()
        self.site_packages = Path(purelib)
        (self.site_packages / "test-interpreter.pth").write_text(
            "\n".join(site.getsitepackages()) + "\n", encoding="utf-8")
        self.env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
        self.outside.mkdir()
        # --ignore-installed: an install of bandcalc seen through the .pth must not count as present.
        done = self.run(self.python, "-m", "pip", "install", "-q", "--no-deps", "--no-index",
                        "--ignore-installed", self.wheel)
        assert done.returncode == 0, done.stdout + done.stderr

    def run(self, *args) -> subprocess.CompletedProcess:
        return _run(args, self.outside, self.env)

    def python_says(self, code: str) -> str:
        done = self.run(self.python, "-c", code)
        assert done.returncode == 0, done.stderr
        return done.stdout.strip()


@pytest.fixture(scope="module")
def installed(tmp_path_factory) -> Installed:
    return Installed(tmp_path_factory.mktemp("install"))


def test_the_wheel_carries_the_demo_designs_and_the_page_script(installed):
    names = set(zipfile.ZipFile(installed.wheel).namelist())
    assert {f"bandcalc/demo_data/{name}" for name in DEMOS} <= names
    assert "bandcalc/page/entry/run_sheet.py" in names
    assert not any(name.startswith("demo_data/") for name in names)  # no stray top-level package


def test_the_installed_copy_runs_not_the_checkout(installed):
    where = installed.python_says("import bandcalc, bandcalc.demos as d; print(bandcalc.__file__); "
                                  "print(d.DEMO_DIR)").splitlines()
    assert all(Path(w).is_relative_to(installed.site_packages) for w in where), where
    done = installed.run(installed.bandcalc, "--version")
    assert done.returncode == 0 and done.stdout.strip() == f"bandcalc {__version__}"


def test_analyze_reads_a_demo_through_the_package(installed, capsys):
    found = installed.python_says(
        "from importlib.resources import files; from bandcalc.demos import demo_designs; "
        "print(files('bandcalc.demo_data') / 'sump_level_switch.json'); print(*demo_designs())")
    path, stems = found.splitlines()
    assert Path(path).is_relative_to(installed.site_packages)
    assert sorted(stems.split()) == [name.removesuffix(".json") for name in DEMOS]
    done = installed.run(installed.bandcalc, "analyze", path, "--json")
    assert done.returncode == 0, done.stderr
    # The same figures as the checkout's copy of the demo.
    assert main(["analyze", str(ROOT / "demo_data" / "sump_level_switch.json"), "--json"]) == 0
    here = json.loads(capsys.readouterr().out)
    there = json.loads(done.stdout)
    assert there["name"] == "Sump level switch"
    assert {k: there[k] for k in ("upper", "lower", "hysteresis")} == {k: here[k] for k in ("upper", "lower",
                                                                                         "hysteresis")}


@pytest.mark.parametrize("command", [["bandcalc"], ["python", "-m", "bandcalc"]])
def test_page_help_from_the_installed_command(installed, command):
    program = [installed.bandcalc] if command == ["bandcalc"] else [installed.python, "-m", "bandcalc"]
    done = installed.run(*program, "page", "--help")
    assert done.returncode == 0, done.stderr
    assert "--port N" in done.stdout and "127.0.0.1" in done.stdout


def test_the_installed_page_serves_and_draws_the_packaged_demo(installed):
    port = free_port()
    with serving([str(installed.bandcalc), "page", "--port", str(port)], port, installed.outside,
                 installed.env):
        assert refuses("127.0.0.2", port)  # bound to 127.0.0.1 only (see test_page_server.py)
    # The script the command gives Streamlit, run once headless: it opens on the packaged default demo.
    title = installed.python_says(
        "from importlib.resources import as_file, files\n"
        "from streamlit.testing.v1 import AppTest\n"
        "with as_file(files('bandcalc.page.entry') / 'run_sheet.py') as script:\n"
        "    at = AppTest.from_file(str(script), default_timeout=60).run()\n"
        "assert not at.exception and not at.error, (at.exception, at.error)\n"
        "print(at.title[0].value)")
    assert title == "Sump level switch"
