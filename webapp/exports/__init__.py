"""Everything the notebook writes out for use elsewhere, one module per kind of file.

| module | what |
|---|---|
| :mod:`~webapp.exports.cells` | cells safe for a spreadsheet (text that starts like a formula is neutralised) |
| :mod:`~webapp.exports.document` | the JSON export of one run (files, results, provenance) and the runs of a selection |
| :mod:`~webapp.exports.results_csv` | :func:`~webapp.exports.results_csv.export_csv`: one row per result of some runs |
| :mod:`~webapp.exports.rocrate` | the RO-Crate 1.1 zip of one run |
| :mod:`~webapp.exports.bundle` | a selection's zip: ``results.csv``, and per run its JSON and RO-Crate |
| :mod:`~webapp.exports.grading` | the grading export of a section (CSV, .xlsx) |
| :mod:`~webapp.exports.report` | the printable report of one run (HTML with print styles, or PDF) |
| :mod:`~webapp.exports.pdf` | HTML to PDF (xhtml2pdf) and the run plot as a PNG for it |

The imports run one way, down this list's dependencies: ``bundle`` uses ``results_csv``,
``document`` and ``rocrate``; ``rocrate`` and ``results_csv`` use ``document``; ``report`` uses
``document`` and ``pdf``; nothing here imports ``bundle``. The ``.eln`` archives
(``webapp/services/eln*.py``) build on ``document`` and ``rocrate``. Access is checked by the
callers (views, and :func:`~webapp.exports.document.selected_runs` for a selection).
"""
