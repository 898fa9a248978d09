"""Tests of the CSV waveform reader: accepted layouts and line-numbered errors."""

import io

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from bandcalc.signal_check import recording as wavefile
from bandcalc.signal_check.recording import WaveformError, read_waveform_csv


@pytest.mark.parametrize(
    ("text", "t", "v"),
    [
        ("0,1\n0.001,1.25\n", [0, 0.001], [1, 1.25]),  # no header
        ("time,volts\n0,1\n0.001,1.25\n", [0, 0.001], [1, 1.25]),
        ("Time;Input\ns;V\n0,000;1,25\n0,001;-1,5e-1\n", [0, 0.001], [1.25, -0.15]),
        ("t\tv\n0\t1.5\n2e-3\t2.5\n", [0, 0.002], [1.5, 2.5]),
        ("t\tv\n0\t1,5\n0,002\t2,5\n", [0, 0.002], [1.5, 2.5]),  # tab, decimal comma
        ("0;1.5\n1;2.5\n", [0, 1], [1.5, 2.5]),  # semicolon, decimal point
        ("\n\nt,v\n\n0,1\n\n1,2\n  \n", [0, 1], [1, 2]),  # blank lines anywhere
        ("0,1\r\n1,2\r\n", [0, 1], [1, 2]),  # Windows line ends
        ("0,1\r1,2\r", [0, 1], [1, 2]),  # old Mac line ends
        ('"t","v"\n"0","1"\n"1","2"\n', [0, 1], [1, 2]),  # quoted
        ("0;1,5;\n1;2;\n", [0, 1], [1.5, 2]),  # trailing delimiter
        (" 0 , 1 \n 1 , +2 \n", [0, 1], [1, 2]),  # spaces around numbers
        ("0,1\n0.5,2\n0.6,3\n2.0,4\n", [0, 0.5, 0.6, 2.0], [1, 2, 3, 4]),  # uneven sampling
    ],
)
def test_accepted_layouts(text, t, v):
    w = read_waveform_csv(text)
    np.testing.assert_array_equal(w.t, t)
    np.testing.assert_array_equal(w.v, v)
    assert w.clean is None


BAD = [
    ("", "the file is empty"),
    ("\n \n\n", "the file is empty"),
    ("time,volts\nseconds,volts\n", "no data row among the first 2 non-blank lines"),
    ("t,v\n0,1\n", "only 1 data row after 1 header line; at least 2 are needed"),
    ("t,v\n0,1\n1,2\n2,3\n3,4\n4,5\n5,abc\n",
     "line 7: 'abc' in the volts column is not a number"),
    ("0,1\nx1,2\n", "line 2: 'x1' in the time column is not a number"),
    (("t,v\n0.001,1\n0.002,1\n0.004,1\n0.005,1\n0.006,1\n0.007,1\n0.008,1\n0.009,1\n"
      "0.0095,1\n0.004,1\n0.003,1\n"),
     "line 11: time 0.004 s is not after the previous 0.0095 s"),
    ("0,1\n1,2\n1,3\n", "line 3: time 1 s is not after the previous 1 s"),
    ("0,1\n1,nan\n", "line 2: 'nan' in the volts column is not a finite number"),
    ("0,1\n-inf,2\n", "line 2: '-inf' in the time column is not a finite number"),
    ("0,1\n1,1e999\n", "line 2: '1e999' in the volts column is out of range for a number"),
    ("0,1\n1,\n", "line 2: the volts column is empty"),
    ("0,1\n1,2,3\n", "line 2: 3 fields, expected 2 (time in s, volts) in a comma-separated"),
    ("0,1\n\n2\n", "line 3: 1 field, expected 2"),
    ("0;1;2;3\n1;2;3;4\n", ("line 1: 4 fields, expected 2 (time in s, volts) in a "
                            "semicolon-separated, decimal point file")),
    ("0 1\n1 2\n", ("line 1: 1 field, expected 2 (time in s, volts) in a comma-separated, "
                    "decimal point file; separate time and volts by a comma, semicolon or tab")),
    ("0,001,1,25\n0,002,1,5\n", ("line 1: 4 fields, expected 2 (time in s, volts) in a "
                                 "comma-separated, decimal point file; numbers with a "
                                 "decimal comma need a semicolon")),
    ("0;1,234.5\n1;2\n", "line 1: '1,234.5' in the volts column is not a number"),
    ("0,1\n1,0x10\n", "line 2: '0x10' in the volts column is not a number"),
    ("0,1\n1,1_0\n", "line 2: '1_0' in the volts column is not a number"),
]


@pytest.mark.parametrize(("text", "message"), BAD)
def test_bad_files_name_the_line(text, message):
    with pytest.raises(WaveformError) as info:
        read_waveform_csv(text.encode())
    assert message in str(info.value)
    assert isinstance(info.value, ValueError)


def test_sources_path_bytes_text_and_open_file(tmp_path):
    text = "t,v\n0,1\n1,2\n"
    path = tmp_path / "trace.csv"
    path.write_text(text)
    for source in (path, str(path), text, text.encode(), io.BytesIO(text.encode()),
                   io.StringIO(text)):
        np.testing.assert_array_equal(read_waveform_csv(source).v, [1, 2])


def test_missing_file_and_wrong_source_type(tmp_path):
    with pytest.raises(WaveformError, match="nothing.csv: cannot read the file"):
        read_waveform_csv(tmp_path / "nothing.csv")
    with pytest.raises(WaveformError, match="cannot read"):
        read_waveform_csv(tmp_path)
    with pytest.raises(WaveformError, match="source must be a file path, bytes, text or an "
                                            "open file, got int"):
        read_waveform_csv(42)


def test_text_encodings():
    body = "Zeit (s);Spannung (µV)\n0;1,5\n1;2,5\n"
    for data in (body.encode("utf-8"), b"\xef\xbb\xbf" + body.encode("utf-8"),
                 body.encode("latin-1"), body.encode("utf-16")):
        np.testing.assert_array_equal(read_waveform_csv(data).v, [1.5, 2.5])


def test_caps_on_rows_and_bytes(monkeypatch, tmp_path):
    monkeypatch.setattr(wavefile, "MAX_ROWS", 3)
    with pytest.raises(WaveformError, match="line 5: more than 3 data rows"):
        read_waveform_csv("t,v\n0,1\n1,1\n2,1\n3,1\n")
    np.testing.assert_array_equal(read_waveform_csv("0,1\n1,1\n2,1\n").t, [0, 1, 2])
    monkeypatch.setattr(wavefile, "MAX_BYTES", 10)
    with pytest.raises(WaveformError, match="at most 10 are read"):
        read_waveform_csv(b"0,1\n1,1\n2,1\n")
    path = tmp_path / "big.csv"
    path.write_bytes(b"0,1\n1,1\n2,1\n")
    with pytest.raises(WaveformError, match=r"big.csv: cannot read the file \(12 bytes; at most 10 are read"):
        read_waveform_csv(path)


def test_only_regular_files_are_read(tmp_path):
    # /dev/zero never ends and a named pipe without a writer never answers: both are refused at once.
    import os
    pipe = tmp_path / "pipe.csv"
    os.mkfifo(pipe)
    for path in ("/dev/zero", pipe):
        with pytest.raises(WaveformError, match="cannot read the file .*not a regular file"):
            read_waveform_csv(path)


def test_header_line_cap(monkeypatch):
    monkeypatch.setattr(wavefile, "MAX_HEADER_LINES", 2)
    read_waveform_csv("a\nb\n0,1\n1,2\n")
    with pytest.raises(WaveformError, match="line 4: more than 2 header lines"):
        read_waveform_csv("a\nb\nc\n0,1\n1,2\n")


def large_file(rows: int) -> tuple[bytes, np.ndarray]:
    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(1e-6, 2e-6, rows))  # uneven sampling
    data = np.column_stack([t, np.sin(t * 1e3) + rng.normal(0, 0.01, rows)])
    buf = io.StringIO()
    np.savetxt(buf, data, delimiter=";", fmt="%.10g")
    return ("Zeit;Spannung\n" + buf.getvalue().replace(".", ",")).encode(), data


def test_many_pieces_read_like_numpy_loadtxt():
    # numpy.loadtxt is the independent reader for the same numbers (decimal point).
    raw, _ = large_file(200_000)
    assert len(raw) > 3 * wavefile.CHUNK_BYTES
    w = read_waveform_csv(raw)
    ref = np.loadtxt(io.BytesIO(raw.replace(b",", b".")), delimiter=";", skiprows=1)
    np.testing.assert_array_equal(w.t, ref[:, 0])
    np.testing.assert_array_equal(w.v, ref[:, 1])


@pytest.mark.parametrize("row", [0, 1, 45_000, 99_998, 199_999])
def test_error_line_number_holds_across_pieces(row):
    raw, _ = large_file(200_000)
    lines = raw.split(b"\n")
    lines[row + 1] = lines[row + 1].replace(b";", b";x")
    lines.insert(3, b"")  # a blank line shifts the numbering of later lines
    line_no = row + 2 + (row + 1 >= 3)
    with pytest.raises(WaveformError, match=rf"^line {line_no}: 'x.*' in the volts column"):
        read_waveform_csv(b"\n".join(lines))


@settings(max_examples=300, deadline=None)
@example(b"\xfe\xff" + b"\x00" * 7)  # a UTF-16 byte-order mark, then an odd byte count
@given(st.one_of(
    st.binary(max_size=200),
    st.text(alphabet="0123456789.,;\t\n\r -+eEnaifx\"", max_size=200),
))
def test_any_input_reads_or_raises_waveform_error(data):
    try:
        w = read_waveform_csv(data.encode() if isinstance(data, str) else data)
    except WaveformError:
        return
    assert len(w) >= 2 and np.all(np.diff(w.t) > 0)
