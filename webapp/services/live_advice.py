"""The advice of a live run: calc's advisor run once per readings batch, its answer kept on the row.

Pages and event streams only read ``LiveRun.advice_json``; nothing calls the advisor on a page
request. The advisor runs outside any write transaction (a slow analysis never holds the write
lock); its answer is then written only if no newer one was written meanwhile (``advice_seq``).
"""

from __future__ import annotations

import json
import logging
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import AnalysisError, InputError
from webapp.models import Calibration, LiveReading, LiveRun, LiveSectionTarget
from webapp.services.errors import Invalid
from webapp.services.live_events import notify
from webapp.services.live_runfile import analysis_text, calibration_for

_log = logging.getLogger(__name__)


def effective_target(session: so.Session, live: LiveRun) -> tuple[float | None, str]:
    """Return the target U in force for a live run and where it comes from ("run", "section", "default")."""
    if live.target_u is not None:
        return live.target_u, "run"
    if live.section_id is not None:
        target = session.get(LiveSectionTarget, live.section_id)
        if target is not None:
            return target.target_u, "section"
    return None, "default"


def readings_of(session: so.Session, live_id: int, after_seq: int = -1) -> list[tuple[int, float, float]]:
    """Return a live run's readings after ``after_seq`` as (seq, time_s, temperature_c), in order."""
    rows = session.execute(
        sa.select(LiveReading.seq, LiveReading.time_s, LiveReading.temperature_c)
        .where(LiveReading.live_run_id == live_id, LiveReading.seq > after_seq)
        .order_by(LiveReading.seq)
    )
    return [(int(s), float(t), float(c)) for s, t, c in rows]


def compute_advice(session: so.Session, live: LiveRun) -> dict[str, Any]:
    """Return the advisor's answer for a live run's readings so far (a dict, JSON-ready)."""
    from calc.live.advisor import advise

    rows = readings_of(session, live.id)
    try:
        calibration: Calibration | None = calibration_for(session, live.run_file, live.calorimeter_id)
    except Invalid as exc:
        return _refused(exc.message)
    text = analysis_text(live.run_file, live.id, calibration)
    target, _where = effective_target(session, live)
    try:
        advice = advise(
            text,
            [r[1] for r in rows],
            [r[2] for r in rows],
            target_u=target,
            source=f"live run {live.id}",
            previous_phase=previous_phase(live),
        )
    except (InputError, AnalysisError) as exc:
        return _refused(str(exc))
    return advice.to_dict()


def previous_phase(live: LiveRun) -> str | None:
    """Return the phase of the advice stored on the row (the advisor's hysteresis needs it), or None."""
    from calc.live.advisor import PHASES

    try:
        phase = json.loads(live.advice_json or "null")["phase"]
    except (ValueError, TypeError, KeyError):
        return None
    return phase if phase in PHASES else None


def _refused(message: str) -> dict[str, Any]:
    return {
        "phase": "refused",
        "status": f"no advice: {message}",
        "seconds_more": None,
        "estimate": None,
        "periods": {"fore": None, "mixing_time": None, "after": None},
        "drift_lines": [],
        "warnings": [],
    }


def refresh_advice(session: so.Session, live_id: int) -> None:
    """Advise on a live run's readings and store the answer, unless a newer one is stored already."""
    session.rollback()  # a fresh read transaction: see the readings just committed
    live = session.get(LiveRun, live_id)
    if live is None or live.advice_seq >= live.last_seq and live.advice_seq != -1:
        return
    seq = live.last_seq
    try:
        advice = json.dumps(compute_advice(session, live), allow_nan=False)
    except ValueError:  # a NaN or infinity in the answer: nothing a page could draw
        advice = json.dumps(_refused("the advisor's numbers were not finite"))
    except Exception:  # noqa: BLE001 - the readings are stored already; a fault of the advisor must not undo that
        _log.exception("live run %s: the advisor failed", live_id)
        advice = json.dumps(_refused("the advisor failed on these readings (the notebook's log says why)"))
    session.rollback()
    done = session.execute(
        sa.update(LiveRun)
        .where(LiveRun.id == live_id, sa.or_(LiveRun.advice_seq < seq, LiveRun.advice_seq == -1))
        .values(advice_json=advice, advice_seq=max(seq, 0) if seq >= 0 else -1)
        .execution_options(synchronize_session=False)
    )
    if done.rowcount:
        notify(session, live_id)
    session.commit()
