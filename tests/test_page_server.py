"""``bandcalc page``: the settings it gives Streamlit are the checkout's ``.streamlit/config.toml``,
Streamlit's own option parser accepts them, bad options and a busy port are refused at once, and
the page answers on 127.0.0.1 only, whatever config file lies in the working directory."""

import os
import socket
import sys
import tomllib
from pathlib import Path

import pytest
from serving import free_port, refuses, serving

from bandcalc.cli.commands import main
from bandcalc.cli.page_server import ADDRESS, DEFAULT_PORT, PAGE_SETTINGS, streamlit_arguments

ROOT = Path(__file__).resolve().parent.parent


def test_settings_equal_the_config_file():
    # `streamlit run app.py` reads the file; `bandcalc page` passes the table.  They must not drift.
    config = tomllib.loads((ROOT / ".streamlit" / "config.toml").read_text(encoding="utf-8"))
    flat = {f"{section}.{key}": value for section, table in config.items() for key, value in table.items()}
    assert PAGE_SETTINGS == flat


def test_streamlit_parses_every_setting_and_the_port():
    from streamlit.web import cli

    args = streamlit_arguments("run_sheet.py", 8600)
    assert args[:2] == ["run", "run_sheet.py"]
    parsed = cli.main_run.make_context("run", args[1:]).params  # Streamlit's own option parser
    assert {key: parsed[key.replace(".", "_")] for key in PAGE_SETTINGS} == PAGE_SETTINGS
    assert parsed["server_port"] == 8600


def test_help_describes_the_port_and_the_address(capsys):
    with pytest.raises(SystemExit) as done:
        main(["page", "--help"])
    assert done.value.code == 0
    out = capsys.readouterr().out
    assert "--port N" in out and f"default {DEFAULT_PORT}" in out and ADDRESS in out


@pytest.mark.parametrize("port", ["x", "0", "70000", "-1", "80.5"])
def test_a_bad_port_is_refused(port, capsys):
    with pytest.raises(SystemExit) as done:
        main(["page", "--port", port])
    assert done.value.code == 2
    assert f"argument --port: must be a whole number from 1 to 65535, got '{port}'" in capsys.readouterr().err


def test_a_busy_port_is_refused_at_once(capsys):
    with socket.socket() as taken:
        taken.bind((ADDRESS, 0))
        taken.listen()
        port = taken.getsockname()[1]
        assert main(["page", "--port", str(port)]) == 2
    err = capsys.readouterr().err
    assert f"cannot listen on {ADDRESS} port {port}" in err and "--port N" in err


def test_the_page_serves_on_loopback_only_whatever_the_working_directory_says(tmp_path):
    # A config file in the working directory and a STREAMLIT_ variable asking for every interface:
    # the command-line flags take precedence over both (Streamlit documentation, "Working with
    # configuration options": flags over environment variables over config files).
    (tmp_path / ".streamlit").mkdir()
    (tmp_path / ".streamlit" / "config.toml").write_text(
        '[server]\naddress = "0.0.0.0"\n[browser]\ngatherUsageStats = true\n', encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": str(ROOT), "STREAMLIT_SERVER_ADDRESS": "0.0.0.0"}
    port = free_port()
    with serving([sys.executable, "-m", "bandcalc", "page", "--port", str(port)], port, tmp_path, env) as url:
        assert url == f"http://127.0.0.1:{port}/"
        # Linux answers all of 127.0.0.0/8 on loopback (common practice): a server bound to every
        # interface would accept 127.0.0.2 too; one bound to 127.0.0.1 refuses it.
        assert refuses("127.0.0.2", port)

