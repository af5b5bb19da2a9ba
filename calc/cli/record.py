"""The ``cupcal record`` command: record a thermometer to a CSV log as it reads (docs/recording.md)."""

from __future__ import annotations

import importlib
import shlex
import signal
import threading
import tomllib
import uuid
from pathlib import Path
from typing import Any

import click

from calc.errors import CupcalError, InputError

__all__ = ["record_command"]

_KINDS = ("dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction")


def _profile(device: str | None, pattern: str | None, unit: str | None, simulate: bool) -> Any:
    from calc.live.devices import PROFILES, load_profile, make_profile, temperature_unit

    if pattern is not None or unit is not None:
        if pattern is None or unit is None or device is not None:
            raise InputError("give --pattern and --unit together, and not with --device", field="--pattern")
        temperature_unit(unit, where="--unit")  # refused naming --unit, before the pattern is looked at
        return make_profile("command line", pattern, unit, where="--pattern")
    if device is None:
        return PROFILES["stamped-kelvin" if simulate else "bare-celsius"]
    if device in PROFILES:
        return PROFILES[device]
    if device.endswith(".toml") or Path(device).exists():
        return load_profile(device)
    raise InputError(
        f"unknown device {device!r}; expected one of {', '.join(sorted(PROFILES))} or a profile file (.toml)",
        field="--device",
    )


def _simulator() -> Any:
    """Return :mod:`calc.simulation.thermometer`, loaded by name (the simulator is in cli's own layer)."""
    return importlib.import_module("calc.simulation.thermometer")


def _source(port: str | None, baud: int, command: str | None, follow: str | None, from_start: bool, thermo: Any) -> Any:
    from calc.live import sources

    given = [
        name
        for name, value in (("--port", port), ("--command", command), ("--follow", follow), ("--simulate", thermo))
        if value
    ]
    if len(given) != 1:
        said = "none" if not given else " and ".join(given)
        raise InputError(f"give exactly one of --port, --command, --follow or --simulate (got {said})", field="--port")
    if thermo is not None:
        source = sources.SerialSource(thermo.open_pty(), baud)
        thermo.start()
        return source
    if port:
        return sources.SerialSource(port, baud)
    if command:
        argv = shlex.split(command)
        if not argv:
            raise InputError("the command is empty", field="--command")
        return sources.CommandSource(argv)
    assert follow is not None  # exactly one source is given (checked above)
    return sources.FollowSource(follow, from_start=from_start)


def _run_text(run_file: str | None, sim: Any, out: Path) -> str | None:
    if run_file is None:
        return None if sim is None else _simulator().run_file_text(sim, out.name)
    try:
        text = Path(run_file).read_text(encoding="utf-8")
        tomllib.loads(text)
    except FileNotFoundError:
        raise InputError("file not found; expected the run file (.toml) of this run", source=run_file) from None
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"cannot read the run file ({exc})", source=run_file) from None
    return text


def _streamer(
    notebook: str | None, token: str | None, run_text: str | None, target_u: float | None, sidecar: Any, side_file: Path
) -> Any:
    from calc.live.stream import NotebookClient, Streamer

    if notebook is None:  # a token in CUPCAL_TOKEN without --notebook is simply not used
        return None
    if not token or run_text is None:
        missing = "--token (or CUPCAL_TOKEN)" if not token else "--run-file"
        raise InputError(f"streaming to the notebook needs {missing}", field=missing.split()[0])
    if not notebook.startswith(("http://", "https://")):
        raise InputError(
            f"the notebook address {notebook!r} is not a URL; expected http://… or https://…", field="--notebook"
        )
    if sidecar.notebook not in (None, notebook):  # another notebook: a new live run there
        sidecar.live_run_id, sidecar.client_key = None, str(uuid.uuid4())
    sidecar.notebook = notebook
    sidecar.write(side_file)

    def remember(live_id: int) -> None:
        if sidecar.live_run_id not in (None, live_id):
            click.echo(f"notebook: it gave live run {live_id}, not {sidecar.live_run_id} as before", err=True)
        if sidecar.live_run_id != live_id:
            sidecar.live_run_id = live_id
            sidecar.write(side_file)
        click.echo(f"notebook: live run {live_id} ({notebook.rstrip('/')}/live/{live_id})", err=True)

    return Streamer(
        NotebookClient(notebook, token),
        run_text,
        sidecar.client_key,
        target_u=target_u,
        on_live_id=remember,
        on_message=lambda text: click.echo(f"notebook: {text}", err=True),
    )


def _finish(streamer: Any, out: Path) -> None:
    """Post finish with the log as written; say where the stored run is."""
    if streamer.live_id is None:
        try:
            streamer.ensure_live_run()  # one last try
        except CupcalError as exc:
            raise InputError(
                f"cannot finish: the live run was never created ({exc}); the log is kept, upload it with its run file",
                source=str(out),
            ) from None
    try:
        answer = streamer.client.finish(streamer.live_id, out.read_text(encoding="utf-8"))
    except CupcalError as exc:
        raise InputError(
            f"could not finish the live run {streamer.live_id} ({exc}); the log is kept, "
            "upload the log with its run file",
            source=str(out),
        ) from None
    click.echo(f"notebook: stored as run {answer.get('run_id')} ({answer.get('run_url', '')})")


def _summary(summary: Any, out: Path, log: Any, streamer: Any, sent_all: bool) -> None:
    rows = log.rows
    span = f", t = {rows[0][0]:g} … {rows[-1][0]:g} s" if rows else ""
    click.echo(
        f"{out}: {summary.recorded} readings recorded now, {summary.total} in the log{span}; ended: {summary.ended_by}"
    )
    if summary.bad_lines:
        click.echo(
            f"{summary.bad_lines} line(s) did not give a reading (the first {len(summary.shown)} are shown above)"
        )
    if streamer is not None:
        state = "all readings sent" if sent_all else f"{streamer.pending} reading(s) not sent yet"
        problem = streamer.refused or streamer.last_problem
        click.echo(
            f"notebook: live run {streamer.live_id}: {state}" + (f" ({problem})" if problem and not sent_all else "")
        )


class _Stop:
    """Turn SIGINT and SIGTERM into a flag the recording loop checks (restored on exit)."""

    def __init__(self) -> None:
        self.event = threading.Event()
        self._old: dict[int, Any] = {}

    def __enter__(self) -> _Stop:
        for signum in (signal.SIGINT, signal.SIGTERM):
            self._old[signum] = signal.signal(signum, lambda *_: self.event.set())
        return self

    def __exit__(self, *exc: object) -> None:
        for signum, handler in self._old.items():
            signal.signal(signum, handler)


@click.command("record")
@click.argument("out", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--port", help="Serial port of the thermometer, e.g. /dev/ttyUSB0 or COM3.")
@click.option("--baud", type=click.IntRange(50, 4_000_000), default=9600, show_default=True, help="Serial speed.")
@click.option("--command", help="Read the standard output of this command, one reading per line.")
@click.option("--follow", help="Read lines another program appends to this file.")
@click.option("--from-start", is_flag=True, help="With --follow: read the lines already in the file too.")
@click.option("--simulate", type=click.Choice(_KINDS), help="Read a simulated thermometer playing a KIND run.")
@click.option(
    "--speed", type=float, default=1.0, show_default=True, help="With --simulate: play this many times faster."
)
@click.option("--seed", type=int, default=None, help="With --simulate: the seed of the simulated run.")
@click.option(
    "--garble",
    type=float,
    default=0.0,
    show_default=True,
    help="With --simulate: share of extra garbled lines, as from a flaky cable.",
)
@click.option(
    "--device", help="A built-in device profile (bare-celsius, stamped-kelvin, labelled-fahrenheit) or a .toml file."
)
@click.option("--pattern", help="A regular expression with a (?P<value>…) group (and optionally (?P<time>…)).")
@click.option("--unit", help="The unit of --pattern's value: °C (degC), K or °F (degF).")
@click.option("--notebook", help="Stream to the notebook at this address, e.g. https://lab.example/.")
@click.option("--token", envvar="CUPCAL_TOKEN", help="API token with the live scope (or set CUPCAL_TOKEN).")
@click.option("--run-file", help="The run file (.toml) of this run, sent to the notebook.")
@click.option(
    "--target-u",
    type=click.FloatRange(min=0, min_open=True),
    help="Target expanded uncertainty for the notebook's advice.",
)
@click.option("--finish", is_flag=True, help="When recording ends, ask the notebook to analyze and store the run.")
@click.option("--max-readings", type=click.IntRange(1), help="Stop after this many readings.")
@click.option("--quiet", is_flag=True, help="Do not print each reading.")
def record_command(out: Path, **opts: Any) -> None:
    """Record a thermometer to a CSV log as it reads, and stream the readings to the notebook.

    One of --port, --command, --follow or --simulate says where the readings come from; the log is
    written row by row (flushed and synced), and running the same command again resumes it.
    Ctrl-C or SIGTERM ends the recording cleanly. See docs/recording.md.
    """
    try:
        parts = _open(out, opts)
    except InputError as exc:
        where = f"{exc.field}: " if exc.field and exc.field.startswith("--") and not exc.source else ""
        click.echo(f"cupcal record: {where}{exc.message if where else exc}", err=True)
        raise click.exceptions.Exit(2) from None
    _record(out, opts, *parts)


def _open(out: Path, opts: dict[str, Any]) -> tuple[Any, ...]:
    """Check the options, open the source, then the log (so a bad port leaves no file behind)."""
    from calc.live.recorder import open_log

    profile = _profile(opts["device"], opts["pattern"], opts["unit"], opts["simulate"] is not None)
    sim = thermo = None
    if not opts["simulate"] and (opts["speed"] != 1.0 or opts["garble"] or opts["seed"] is not None):
        raise InputError("--speed, --seed and --garble go with --simulate KIND", field="--simulate")
    if opts["simulate"]:
        sim, thermo = _simulator().simulated_thermometer(
            opts["simulate"], opts["seed"], profile, speed=opts["speed"], garble=opts["garble"]
        )
    run_text = _run_text(opts["run_file"], sim, out)
    source = _source(opts["port"], opts["baud"], opts["command"], opts["follow"], opts["from_start"], thermo)
    try:
        log, sidecar, side_file = open_log(out)
        try:
            streamer = _streamer(opts["notebook"], opts["token"], run_text, opts["target_u"], sidecar, side_file)
        except BaseException:
            log.close()
            raise
    except BaseException:
        source.close()
        if thermo is not None:
            thermo.close()
        raise
    return profile, sim, thermo, source, log, sidecar, side_file, streamer


def _record(
    out: Path,
    opts: dict[str, Any],
    profile: Any,
    sim: Any,
    thermo: Any,
    source: Any,
    log: Any,
    sidecar: Any,
    side_file: Path,
    streamer: Any,
) -> None:
    """Record until stopped, then close everything, print the summary and finish if asked."""
    from calc.live.recorder import Recorder

    _start_message(out, log, source, profile, sim)
    echo = None if opts["quiet"] else (lambda seq, t, c: click.echo(f"{seq:6d}  {t:10.3f} s  {c:9.4f} °C"))
    recorder = Recorder(
        source,
        profile,
        log,
        sidecar,
        side_file,
        on_bad_line=lambda text: click.echo(f"refused line: {text}", err=True),
        on_reading=_both(echo, streamer),
    )
    if streamer is not None:
        streamer.start(list(log.rows))
    with _Stop() as stop:
        try:
            summary = recorder.run(
                stop.event.is_set,
                max_readings=opts["max_readings"],
                idle_stop=None if thermo is None else thermo.done.is_set,
            )
        finally:
            source.close()
            log.close()
            if thermo is not None:
                thermo.close()
        if streamer is not None and streamer.pending and streamer.refused is None:
            click.echo(f"notebook: sending the last {streamer.pending} reading(s) (at most 10 s)…", err=True)
        sent_all = streamer.close(wait_s=10.0) if streamer is not None else True
        _summary(summary, out, log, streamer, sent_all)
        if sim is not None:
            _truth(sim, out)
        if opts["finish"] and streamer is not None and not summary.failed:
            _finish(streamer, out)
        elif opts["finish"] and streamer is not None:
            click.echo(
                "notebook: not finished, the recording ended by a fault; run the same command again "
                "to go on recording into the same live run",
                err=True,
            )
    if summary.failed:
        raise click.exceptions.Exit(2)


def _both(echo: Any, streamer: Any) -> Any:
    printing = [echo is not None]

    def on_reading(seq: int, t: float, c: float) -> None:
        if printing[0]:
            try:
                echo(seq, t, c)
            except OSError:  # stdout closed (`… | head`): stop printing, never stop recording
                printing[0] = False
        if streamer is not None:
            streamer.add(seq, t, c)

    return on_reading


def _start_message(out: Path, log: Any, source: Any, profile: Any, sim: Any) -> None:
    if log.resumed:
        last = f", last t = {log.rows[-1][0]:g} s" if log.rows else ""
        click.echo(f"resuming {out} ({len(log.rows)} readings{last})", err=True)
    what = f"a simulated {sim.truth.kind} run on {source.name}" if sim is not None else source.name
    click.echo(f"recording {what} with the profile {profile.name!r} to {out}; Ctrl-C ends", err=True)


def _truth(sim: Any, out: Path) -> None:
    """Print the simulated run's truth and write its run file next to the log (when there is none)."""
    click.echo(_simulator().truth_line(sim))
    run_path = out.with_suffix(".toml")
    if not run_path.exists():
        run_path.write_text(_simulator().run_file_text(sim, out.name), encoding="utf-8")
        click.echo(f"its run file: {run_path} (cupcal analyze {run_path})")
