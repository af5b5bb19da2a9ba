"""Old name of :mod:`webapp.services.page_data`, kept only for ``webapp/runs/`` (which another change is
editing now); once ``runs/new.py`` and ``runs/views.py`` import ``page_data``, delete this module."""

from webapp.services.page_data import Preview, calorimeter_choices, group_choices, preview_run  # noqa: F401
from webapp.services.page_data import result_of, run_page  # noqa: F401
