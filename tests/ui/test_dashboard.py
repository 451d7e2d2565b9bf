"""The dashboard page through Streamlit's own app-testing API (streamlit.testing.v1.AppTest).

Checks: the bundled demo network loads with its overview; an uploaded log (with a links table, or with the
parameters typed in the form) produces that hop's overview; a bad file shows a one-line message and no traceback;
the download buttons are offered and carry the files the command line writes; nothing from an upload is
evaluated or unpickled, and no temporary file is left behind.
"""
from __future__ import annotations

import ast
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "dashboard.py")
TIMEOUT_S = 120  # the first run analyses the whole demo network; later runs hit the cache


def _small_log() -> bytes:
    """One day of 1-min receive levels of an invented hop with one 20-minute fade 10 dB below its threshold.

    A 1-min log keeps the test small (1440 rows).  Clear-sky level -45 dBm, +-0.3 dB scintillation (seeded).
    """
    rng = np.random.default_rng(7)
    times = pd.date_range("2026-03-02 00:00:00", periods=1440, freq="60s", tz="UTC")
    level = -45.0 + rng.normal(0.0, 0.3, len(times))
    fade = (times >= "2026-03-02 14:00:00+00:00") & (times < "2026-03-02 14:20:00+00:00")
    level[fade] = -80.0 + rng.normal(0.0, 0.5, int(fade.sum()))
    body = "\n".join(f"{t:%Y-%m-%dT%H:%M:%SZ},{v:.1f}" for t, v in zip(times, level))
    return ("time,RSL (dBm)\n" + body + "\n").encode()


LINKS = b"link_id,frequency_ghz,length_km,polarization,threshold_dbm,objective_pct\nTESTHOP,23,8.5,V,-70,99.99\n"


def _app() -> AppTest:
    return AppTest.from_file(APP, default_timeout=TIMEOUT_S)


def _no_failure(at: AppTest) -> None:
    assert len(at.exception) == 0, [e.message for e in at.exception]


def _metric_labels(at: AppTest) -> list[str]:
    return [m.label for m in at.metric]


@pytest.mark.slow
def test_demo_network_loads():
    at = _app().run()
    _no_failure(at)
    assert [e.value for e in at.error] == []
    assert "Availability" in _metric_labels(at)
    assert any(m.value.startswith("### Hop ") for m in at.markdown)
    labels = [b.label for b in at.download_button]
    for name in ("events.csv", "outage_summary.csv", "outage_by_cause.csv", "report.pdf"):
        assert name in labels
    # every hop's views draw (all tabs render on each run); switching hop uses the cached analysis
    for hop in at.selectbox(key="hop").options:
        at.selectbox(key="hop").set_value(hop).run()
        _no_failure(at)
        assert [e.value for e in at.error] == []
        assert any(m.value == f"### Hop {hop}" for m in at.markdown)


def _upload(at: AppTest, log: tuple[str, bytes], links: bytes | None = None) -> AppTest:
    at.session_state["mode"] = "My files"        # start on the upload page (the demo has its own test)
    at.run()
    assert any("Upload one or more" in i.value for i in at.info)
    at.file_uploader(key="logs").set_value((log[0], log[1], "text/csv"))
    if links is not None:
        at.file_uploader(key="links_file").set_value(("links.csv", links, "text/csv"))
    return at.run()


def test_upload_with_links_table_produces_the_overview():
    at = _upload(_app(), ("TESTHOP_week.csv", _small_log()), LINKS)
    _no_failure(at)
    assert [e.value for e in at.error] == []
    assert any(m.value == "### Hop TESTHOP" for m in at.markdown)
    assert "Availability" in _metric_labels(at)
    # the parameter form is pre-filled from the links table
    assert at.number_input(key="f_TESTHOP").value == 23.0
    assert at.number_input(key="t_TESTHOP").value == -70.0
    # the 20-min fade at -80 dBm is below the -70 dBm threshold: the overview reports time below threshold
    # (labels from diag.glossary, durations h:mm:ss since issue 16)
    below = next(m for m in at.metric if m.label == "Time below threshold h:mm:ss")
    assert below.value not in ("–", "0:00:00")


def test_upload_without_links_table_asks_for_parameters():
    at = _upload(_app(), ("hop7.csv", _small_log()))
    _no_failure(at)
    assert "Availability" not in _metric_labels(at)
    assert any("enter the" in i.value for i in at.info)
    at.number_input(key="f_hop7").set_value(18.0)
    at.number_input(key="d_hop7").set_value(10.0)
    at.number_input(key="t_hop7").set_value(-72.0)
    assert at.selectbox(key="p_hop7").value is None   # the channels do not say it: asked, never pre-filled
    at.selectbox(key="p_hop7").set_value("V")
    at.form_submit_button[0].click().run()
    _no_failure(at)
    assert any(m.value == "### Hop hop7" for m in at.markdown)
    assert "Availability" in _metric_labels(at)


@pytest.mark.parametrize("name, data", [
    ("binary.csv", bytes(range(256)) * 8),
    ("empty.csv", b""),
    ("no_signal.csv", b"time,comment\n2026-03-02T00:00:00Z,hello\n2026-03-02T00:01:00Z,world\n"),
], ids=["binary", "empty", "no-signal-column"])
def test_bad_file_shows_a_one_line_message(name, data):
    at = _upload(_app(), (name, data))
    _no_failure(at)
    messages = [e.value.replace("\\", "") for e in at.error]       # markup characters come escaped
    assert messages, "a bad file must produce a message"
    assert any(name in m for m in messages)
    assert all("\n" not in m and "Traceback" not in m for m in messages)


def test_detection_can_be_corrected_with_a_mapping():
    # A level column whose name the reader cannot know ("Kanal 7") is refused with a message; naming it in the
    # "Correct the detection" form (same keys as a --map file) makes the same upload readable.
    text = _small_log().decode().replace("RSL (dBm)", "Kanal 7").encode()
    at = _upload(_app(), ("TESTHOP_x.csv", text), LINKS)
    _no_failure(at)
    assert any("TESTHOP\\_x.csv" in e.value and "signal column" in e.value for e in at.error)
    assert "Availability" not in _metric_labels(at)
    at.text_area(key="map_signals").set_value("Kanal 7 = rsl:V")
    at.form_submit_button(key="map_apply").click().run()
    _no_failure(at)
    assert at.session_state["mapping"] == {"signals": {"Kanal 7": {"quantity": "rsl_dbm", "channel": "V"}}}
    assert [e.value for e in at.error] == []
    assert any(m.value == "### Hop TESTHOP" for m in at.markdown)
    assert "Availability" in _metric_labels(at)
    # a malformed override line is refused with a message, the page keeps working
    at.text_area(key="map_signals").set_value("Kanal 7 rsl")
    at.form_submit_button(key="map_apply").click().run()
    _no_failure(at)
    assert any("Correct the detection" in e.value and "NAME=QUANTITY" in e.value for e in at.error)


def test_markup_in_names_is_shown_not_rendered():
    # Issue 9: names from files are data.  A file name holding markdown/LaTeX/HTML-like text appears escaped in
    # the message (Streamlit renders markdown in alerts), so it cannot become a link, an image or a formula.
    name = "[x](javascript:alert(1))_$a$_<b>.csv"
    at = _upload(_app(), (name, b"\x00\x01binary"))
    _no_failure(at)
    message = next(e.value for e in at.error if "cannot be read" in e.value)
    assert "\\[x\\](javascript:alert(1))\\_\\$a\\$\\_\\<b\\>.csv" in message


def test_bad_links_table_shows_a_one_line_message():
    at = _upload(_app(), ("TESTHOP.csv", _small_log()), b"link_id,frequency_ghz\nX,abc\n")
    _no_failure(at)
    messages = [e.value for e in at.error]
    assert any("links table" in m and "\n" not in m for m in messages)


def test_downloads_are_offered():
    # The page offers the files `analyze` writes; it builds them with the same diag.report byte functions that
    # write_outputs (the command line) saves, so the downloads are those files byte for byte.
    at = _upload(_app(), ("TESTHOP_week.csv", _small_log()), LINKS)
    _no_failure(at)
    buttons = {b.label: b for b in at.download_button}
    assert {"report.pdf", "events.csv", "outage_summary.csv", "outage_by_cause.csv", "findings.json",
            "all files (zip)"} <= set(buttons)
    assert all(buttons[n].proto.url for n in ("events.csv", "outage_summary.csv", "outage_by_cause.csv",
                                             "findings.json"))

    # byte identity of these functions with the files write_outputs saves is checked in tests/report/test_report.py;
    # tests/ui/test_browser.py downloads events.csv through a real browser and compares it byte for byte.


def test_no_temporary_files_left(tmp_path, monkeypatch):
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    at = _upload(_app(), ("TESTHOP_week.csv", _small_log()), LINKS)
    _no_failure(at)
    assert list(tmp_path.iterdir()) == []


def test_page_never_evaluates_or_unpickles():
    # Issue 9: nothing from an upload is executed.  The page and its view module call no eval/exec/compile and
    # import no pickle-like loader (common practice for handling untrusted files).
    banned_calls = {"eval", "exec", "compile", "__import__"}
    banned_modules = {"pickle", "marshal", "shelve", "dill", "cloudpickle", "joblib"}
    pages = sorted((ROOT / "diag" / "ui").glob("*.py"))        # the page's modules since issue 16
    for path in (ROOT / "dashboard.py", ROOT / "diag" / "report" / "views.py", *pages):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
                assert node.func.id not in banned_calls, f"{path.name}: {node.func.id}()"
            if isinstance(node, ast.Import):
                assert not {a.name.split(".")[0] for a in node.names} & banned_modules, path.name
            if isinstance(node, ast.ImportFrom):
                assert (node.module or "").split(".")[0] not in banned_modules, path.name
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
                assert node.func.attr not in {"read_pickle", "loads"} or path.name == "app.py" and \
                    node.func.attr == "loads" and ast.unparse(node.func.value) == "json", ast.unparse(node)


def test_config_limits_uploads_and_binds_to_loopback():
    import tomllib

    config = tomllib.loads((ROOT / ".streamlit" / "config.toml").read_text())
    assert config["server"]["address"] in ("localhost", "127.0.0.1")
    assert 1 <= config["server"]["maxUploadSize"] <= 200
    assert config["browser"]["gatherUsageStats"] is False
    assert config["server"]["headless"] is True


def test_hop_selectors_follow_each_other():
    # issue 16: the parameters' Hop selector and the results' Hop selector used to be independent
    at = _app().run()
    hops = at.selectbox(key="hop").options
    assert len(hops) > 2
    at.selectbox(key="hop").set_value(hops[2]).run()
    _no_failure(at)
    assert at.selectbox(key="param_hop").value == hops[2]
    at.selectbox(key="param_hop").set_value(hops[1]).run()
    _no_failure(at)
    assert at.selectbox(key="hop").value == hops[1]
    assert any(m.value == f"### Hop {hops[1]}" for m in at.markdown)


def test_spreadsheet_upload_says_why_in_words():
    # issue 16: an .xlsx upload showed only a red icon; the reason was on hover
    at = _app()
    at.session_state["mode"] = "My files"
    at.run()
    at.file_uploader(key="logs").set_value(("week.xlsx", b"PK\x03\x04 not a csv", "application/octet-stream"))
    at.run()
    _no_failure(at)
    assert any("week.xlsx" in e.value and "save the sheet as CSV" in e.value for e in at.error)


def test_page_icon_is_drawn_locally():
    # issue 16: the icon was fetched from an outside host and failed offline; now an image made in-process
    from PIL import Image

    from diag.ui.app import page_icon

    assert isinstance(page_icon(), Image.Image)
    source = (ROOT / "diag" / "ui" / "app.py").read_text()
    assert "page_icon=page_icon()" in source and "http" not in source.split("def page_icon")[1].split("def ")[0]
