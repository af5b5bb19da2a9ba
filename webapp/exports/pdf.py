"""The printable run report as PDF: the HTML report rendered by xhtml2pdf (pure Python, on reportlab).

xhtml2pdf's SVG support goes through svglib, which maps the plot's generic font to a
standard PDF font without Greek letters; the plot therefore goes in as a PNG drawn by
matplotlib from the same figure (:func:`webapp.plots.run_plot_png`). The text is set in
DejaVu (shipped with matplotlib) for the same reason: the 14 standard PDF fonts have no
"Δ". The report's safety cautions are part of the HTML and so of the PDF.
"""

from __future__ import annotations

import base64
import io
import logging
from pathlib import Path

import matplotlib

from webapp.models import Run
from webapp.services.errors import ServiceError

log = logging.getLogger(__name__)

_FONTS = Path(matplotlib.get_data_path()) / "fonts" / "ttf"


def _font_faces() -> str:
    faces = []
    for family, files in (
        ("cupcal-serif", ("DejaVuSerif", "DejaVuSerif-Bold", "DejaVuSerif-Italic", "DejaVuSerif-BoldItalic")),
        (
            "cupcal-mono",
            ("DejaVuSansMono", "DejaVuSansMono-Bold", "DejaVuSansMono-Oblique", "DejaVuSansMono-BoldOblique"),
        ),
    ):
        for (weight, style), name in zip(
            (("normal", "normal"), ("bold", "normal"), ("normal", "italic"), ("bold", "italic")), files
        ):
            path = (_FONTS / f"{name}.ttf").as_posix()
            faces.append(
                f'@font-face {{ font-family: {family}; src: url("{path}"); '
                f"font-weight: {weight}; font-style: {style}; }}"
            )
    return "\n".join(faces)


#: added after the report's own styles: fonts with Greek letters, sizes xhtml2pdf understands
PDF_CSS = (
    _font_faces()
    + """
body, p, td, th, li, h1, h2, small, strong { font-family: cupcal-serif; }
body { font-size: 10pt; }
h1 { font-size: 16pt; } h2 { font-size: 12pt; }
pre { font-family: cupcal-mono; font-size: 7.5pt; }
.noprint { display: none; }
img.plot { width: 17cm; }
"""
)


def plot_png_uri(run: Run) -> str:
    """Return the run plot of the current result as a PNG data: URI, or "" when it cannot be drawn."""
    from webapp import plots
    from webapp.services.runs import analysis_of

    result = run.current_result
    if result is None:
        return ""
    try:
        png = plots.run_plot_png(analysis_of(run, result))
    except ServiceError as exc:
        log.warning("run plot of result %s for the PDF: %s", result.id, exc.message)
        return ""
    except Exception:  # noqa: BLE001 - the report is still useful without its plot
        log.exception("run plot of result %s for the PDF failed", result.id)
        return ""
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def html_to_pdf(html: str) -> bytes:
    """Return ``html`` (the printable report) rendered as a PDF document.

    :raise RuntimeError: when xhtml2pdf reports errors while rendering (a server fault, not bad input)
    """
    from xhtml2pdf import pisa

    head_end = html.find("</head>")
    style = f"<style>\n{PDF_CSS}</style>\n"
    html = html[:head_end] + style + html[head_end:] if head_end >= 0 else style + html
    out = io.BytesIO()
    status = pisa.CreatePDF(html, dest=out, encoding="utf-8")
    if status.err:
        raise RuntimeError(f"the PDF report could not be rendered ({status.err} errors)")
    return out.getvalue()
