"""Forms of the run pages."""

from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import FloatField, SelectField
from wtforms.validators import Optional

from calc.deltat.registry import METHODS


class ReanalyzeForm(FlaskForm):
    """ΔT method and, optionally, the fore and after periods (s)."""

    method = SelectField("ΔT method", choices=sorted(METHODS))
    fore_start = FloatField("Fore period from (s)", validators=[Optional()])
    fore_end = FloatField("to (s)", validators=[Optional()])
    after_start = FloatField("After period from (s)", validators=[Optional()])
    after_end = FloatField("to (s)", validators=[Optional()])
    mixing_time = FloatField("Mixing time (s)", validators=[Optional()])
    mixing_time_u = FloatField("± (s)", validators=[Optional()])

    def mixing(self) -> tuple[float, float] | None:
        """Return (mixing time, its standard uncertainty) entered, or None when left blank."""
        if self.mixing_time.data is None:
            return None
        u = self.mixing_time_u.data
        return (self.mixing_time.data, 1.0 if u is None else u)

    def period(self, which: str) -> tuple[float, float] | None:
        """Return the period entered, or None when both ends are empty."""
        a = getattr(self, f"{which}_start").data
        b = getattr(self, f"{which}_end").data
        if a is None and b is None:
            return None
        return (a if a is not None else float("nan"), b if b is not None else float("nan"))
