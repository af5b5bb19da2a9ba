"""``cupcal webhooks deliver``: send the webhook deliveries that are due (entry-point group ``cupcal.commands``)."""

from __future__ import annotations

import time

import click


@click.group()
def webhooks() -> None:
    """Send the notebook's webhook deliveries."""


@webhooks.command()
@click.option(
    "--loop", type=float, default=None, metavar="SECONDS", help="keep running, looking for due deliveries every SECONDS"
)
@click.option(
    "--timeout",
    type=click.FloatRange(min=0.1, max=60.0),
    default=None,
    help="seconds to wait for each receiver (default: the limit webhook_timeout_s)",
)
def deliver(loop: float | None, timeout: float | None) -> None:
    """Attempt every pending delivery whose next attempt is due; print one line per attempt."""
    from calc import limits
    from webapp import create_app
    from webapp.db import new_session
    from webapp.services.webhook_guard import guard_from_config
    from webapp.services.webhooks import deliver_due

    app = create_app()
    guard = guard_from_config(app.config)
    limits.set_for_context(app.config["LIMITS"])
    while True:
        session = new_session(app)
        try:
            for d in deliver_due(session, timeout=timeout, guard=guard):
                state = d.status if d.status != "pending" else f"retry at {d.next_attempt_at:%Y-%m-%d %H:%M:%S} UTC"
                click.echo(
                    f"delivery {d.id} to webhook {d.webhook_id}: attempt {d.attempts}, "
                    f"{d.last_status_code or d.last_error}; {state}"
                )
        finally:
            session.close()
        if loop is None:
            return
        time.sleep(loop)
