"""Output files: CSV/JSON contents, spreadsheet safety, hostile link ids, and the management PDF.

Spreadsheet-injection rule (common practice, the OWASP "CSV injection" guidance): a cell starting with = + - @, tab
or carriage return is prefixed with an apostrophe so no formula runs; numbers stay numbers.
"""
from __future__ import annotations

import csv
import io
import json
import shutil
import subprocess

import numpy as np
import pandas as pd
import pytest

from diag import schema
from diag.analysis import outage
from diag.errors import InputError
from diag.links import make_link
from diag.report import (
    OUTPUT_FILES,
    events_csv_bytes,
    findings_json_bytes,
    format_availability,
    outage_by_cause_csv_bytes,
    outage_summary_csv_bytes,
    page_png_bytes,
    pdf_bytes,
    safe_cell,
    safe_filename,
    write_outputs,
)
from diag.results import ChannelSeries, LinkResult

pypdf = pytest.importorskip("pypdf")

T0 = pd.Timestamp("2026-03-02T00:00:00Z")
HOSTILE_IDS = ["../../etc/x", "=cmd|' /C calc'!A0", "HOP$1$ \\x_{y}"]


def _link(link_id, objective=99.99):
    return make_link({"link_id": link_id, "frequency_ghz": 23, "length_km": 8, "polarization": "H",
                      "threshold_dbm": -70, "objective_pct": objective})


def _sample_result(link_id, *, fade_s=40, objective=99.99, evidence="smooth fade"):
    n = 3600
    index = pd.date_range(T0, periods=n, freq="1s", name="time_utc")
    rsl = -40.0 - 3 * np.sin(np.arange(n) / 300.0)
    cause = np.array([""] * n, dtype=object)
    rsl[1000:1000 + fade_s] = -78.0
    cause[990:1010 + fade_s] = "rain"
    status = np.array(["ok"] * n, dtype=object)
    status[2000:2100] = "no_data"
    frame = pd.DataFrame({"rsl_dbm": np.where(status == "ok", rsl, np.nan), "status": status,
                          "reference_dbm": -40.0, "attenuation_db": -40.0 - rsl,
                          "event_id": np.where(cause != "", 0, -1), "cause": cause}, index=index)
    events = pd.DataFrame([{"link_id": link_id, "channel": "H", "start_utc": index[990],
                            "end_utc": index[1010 + fade_s], "duration_s": 20.0 + fade_s, "peak_fade_db": 38.0,
                            "cause": "rain", "confidence": 0.9, "evidence": evidence},
                           {"link_id": link_id, "channel": "H", "start_utc": index[3000],
                            "end_utc": index[3010], "duration_s": 10.0, "peak_fade_db": -1.5,
                            "cause": "unknown", "confidence": 0.2, "evidence": "-upfade, +1.5 dB"}])
    result = LinkResult(link=_link(link_id, objective), series={"H": ChannelSeries(link_id, "H", 1.0, "sample",
                                                                                   frame)}, events=events)
    result.statistics = {"channels": {"H": {"exceedance": {
        "depth_db": [3, 10, 20, 30], "all_percent": [2.0, 1.5, 1.2, float("nan")],
        "multipath_percent": [0.0, 0.0, 0.0, 0.0], "rayleigh_percent": [39.3, 9.5, 1.0, 0.1]}}}}
    result.findings = [{"title": "Rain fade exceeded the margin", "detail": "one storm, 38 dB",
                        "numbers": {"peak_db": 38.0}, "actions": ["review the fade margin"],
                        "cautions": ["work at height"]}]
    result.skipped = ["P.530 multipath prediction: needs geoclimatic_k in the links table"]
    result.outage = outage.account_link(result)
    return result


def _stats_result(link_id):
    index = pd.date_range(T0, periods=16, freq="900s", name="time_utc")
    avg = np.full(16, -45.0)
    mn = np.full(16, -48.0)
    mx = np.full(16, -42.0)
    avg[5], mn[5] = -60.0, -80.0          # a partial interval
    avg[6], mn[6], mx[6] = -85.0, -90.0, -75.0   # all below threshold
    frame = pd.DataFrame({"rsl_dbm": avg, "rsl_min_dbm": mn, "rsl_max_dbm": mx, "status": "ok",
                          "event_id": -1, "cause": ""}, index=index)
    frame.loc[index[5:7], "cause"] = "rain"
    result = LinkResult(link=_link(link_id), series={"V": ChannelSeries(link_id, "V", 900.0, "stats", frame)},
                        events=pd.DataFrame(columns=schema.EVENT_COLUMNS))
    result.outage = outage.account_link(result)
    return result


@pytest.fixture(scope="module")
def results():
    return [_sample_result("HOP-A"), _sample_result("HOP-B", fade_s=5, objective=None), _stats_result("HOP-C")]


@pytest.fixture(scope="module")
def written(results, tmp_path_factory):
    out = tmp_path_factory.mktemp("out")
    calls = []
    paths = write_outputs(results, out, progress=lambda done, total, msg: calls.append((done, total)))
    return out, paths, calls


def test_write_outputs_writes_every_file(written):
    out, paths, calls = written
    assert [p.name for p in paths] == list(OUTPUT_FILES)
    assert all(p.exists() and p.stat().st_size > 0 for p in paths)
    assert calls[-1] == (5, 5)


def test_csv_columns_and_adding_up(written, results):
    out, _, _ = written
    events = pd.read_csv(out / "events.csv")
    assert list(events.columns) == schema.EVENT_COLUMNS
    assert events["start_utc"].str.match(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$").all()   # ISO 8601 UTC
    assert (events["peak_fade_db"] == -1.5).any()                  # a negative number stays a number
    summary = pd.read_csv(out / "outage_summary.csv")
    assert list(summary.columns[:len(schema.OUTAGE_SUMMARY_COLUMNS)]) == schema.OUTAGE_SUMMARY_COLUMNS
    by_cause = pd.read_csv(out / "outage_by_cause.csv")
    assert list(by_cause.columns[:len(schema.OUTAGE_BY_CAUSE_COLUMNS)]) == schema.OUTAGE_BY_CAUSE_COLUMNS
    for _, row in summary.iterrows():
        part = by_cause[by_cause["link_id"] == row["link_id"]]
        for col in ("unavailable_s_lo", "unavailable_s_hi", "below_threshold_s_lo", "below_threshold_s_hi"):
            assert part[col].sum() == row[col]
    hop_a = summary.set_index("link_id").loc["HOP-A"]
    assert hop_a["unavailable_s"] == 40 and hop_a["no_data_s"] == 100 and hop_a["meets_objective"] == "no"
    hop_c = summary.set_index("link_id").loc["HOP-C"]
    assert np.isnan(hop_c["unavailable_s"]) and hop_c["unavailable_s_lo"] == 900 < hop_c["unavailable_s_hi"]
    assert pd.isna(summary.set_index("link_id").loc["HOP-B", "meets_objective"])   # no objective: blank


@pytest.mark.slow
def test_outputs_are_deterministic(results, written):
    out, _, _ = written
    for maker in (events_csv_bytes, outage_summary_csv_bytes, outage_by_cause_csv_bytes, findings_json_bytes):
        assert maker(results) == maker(results)
    assert pdf_bytes(results) == (out / "report.pdf").read_bytes()


def test_findings_json_is_strict_json(results):
    doc = json.loads(findings_json_bytes(results),
                     parse_constant=lambda name: pytest.fail(f"non-JSON constant {name}"))
    hop_a = doc["links"][0]
    assert hop_a["statistics"]["channels"]["H"]["exceedance"]["all_percent"][3] is None     # NaN -> null
    assert hop_a["outage"]["summary"]["unavailable_s"] == 40
    assert hop_a["findings"][0]["actions"] == ["review the fade margin"]
    assert hop_a["skipped"] and "ingest" in hop_a and "cross_polar" in hop_a and "level_changes" in hop_a


# --- the PDF ----------------------------------------------------------------------------------------------------
def test_pdf_pages_and_availability_figures(written, results):
    out, _, _ = written
    reader = pypdf.PdfReader(str(out / "report.pdf"))
    # summary, timelines, fade depths and method, findings per hop (one page here), glossary (issue 16 added the
    # last two; the report had 3 pages before)
    assert len(reader.pages) == 5
    text = " ".join(" ".join(page.extract_text().split()) for page in reader.pages)
    glossary_page = " ".join(reader.pages[-1].extract_text().split())
    for term in ("XPD", "SES", "G.826", "A0.01", "P.530", "Fade margin", "Outage (unavailable time)"):
        assert term in glossary_page, term
    assert "not yet checked" not in text
    for r in results:
        figure = format_availability(r.outage.summary)
        assert figure != "n/a"
        assert figure in text, figure
    assert "99.99 %" in text and "NOT met" in text
    assert "radiating antennas" in text                              # the safety caution
    assert "A week is not a year" in text
    assert "Rain fade exceeded the margin" in text                   # findings with actions
    assert reader.metadata.get("/CreationDate") is None              # deterministic metadata


def _png_from_pdf(pdf_path, tmp_path):
    if shutil.which("pdftoppm"):
        subprocess.run(["pdftoppm", "-png", "-r", "50", "-f", "1", "-l", "1", str(pdf_path),
                        str(tmp_path / "page")], check=True, timeout=60)
        return next(tmp_path.glob("page*.png")).read_bytes()
    return None


def test_page_one_renders_and_is_not_blank(written, results, tmp_path):
    out, _, _ = written
    # pdftoppm (poppler) renders the PDF itself when installed; otherwise the same page is drawn with the same code
    # through matplotlib's Agg renderer
    png = _png_from_pdf(out / "report.pdf", tmp_path) or page_png_bytes(results, 0, dpi=50)
    from PIL import Image

    image = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
    assert image.shape[0] > image.shape[1] > 300                     # portrait page
    dark = np.count_nonzero(image < 200) / image.size
    assert 0.01 < dark < 0.6, dark                                   # text, table and bars; not blank, not black
    assert image.std() > 10


# --- spreadsheet safety and hostile ids -------------------------------------------------------------------------
@pytest.mark.parametrize("value, expected", [
    ("=1+1", "'=1+1"), ("+cmd", "'+cmd"), ("-2+3", "'-2+3"), ("@SUM(A1)", "'@SUM(A1)"), ("\tx", "'\tx"),
    ("\rx", "'\rx"), ("-3.5", "-3.5"), ("+4", "+4"), ("1e-3", "1e-3"), ("rain", "rain"), ("", ""),
    (-3.5, -3.5), (7, 7), (None, None)])
def test_safe_cell(value, expected):
    assert safe_cell(value) == expected


@pytest.mark.parametrize("link_id", HOSTILE_IDS + ["..", "", "C:\\\\Windows\\\\x", "a/b\\c", "-rf", ".hidden"])
def test_safe_filename(link_id):
    name = safe_filename(link_id)
    assert name and "/" not in name and "\\" not in name and ".." not in name
    assert not name.startswith((".", "-"))
    assert name not in (".", "..")


@pytest.mark.slow
def test_hostile_link_ids_and_evidence_are_neutralised(tmp_path):
    results = [_sample_result(HOSTILE_IDS[0]), _sample_result(HOSTILE_IDS[1], evidence="=HYPERLINK(\"x\")"),
               _sample_result(HOSTILE_IDS[2])]
    paths = write_outputs(results, tmp_path / "out")
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == sorted(OUTPUT_FILES)   # nothing escaped
    assert not (tmp_path / "etc").exists()
    for name in ("events.csv", "outage_summary.csv", "outage_by_cause.csv"):
        rows = list(csv.reader(io.StringIO((tmp_path / "out" / name).read_text(encoding="utf-8"))))
        for row in rows:
            for cell in row:
                if cell.startswith(("=", "+", "-", "@", "\t", "\r")):
                    float(cell)                                   # only numbers may start with a sign
        assert any("'=cmd|' /C calc'!A0" in cell for row in rows for cell in row)
    assert len(paths) == 5
    text = " ".join(page.extract_text() for page in pypdf.PdfReader(str(tmp_path / "out" / "report.pdf")).pages)
    assert "HOP$1$" in text                                      # printed as text, not parsed as mathtext


def test_unwritable_output_folder_is_an_input_error(tmp_path, results):
    blocker = tmp_path / "file"
    blocker.write_text("x")
    with pytest.raises(InputError, match="output folder"):
        write_outputs(results, blocker / "sub")


def test_hop_that_could_not_be_analysed_is_listed_not_dropped(tmp_path):
    failed = LinkResult(link=_link("BROKEN"), series={}, events=pd.DataFrame(columns=schema.EVENT_COLUMNS),
                        error="cannot read broken.csv")
    write_outputs([failed], tmp_path)
    summary = pd.read_csv(tmp_path / "outage_summary.csv")
    assert summary.loc[0, "link_id"] == "BROKEN" and "cannot read broken.csv" in summary.loc[0, "method"]
    assert pd.read_csv(tmp_path / "events.csv").empty
    reader = pypdf.PdfReader(str(tmp_path / "report.pdf"))
    assert len(reader.pages) == 5 and "not analysed" in reader.pages[0].extract_text()   # 3 before issue 16


@pytest.mark.slow
def test_hop_without_deep_fades_draws_no_empty_legend(tmp_path, caplog):
    """A hop whose exceedance table holds no positive percentage (nothing faded that deep): the chart says so, and
    matplotlib is never asked for a legend without entries (it would draw an empty box and log a warning)."""
    quiet = _sample_result("HOP-QUIET")
    quiet.statistics = {"channels": {"H": {"exceedance": {
        "depth_db": [3, 10, 20, 30], "all_percent": [0.0, 0.0, 0.0, 0.0], "multipath_percent": [0.0, 0.0, 0.0, 0.0],
        "rayleigh_percent": [39.3, 9.5, 1.0, 0.1]}}}}
    with caplog.at_level("WARNING"):
        data = pdf_bytes([quiet])
    assert not [r for r in caplog.records if "No artists with labels" in r.getMessage()]
    text = " ".join(page.extract_text() for page in pypdf.PdfReader(io.BytesIO(data)).pages)
    assert "No fade deep enough to plot" in text
