"""Read a recorded waveform from a CSV file.

The file holds two columns, time in s and input voltage in V, one sample a
line. Accepted:

- delimiter comma, semicolon or tab (detected from the first lines);
- decimal point, or decimal comma with a semicolon or tab delimiter
  (``0,001;1,25``);
- header lines before the data: every leading line that does not start with
  a number (column names, units), up to ``MAX_HEADER_LINES``;
- blank lines, quoted fields, one empty field after a trailing delimiter;
- uneven sampling, as long as time increases strictly;
- UTF-8 (with or without byte-order mark), Latin-1 or UTF-16 with byte-order
  mark.

pandas' C reader does the work, one piece of about 1 MiB at a time; when it
refuses a piece, or the numbers fail a check, a plain line-by-line pass over
that piece finds the first bad line and a :class:`WaveformError` names it with
its 1-based line number.
"""

from __future__ import annotations

import io
import os
import re

import numpy as np
import pandas as pd

from bandcalc.errors import BandcalcError
from bandcalc.signal_check.waveform import MAX_SAMPLES, Waveform
from bandcalc.user_files import read_regular_file

__all__ = ["CHUNK_BYTES", "MAX_BYTES", "MAX_HEADER_LINES", "MAX_ROWS", "WaveformError", "read_waveform_csv"]

MAX_ROWS = MAX_SAMPLES
"""Most data rows a file may hold."""

MAX_BYTES = 400_000_000
"""Largest file accepted, in bytes."""

MAX_HEADER_LINES = 100
"""Most non-numeric lines allowed before the first data row."""

_SNIFF_BYTES = 65_536
CHUNK_BYTES = 1 << 20  # pandas reads the file in pieces; a bad piece is read line by line
_DELIMITERS = {"\t": "tab", ";": "semicolon", ",": "comma"}
_COLUMNS = ("time", "volts")
_NUMBER = re.compile(r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?")
_STARTS_NUMERIC = re.compile(r"\s*\"?[+-]?[.,]?\d")
_NOT_FINITE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.IGNORECASE)


class WaveformError(BandcalcError):
    """A CSV waveform file that cannot be read; the message names the line."""


def _raw_bytes(source: object) -> bytes:
    """Bytes of ``source``: a path, bytes, text or an object with ``read()``."""
    if hasattr(source, "read"):
        source = source.read()
    if isinstance(source, str) and ("\n" in source or "\r" in source):
        data = source.encode("utf-8")
    elif isinstance(source, (str, os.PathLike)):
        data = read_regular_file(source, MAX_BYTES, WaveformError)
    elif isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
    else:
        raise WaveformError("source must be a file path, bytes, text or an open file, "
                            f"got {type(source).__name__}")
    if len(data) > MAX_BYTES:
        raise WaveformError(f"the file has {len(data):,} bytes; at most {MAX_BYTES:,} are read")
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        try:
            data = data.decode("utf-16").encode("utf-8")
        except UnicodeDecodeError:
            raise WaveformError("the file starts with a UTF-16 byte-order mark but is not UTF-16 text (cut "
                                "short, or another encoding); save it again as UTF-8 or UTF-16") from None
    if data[:3] == b"\xef\xbb\xbf":
        data = data[3:]
    if b"\n" not in data and b"\r" in data:
        data = data.replace(b"\r", b"\n")
    return data


def _plural(n: int, noun: str) -> str:
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def _text(data: bytes) -> str:
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _fields(line: str, delimiter: str) -> list[str]:
    parts = [p.strip().strip('"').strip() for p in line.split(delimiter)]
    if len(parts) == 3 and parts[2] == "":
        parts.pop()
    return parts


class _Layout:
    """Delimiter, decimal mark and where the data starts, from the first lines."""

    def __init__(self, data: bytes) -> None:
        head = _text(data[:_SNIFF_BYTES])
        lines = head.replace("\r\n", "\n").split("\n")
        if len(data) > _SNIFF_BYTES:
            lines = lines[:-1]  # the last one may be cut short
        filled = [ln for ln in lines if ln.strip()]
        if not filled:
            raise WaveformError("the file is empty")
        self.delimiter = next(
            (d for d in _DELIMITERS if sum(d in ln for ln in filled) * 2 > len(filled)),
            ",")
        first_data = next((i for i, ln in enumerate(lines) if _STARTS_NUMERIC.match(ln)),
                          None)
        if first_data is None:
            raise WaveformError(f"no data row among the first "
                                f"{_plural(len(filled), 'non-blank line')}: a data row starts "
                                "with a number, the time in s")
        if sum(bool(ln.strip()) for ln in lines[:first_data]) > MAX_HEADER_LINES:
            raise WaveformError(f"line {first_data + 1}: more than {MAX_HEADER_LINES} "
                                "header lines before the data")
        self.header_lines = first_data
        data_lines = lines[self.header_lines:]
        comma = self.delimiter != "," and any("," in ln for ln in data_lines)
        self.decimal = "," if comma else "."
        offset = 0
        for _ in range(self.header_lines):
            offset = data.index(b"\n", offset) + 1
        self.offset = offset

    def describe(self) -> str:
        mark = "comma" if self.decimal == "," else "point"
        return f"{_DELIMITERS[self.delimiter]}-separated, decimal {mark}"


def _number(text: str, column: str, lineno: int, decimal: str) -> float:
    if not text:
        raise WaveformError(f"line {lineno}: the {column} column is empty")
    if _NOT_FINITE.fullmatch(text):
        raise WaveformError(f"line {lineno}: {text!r} in the {column} column is not a "
                            "finite number")
    if not _NUMBER.fullmatch(text) or (decimal == "." and "," in text):
        raise WaveformError(f"line {lineno}: {text!r} in the {column} column is not a number")
    x = float(text.replace(",", "."))
    if not np.isfinite(x):
        raise WaveformError(f"line {lineno}: {text!r} in the {column} column is out of range "
                            "for a number")
    return x


def _line_by_line(chunk: bytes, first_line: int, layout: _Layout, previous: float,
                  rows: int) -> tuple[np.ndarray, np.ndarray]:
    """Check a chunk line by line; raise at its first fault, else return its columns.

    ``first_line`` is the file line number of the chunk's first line, ``previous``
    the last time before it and ``rows`` the data rows before it.
    """
    t: list[float] = []
    v: list[float] = []
    for lineno, line in enumerate(_text(chunk).split("\n"), start=first_line):
        if not line.strip():
            continue
        parts = _fields(line, layout.delimiter)
        if len(parts) != 2:
            hint = ""
            if len(parts) == 1:
                hint = "; separate time and volts by a comma, semicolon or tab"
            elif len(parts) == 4 and layout.delimiter == ",":
                hint = "; numbers with a decimal comma need a semicolon or tab between columns"
            raise WaveformError(
                f"line {lineno}: {_plural(len(parts), 'field')}, expected 2 (time in s, "
                f"volts) in a {layout.describe()} file{hint}")
        time, volts = (_number(p, c, lineno, layout.decimal)
                       for p, c in zip(parts, _COLUMNS, strict=True))
        if time <= previous:
            raise WaveformError(f"line {lineno}: time {time:g} s is not after the previous "
                                f"{previous:g} s")
        if rows + len(t) == MAX_ROWS:
            raise WaveformError(f"line {lineno}: more than {MAX_ROWS:,} data rows")
        previous = time
        t.append(time)
        v.append(volts)
    return np.array(t, dtype=np.float64), np.array(v, dtype=np.float64)


def _fast(chunk: bytes, layout: _Layout, previous: float,
          rows: int) -> tuple[np.ndarray, np.ndarray] | None:
    """A chunk's columns read by pandas, or None when anything looks wrong."""
    try:
        frame = pd.read_csv(
            io.BytesIO(chunk), sep=layout.delimiter, decimal=layout.decimal, header=None,
            dtype=np.float64, engine="c", encoding="latin-1", skip_blank_lines=True)
    except Exception:  # noqa: BLE001 - no pandas error surfaces; the line pass explains
        return None
    values = frame.to_numpy()
    if values.ndim != 2:
        return None
    if values.shape[1] == 3 and np.isnan(values[:, 2]).all():
        values = values[:, :2]
    if values.shape[1] != 2 or rows + values.shape[0] > MAX_ROWS:
        return None
    t = np.ascontiguousarray(values[:, 0])
    v = np.ascontiguousarray(values[:, 1])
    if t.size == 0 or t[0] <= previous or not (
            np.isfinite(t).all() and np.isfinite(v).all() and (t[1:] > t[:-1]).all()):
        return None
    return t, v


def _chunks(data: bytes, start: int):
    """Byte ranges of about ``CHUNK_BYTES`` from ``start``, each ending after a line."""
    while start < len(data):
        end = data.find(b"\n", start + CHUNK_BYTES)
        end = len(data) if end < 0 else end + 1
        yield start, end
        start = end


def read_waveform_csv(source: str | os.PathLike | bytes) -> Waveform:
    """Read a two-column CSV (time in s, volts) into a :class:`Waveform`.

    Parameters
    ----------
    source : str, os.PathLike, bytes or file-like
        A path; the file's bytes (e.g. an upload); its text (a ``str`` holding
        a line break is taken as text, any other ``str`` as a path); or an
        open file.

    Returns
    -------
    Waveform
        With ``clean`` None.

    Raises
    ------
    WaveformError
        Naming the first bad line: wrong field count, text or non-finite
        values in a number column, time not increasing; also for an empty or
        too large file, fewer than 2 or more than ``MAX_ROWS`` rows.
    """
    data = _raw_bytes(source)
    layout = _Layout(data)
    t_parts: list[np.ndarray] = []
    v_parts: list[np.ndarray] = []
    lineno = layout.header_lines + 1
    previous = -np.inf
    rows = 0
    for start, end in _chunks(data, layout.offset):
        chunk = data[start:end]
        columns = _fast(chunk, layout, previous, rows)
        if columns is None:
            columns = _line_by_line(chunk, lineno, layout, previous, rows)
        t, v = columns
        if t.size:
            t_parts.append(t)
            v_parts.append(v)
            previous = float(t[-1])
            rows += t.size
        lineno += chunk.count(b"\n")
    if rows < 2:
        found = "no data row" if rows == 0 else "only 1 data row"
        raise WaveformError(f"{found} after {_plural(layout.header_lines, 'header line')}; "
                            "at least 2 are needed")
    return Waveform(t=np.concatenate(t_parts), v=np.concatenate(v_parts))
