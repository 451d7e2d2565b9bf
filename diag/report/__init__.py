"""All output files of an analysis: events.csv, findings.json, outage_summary.csv, outage_by_cause.csv, report.pdf.

``write_outputs(results, out_dir)`` writes them all; the ``*_bytes`` functions give the same content for the
dashboard's downloads.  Colours, hatches and labels per cause live in ``diag.report.style``.
"""
from __future__ import annotations

from pathlib import Path
from typing import Callable, Iterable

from diag.report.pdf import format_availability, format_minutes, page_png_bytes, pdf_bytes
from diag.report.tables import (
    events_csv_bytes,
    findings_json_bytes,
    outage_by_cause_csv_bytes,
    outage_summary_csv_bytes,
    safe_cell,
    safe_filename,
)
from diag.results import LinkResult

OUTPUT_FILES = ("events.csv", "findings.json", "outage_summary.csv", "outage_by_cause.csv", "report.pdf")

__all__ = ["write_outputs", "events_csv_bytes", "findings_json_bytes", "outage_summary_csv_bytes",
           "outage_by_cause_csv_bytes", "pdf_bytes", "page_png_bytes", "safe_cell", "safe_filename",
           "format_availability", "format_minutes", "OUTPUT_FILES"]


def write_outputs(results: Iterable[LinkResult], out_dir, *,
                  progress: Callable[[int, int, str], None] | None = None) -> list[Path]:
    """Write the five output files into ``out_dir`` (created if needed); returns their paths in a fixed order.

    ``progress(done, total, message)`` is called after each file.  Raises ``InputError`` when the folder cannot be
    created or written.
    """
    from diag.outputs import files_into

    results = list(results)
    makers = {"events.csv": events_csv_bytes, "findings.json": findings_json_bytes,
              "outage_summary.csv": outage_summary_csv_bytes, "outage_by_cause.csv": outage_by_cause_csv_bytes,
              "report.pdf": pdf_bytes}
    # all five made in a temporary folder beside out_dir, then moved into place (diag.outputs)
    return files_into(out_dir, {name: (lambda make=makers[name]: make(results)) for name in OUTPUT_FILES},
                      progress=progress)
