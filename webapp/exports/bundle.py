"""The zip of a selection of runs: ``results.csv``, and per run its JSON export and its RO-Crate zip.

The runs come from :func:`webapp.exports.document.selected_runs` (access checked there).
"""

from __future__ import annotations

import io
import json
import zipfile

from webapp.exports.document import run_document
from webapp.exports.results_csv import export_csv
from webapp.exports.rocrate import crate_zip
from webapp.models import Run


def export_selection_zip(runs: list[Run], crate: bool = True) -> bytes:
    """Return a zip of a selection: ``results.csv``, and per run its JSON export and RO-Crate zip."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("results.csv", export_csv(runs))
        for run in runs:
            z.writestr(f"run-{run.id}.json", json.dumps(run_document(run), ensure_ascii=False, indent=2))
            if crate:
                z.writestr(f"run-{run.id}.crate.zip", crate_zip(run))
    return out.getvalue()
