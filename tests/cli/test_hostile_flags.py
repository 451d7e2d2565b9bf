"""Property test (issue 15, "status 1 only for genuine bugs"): any mapping file and any override flags give status
0 or 2 and never a traceback or an "internal error" line.

The mapping files are TOML built from the keys the reader knows (``diag.read.mapping``) and some it does not, with
values of every TOML type; the flags are the ``ingest`` override flags with hostile values (NaN, inf, 1e12, empty,
control characters, stray ``%``).  No outside source: the rule is the project's own contract (one-line error with
status 2 for bad input; status 1 is kept for bugs).
"""
from __future__ import annotations

import datetime as dt
import json

import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from diag.cli import main

SECTIONS = {"file": ["separator", "decimal", "encoding", "header_line", "bogus"],
            "time": ["columns", "column", "format", "zone", "marks"],
            "link": ["column", "id", "only"], "channel": ["column"], "floor": ["dbm"], "signals": ["RSL", "Level A"],
            "weird": ["x"]}
ODD_TEXT = st.sampled_from(["", " ", ",", ";", "::", "\\t", "tab", "%", "%Q", "%d.%m.%Y", "iso", "epoch_ms",
                            "latin-1", "utf-99", "Europe/Vienna", "Mars/Base", "start", "end", "none", "rsl",
                            "time", "RSL", "a\u0007b", "x" * 300, "1,000", "nan", "inf", "-1e12", "\u00e9"])
SCALAR = st.one_of(ODD_TEXT, st.integers(-10**13, 10**13), st.floats(allow_nan=True, allow_infinity=True),
                   st.booleans(), st.just(dt.datetime(2026, 3, 2, 1, 0)))
VALUE = st.one_of(SCALAR, st.lists(SCALAR, max_size=3), st.dictionaries(ODD_TEXT, SCALAR, max_size=2))


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "nan" if v != v else ("inf" if v == float("inf") else "-inf" if v == float("-inf") else repr(v))
    if isinstance(v, int):
        return str(v)
    if isinstance(v, dt.datetime):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {_toml_value(x)}" for k, x in v.items()) + "}"
    return json.dumps(v)


@st.composite
def mapping_text(draw) -> str:
    lines = []
    if draw(st.booleans()):
        lines.append(f"interval_s = {_toml_value(draw(SCALAR))}")
    for section in draw(st.lists(st.sampled_from(sorted(SECTIONS)), unique=True, max_size=4)):
        lines.append(f"[{section}]")
        for key in draw(st.lists(st.sampled_from(SECTIONS[section]), unique=True, max_size=3)):
            lines.append(f"{json.dumps(key)} = {_toml_value(draw(VALUE))}")
    return "\n".join(lines) + "\n"


FLAG_VALUES = st.sampled_from(["nan", "inf", "-inf", "1e12", "-900", "0", "900", "", "::", "%", "x", "-99",
                               "none", "Lo=rsl:H:min:inf", "Lo=bogus", "=", "time", "RSL", "a\u0007b", "1,5"])
FLAGS = ["--interval-s", "--floor-dbm", "--sep", "--time-format", "--time-col", "--signal-col", "--link-col",
         "--channel-col", "--encoding", "--header-line", "--decimal", "--time-marks", "--tz", "--link-id"]


@pytest.fixture(scope="module")
def log_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("hostile_flags") / "HOP-A.csv"
    t0 = dt.datetime(2026, 3, 2, tzinfo=dt.timezone.utc)
    path.write_text("time,RSL (dBm)\n" + "".join(
        f"{(t0 + dt.timedelta(minutes=i)).strftime('%Y-%m-%dT%H:%M:%SZ')},-45.{i % 10}\n" for i in range(60)))
    return path


def _check(code: int, err: str) -> None:
    assert code in (0, 2), err
    assert "Traceback" not in err and "internal error" not in err, err
    if code == 2:
        errors = [ln for ln in err.splitlines() if ln.startswith("diag: error:")]
        assert len(errors) == 1, err


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(text=mapping_text())
@example(text='[file]\nheader_line = "abc"\n')   # status 1 before issue 15
@example(text="interval_s = 1e12\n")
def test_any_mapping_file_gives_status_0_or_2(log_file, tmp_path_factory, capsys, text):
    path = tmp_path_factory.mktemp("map") / "m.toml"
    path.write_text(text, encoding="utf-8")
    _check(main(["ingest", str(log_file), "--map", str(path)]), capsys.readouterr().err)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(flags=st.lists(st.tuples(st.sampled_from(FLAGS), FLAG_VALUES), max_size=4))
@example(flags=[("--sep", "::")])                 # status 1 before issue 15
@example(flags=[("--time-format", "%")])
@example(flags=[("--signal-col", "Lo=rsl:H:min:inf")])
def test_any_override_flags_give_status_0_or_2(log_file, capsys, flags):
    argv = ["ingest", str(log_file)]
    for flag, value in flags:
        argv += [flag, value]
    _check(main(argv), capsys.readouterr().err)
