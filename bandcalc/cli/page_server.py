"""``bandcalc page``: the browser design sheet served from the installed package.

Streamlit reads ``.streamlit/config.toml`` only from the working directory and the user's home,
so the page's settings travel as ``streamlit run`` flags, which take precedence over any config
file and any ``STREAMLIT_*`` variable: wherever it is started, the page listens on 127.0.0.1
only and sends no usage statistics.  :data:`PAGE_SETTINGS` is the one table of those settings
in code; a test keeps it equal to the checkout's ``.streamlit/config.toml``, which
``streamlit run app.py`` reads.

Streamlit is imported only when the page starts, so the other commands never load it.
"""

from __future__ import annotations

import argparse
import importlib.util
import os
import socket
import sys
from importlib import resources

__all__ = ["ADDRESS", "DEFAULT_PORT", "PAGE_SETTINGS", "add_page_command", "run_page", "streamlit_arguments"]

ADDRESS = "127.0.0.1"
DEFAULT_PORT = 8501  # Streamlit's own default, as `streamlit run app.py` uses
PAGE_SETTINGS: dict[str, str | bool | int] = {
    "server.address": ADDRESS,
    "server.headless": True,
    "server.maxUploadSize": 50,
    "browser.gatherUsageStats": False,
    "browser.serverAddress": ADDRESS,
    "client.showErrorDetails": "none",
    "client.toolbarMode": "minimal",
    "global.showWarningOnDirectExecution": False,
    "runner.postScriptGC": False,
    "server.fileWatcherType": "none",
}
_SCRIPT_PACKAGE, _SCRIPT = "bandcalc.page.entry", "run_sheet.py"
_EXIT_REFUSED = 2


def _port(text: str) -> int:
    if not text.isdigit() or not 1 <= int(text) <= 65535:
        raise argparse.ArgumentTypeError(f"must be a whole number from 1 to 65535, got {text!r}")
    return int(text)


def add_page_command(sub: argparse._SubParsersAction) -> None:
    """Register ``page`` with the command line's subcommands."""
    p = sub.add_parser(
        "page", help=f"start the browser design sheet on {ADDRESS}",
        description=f"Start the browser design sheet from the installed package and serve it at "
                    f"http://{ADDRESS}:{DEFAULT_PORT} (or the port given with --port), on this "
                    f"machine only, without usage statistics: the settings of `streamlit run app.py` "
                    f"in a checkout.  Open the address in a browser; stop the page with Ctrl+C.")
    p.add_argument("--port", type=_port, default=DEFAULT_PORT, metavar="N",
                   help=f"port to listen on at {ADDRESS} (default {DEFAULT_PORT})")
    p.set_defaults(run=run_page)


def _flag(value: str | bool | int) -> str:
    return str(value).lower() if isinstance(value, bool) else str(value)


def streamlit_arguments(script: str, port: int) -> list[str]:
    """The ``streamlit`` command line (after the program name) that serves ``script`` on ``port``."""
    settings = {**PAGE_SETTINGS, "server.port": port}
    return ["run", script, *(f"--{key}={_flag(value)}" for key, value in settings.items())]


def _port_problem(port: int) -> str | None:
    """Why the page cannot listen on ``port`` at 127.0.0.1, or None when it can."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        if os.name == "posix":  # as the server does, so a port left in TIME_WAIT counts as free
            probe.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        try:
            probe.bind((ADDRESS, port))
        except OSError as exc:
            return exc.strerror or str(exc)
    return None


def _refuse(message: str) -> int:
    print(f"bandcalc page: {message}", file=sys.stderr)
    return _EXIT_REFUSED


def run_page(args: argparse.Namespace) -> int:
    """Serve the page until stopped; refuse at once, saying why, when it cannot start."""
    if importlib.util.find_spec("streamlit") is None:
        return _refuse("the page needs Streamlit, which is not installed (pip install 'streamlit~=1.67')")
    problem = _port_problem(args.port)
    if problem is not None:
        return _refuse(f"cannot listen on {ADDRESS} port {args.port} ({problem}); "
                       f"choose another port with --port N")
    from streamlit.web import cli  # the entry point of `python -m streamlit`

    with resources.as_file(resources.files(_SCRIPT_PACKAGE) / _SCRIPT) as script:
        try:
            cli.main(args=streamlit_arguments(str(script), args.port), prog_name="streamlit")
        except SystemExit as done:  # the server has stopped
            code = done.code
            return code if isinstance(code, int) else (0 if code is None else 1)
    return 0
