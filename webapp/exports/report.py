"""The printable report of one run, as HTML (print styles) or PDF: one place for the pages, the API and archives."""

from __future__ import annotations

from flask import render_template

from webapp.exports.document import run_document
from webapp.exports.pdf import html_to_pdf, plot_png_uri
from webapp.models import Run

__all__ = ["report_html", "report_pdf"]


def report_html(run: Run, plot_uri: str | None = None) -> str:
    """Return the printable HTML report of a run (print styles; the plot inline, SVG unless ``plot_uri`` is given)."""
    from webapp.embed.views import plot_data_uri

    doc = run_document(run)
    if plot_uri is None:
        plot_uri = plot_data_uri(run) if run.current_result else ""
    return render_template("exchange/report.html", run=run, result=run.current_result, doc=doc, plot_uri=plot_uri)


def report_pdf(run: Run) -> bytes:
    """Return the printable report of a run as PDF (the same HTML; the plot as PNG)."""
    return html_to_pdf(report_html(run, plot_uri=plot_png_uri(run)))
