"""Property tests: random and mutated CSV bytes give either a result whose accounting adds up or an InputError.

Nothing else may escape the reader (no pandas/pyarrow/UnicodeDecodeError ...).  Bounded example counts keep the file
well under the suite's time budget.
"""
from __future__ import annotations

import gzip

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from diag.errors import InputError
from diag.read.ingest import read_log
from tests.read.test_ingest_shapes import CASES, check_accounting

pytestmark = pytest.mark.filterwarnings("ignore::diag.errors.DataWarning")
SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])

SEEDS = [c[1] for c in CASES if c[0] not in ("gzip", "utf16_bom")]


def read_or_input_error(data: bytes, **kwargs) -> None:
    try:
        result = read_log(data, name="fuzz.csv", **kwargs)
    except InputError as exc:
        assert exc.one_line() and "\n" not in exc.one_line()
        return
    check_accounting(result)


@SETTINGS
@given(st.binary(max_size=400))
def test_random_bytes(data):
    read_or_input_error(data)


@st.composite
def mutated(draw):
    data = bytearray(draw(st.sampled_from(SEEDS)))
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["delete", "insert", "replace", "dup_line", "swap_lines", "truncate"]))
        n = len(data)
        if n == 0:
            break
        i = draw(st.integers(0, n - 1))
        if op == "delete":
            j = draw(st.integers(i, min(n, i + 8)))
            del data[i:j]
        elif op == "insert":
            data[i:i] = draw(st.binary(max_size=6) | st.sampled_from([b",", b";", b'"', b"\n", b"\r\n", b"\t", b"|",
                                                                      b"LOS", b"-99", b"\xef\xbb\xbf", b"\xe9"]))
        elif op == "replace":
            data[i] = draw(st.integers(0, 255))
        elif op in ("dup_line", "swap_lines"):
            lines = bytes(data).split(b"\n")
            a = draw(st.integers(0, len(lines) - 1))
            b = draw(st.integers(0, len(lines) - 1))
            if op == "dup_line":
                lines.insert(b, lines[a])
            else:
                lines[a], lines[b] = lines[b], lines[a]
            data = bytearray(b"\n".join(lines))
        else:
            del data[i:]
    return bytes(data)


@SETTINGS
@given(mutated())
def test_mutated_csv(data):
    read_or_input_error(data)


@SETTINGS
@given(mutated())
def test_mutated_csv_gzip_and_local_time(data):
    read_or_input_error(gzip.compress(data), tz="Europe/Vienna")


CELLS = st.sampled_from(["-45.5", "-45,5", "", "LOS", "N/A", "---", "-99", "-128", "abc", "1e400", "999", "0",
                         '"-47,1"', "  -50  ", "nan", "-inf", "-100.0"])
TIMES = st.sampled_from(["2026-12-01T10:00:00Z", "2026-12-01T10:00:01Z", "2026-12-01 10:00:02+01:00",
                         "01.12.2026 10:00:03", "12/13/2026 10:00:04", "1796119205", "", "garbage",
                         "2026-03-29T02:30:00", "2026-10-25 02:30:00", "2026-13-45T99:99:99Z"])


@st.composite
def structured(draw):
    sep = draw(st.sampled_from([",", ";", "\t", "|"]))
    ncols = draw(st.integers(1, 3))
    names = draw(st.lists(st.sampled_from(["RSL H (dBm)", "RSL V (dBm)", "XPD", "TSL", "ES", "Rx level", "foo",
                                           "Link", "Channel", "RSL min", "RSL max 15min"]),
                          min_size=ncols, max_size=ncols, unique=True))
    tname = draw(st.sampled_from(["Time", "timestamp", "Zeit", "Date", "x"]))
    lines = [sep.join([tname] + names)]
    for _ in range(draw(st.integers(0, 12))):
        cells = [draw(TIMES)] + [draw(CELLS | st.sampled_from(["A", "B", "H"])) for _ in names]
        if draw(st.booleans()) and draw(st.booleans()):
            cells = cells[:-1]
        lines.append(sep.join(cells))
    pre = draw(st.sampled_from(["", "Export\n", "# a, b; c\n\n"]))
    return (pre + "\n".join(lines) + "\n").encode(draw(st.sampled_from(["utf-8", "latin-1", "utf-8-sig"])))


@SETTINGS
@given(structured(), st.sampled_from([None, "Europe/Vienna", "America/New_York"]))
def test_structured_random_logs(data, tz):
    read_or_input_error(data, tz=tz)


def test_empty_channel_cell_joins_the_named_channel():
    # found by test_structured_random_logs: a row whose channel cell is empty goes to the column's channel "H",
    # like the rows that say "H"; the two keys are one series, so the rows are sorted together (and a repeated
    # time across them is one duplicate, counted), not left in file order as two pieces
    data = b"Time,RSL H (dBm),Channel\n2026-12-01T10:00:00Z,-45.5,H\n2026-03-29T02:30:00,-45.5,\n"
    read_or_input_error(data)
    table = read_log(data, name="fuzz.csv").table
    assert list(table["channel"].astype(str)) == ["H", "H"]
    assert table["time_utc"].is_monotonic_increasing
    twice = read_log(b"Time,RSL H (dBm),Channel\n2026-12-01T10:00:00Z,-45.5,H\n2026-12-01T10:00:00Z,-45.5,\n",
                     name="twice.csv")
    assert len(twice.table) == 1 and twice.report.duplicates == 1
