"""Services: calibration updates the calorimeter, later runs record it, re-analysis keeps results,
and a failing upload leaves nothing behind. Numbers are checked against calc's own analysis
of the same files (calc is tested against outside sources in tests/calc)."""

from __future__ import annotations

import math
from typing import Any

import pytest
import sqlalchemy as sa

from calc.analysis import analyze_spec
from calc.io.readings import parse_readings
from calc.io.runfile import parse_run
from tests.webapp.conftest import demo_files, without_heat_capacity
from webapp.models import AuditEntry, Calibration, Calorimeter, Person, Result, Run, RunInput
from webapp.quantities import result_quantity, series
from webapp.services.analysis import AnalysisOptions, supply_heat_capacity
from webapp.services.calorimeters import current_calibration
from webapp.services.errors import Invalid
from webapp.services.runs import RunUpload, reanalyze_run, record_run


def _upload(name: str, toml: str | None = None, csv: bytes | None = None, **kw: Any) -> RunUpload:
    t, c = demo_files(name)
    return RunUpload(
        run_toml=toml if toml is not None else t,
        run_file_name=f"{name}.toml",
        readings=csv if csv is not None else c,
        readings_name=f"{name}.csv",
        **kw,
    )


def _calc(toml: str, csv: bytes, **kw: Any) -> Any:
    spec = parse_run(toml, source="x.toml")
    return analyze_spec(spec, parse_readings(csv.decode("utf-8"), source="x.csv"), **kw)


def _counts(session: Any) -> dict[str, int]:
    return {
        m.__name__: session.scalar(sa.select(sa.func.count()).select_from(m))
        for m in (Run, Result, RunInput, Calibration, AuditEntry)
    }


def test_calibration_updates_the_calorimeter_and_later_runs_use_it(session: Any, lab: Any) -> None:
    tech = session.get(Person, lab.ids["tech"])
    cal_run = record_run(session, tech, _upload("cal-electrical-01", calorimeter_id=lab.calorimeter_id))
    cal_result = cal_run.current_result
    current = current_calibration(session, lab.calorimeter_id)
    assert current is not None and current.result_id == cal_result.id
    toml, csv = demo_files("cal-electrical-01")
    ref = _calc(toml, csv)
    assert math.isclose(current.heat_capacity_j_k, ref.gum.values["calorimeter_heat_capacity"], rel_tol=1e-12)
    assert math.isclose(
        current.heat_capacity_j_k_std, ref.gum.uncertainties["calorimeter_heat_capacity"], rel_tol=1e-12
    )

    # a dissolution whose file gives no heat capacity takes the calorimeter's and records which
    toml_kcl, csv_kcl = demo_files("diss-kcl-01")
    run = record_run(
        session,
        session.get(Person, lab.ids["a1"]),
        _upload("diss-kcl-01", toml=without_heat_capacity(toml_kcl), calorimeter_id=lab.calorimeter_id),
    )
    assert run.calibration_id == current.id and run.calibration.result_id == cal_result.id
    supplied = [i for i in run.inputs if i.field == "calorimeter.heat_capacity"]
    assert supplied and supplied[0].origin == f"calibration #{current.id}"
    assert math.isclose(supplied[0].value, current.heat_capacity_j_k, rel_tol=1e-15)
    expected = _calc(supply_heat_capacity(without_heat_capacity(toml_kcl), current, "x"), csv_kcl)
    got = run.current_result
    assert math.isclose(got.molar_enthalpy_kj_mol, expected.gum.values["molar_enthalpy"], rel_tol=1e-12)
    assert math.isclose(got.expanded_uncertainty, expected.gum.expanded_uncertainty, rel_tol=1e-12)
    # the run file is stored exactly as uploaded, without the supplied value
    assert run.run_toml == without_heat_capacity(toml_kcl)
    assert run.readings_raw == csv_kcl


def test_a_run_file_value_wins_over_the_calorimeter(session: Any, lab: Any) -> None:
    run = record_run(
        session, session.get(Person, lab.ids["a1"]), _upload("diss-kcl-01", calorimeter_id=lab.spare_calorimeter_id)
    )
    assert run.calibration_id is None
    hc = [i for i in run.inputs if i.field == "calorimeter.heat_capacity"][0]
    assert (hc.value, hc.std_uncertainty, hc.origin) == (18.6, 2.0, "run file")


def test_heat_capacity_supplied_to_a_file_without_a_calorimeter_section(session: Any, lab: Any) -> None:
    toml, csv = demo_files("diss-kcl-01")
    start = toml.index("[calorimeter]")
    end = toml.index("[thermometer]")
    bare = toml[:start] + toml[end:]
    run = record_run(
        session,
        session.get(Person, lab.ids["coord"]),
        _upload("diss-kcl-01", toml=bare, calorimeter_id=lab.spare_calorimeter_id),
    )
    assert run.calibration is not None and run.calibration.heat_capacity_j_k == 21.0
    expected = _calc(toml.replace('heat_capacity = "18.6 ± 2.0 J/K"', 'heat_capacity = "21.0 ± 3.0 J/K"'), csv)
    assert math.isclose(run.current_result.molar_enthalpy_kj_mol, expected.gum.values["molar_enthalpy"], rel_tol=1e-12)


def test_missing_heat_capacity_on_an_uncalibrated_calorimeter_is_refused(session: Any, lab: Any) -> None:
    toml, _ = demo_files("diss-kcl-01")
    before = _counts(session)
    with pytest.raises(Invalid) as err:
        record_run(
            session,
            session.get(Person, lab.ids["a1"]),
            _upload("diss-kcl-01", toml=without_heat_capacity(toml), calorimeter_id=lab.calorimeter_id),
        )
    assert err.value.field == "calorimeter.heat_capacity"
    assert "no heat capacity yet" in err.value.message
    assert _counts(session) == before


def test_reanalysis_adds_a_result_and_keeps_the_old_one(session: Any, lab: Any) -> None:
    a1 = session.get(Person, lab.ids["a1"])
    run = record_run(session, a1, _upload("diss-kcl-01"))
    first = run.current_result
    second = reanalyze_run(session, a1, run, AnalysisOptions(method="linear-extrapolation", fore=(0.0, 200.0)))
    session.expire_all()
    results = session.scalars(sa.select(Result).where(Result.run_id == run.id).order_by(Result.id)).all()
    assert [r.id for r in results] == [first.id, second.id]
    assert [r.is_current for r in results] == [False, True]
    assert results[1].method == "linear-extrapolation" and results[1].periods_given
    assert (results[1].fore_start_s, results[1].fore_end_s) == (0.0, 200.0)
    toml, csv = demo_files("diss-kcl-01")
    expected = _calc(toml, csv, method="linear-extrapolation", fore=(0.0, 200.0))
    assert math.isclose(results[1].molar_enthalpy_kj_mol, expected.gum.values["molar_enthalpy"], rel_tol=1e-12)
    audit = session.scalars(sa.select(AuditEntry).where(AuditEntry.entity == "run")).all()
    assert [(a.field, a.person_id) for a in audit] == [("result", a1.id)]
    assert audit[0].old.startswith(f"#{first.id} ") and audit[0].new.startswith(f"#{second.id} linear-extrapolation")


def test_reanalyzing_a_calibration_replaces_its_value_in_the_pool(session: Any, lab: Any) -> None:
    from webapp.services.in_force import members_of

    tech = session.get(Person, lab.ids["tech"])
    older = record_run(session, tech, _upload("cal-electrical-01", calorimeter_id=lab.calorimeter_id))
    newer = record_run(session, tech, _upload("cal-mixing-01", calorimeter_id=lab.calorimeter_id))

    def measured() -> dict[int, Calibration]:
        rows = session.scalars(
            sa.select(Calibration).where(Calibration.calorimeter_id == lab.calorimeter_id, Calibration.pool.is_(None))
        ).all()
        return {c.result.run_id: c for c in rows if c.status == "approved"}

    first = measured()
    assert set(first) == {older.id, newer.id}  # staff's calibrations are approved at once
    current = current_calibration(session, lab.calorimeter_id)
    pooled = set(members_of(current)) | set((current.pool or {}).get("excluded", []))
    assert pooled == {first[older.id].id, first[newer.id].id}  # both weighed, whichever the test kept
    reanalyze_run(session, tech, older, AnalysisOptions(method="linear-extrapolation"))
    second = measured()
    assert second[newer.id].id == first[newer.id].id and second[older.id].id != first[older.id].id
    assert session.get(Calibration, first[older.id].id).status == "withdrawn"
    current = current_calibration(session, lab.calorimeter_id)
    assert first[older.id].id not in members_of(current)


@pytest.mark.parametrize(
    ("change", "field"),
    [
        (lambda t, c: (t.replace('volume = "100.00 ± 0.10 mL"', 'volume = "100.00 ± 0.10 g"'), c), "water.volume"),
        (lambda t, c: (t.replace('kind = "dissolution"', 'kind = "melting"'), c), "kind"),
        (lambda t, c: ("kind = \n", c), "run_file"),
        (lambda t, c: (t, c.replace(b"21.80", b"21,8x", 1)), "readings"),
        (lambda t, c: (t, b"\xff\xfe\x00garbage"), "readings"),
        (lambda t, c: (t, b"time_s,temperature_C\n0,21.0\n1,21.0\n"), "readings"),
    ],
)
def test_a_failing_upload_leaves_nothing_behind(session: Any, lab: Any, change: Any, field: str) -> None:
    toml, csv = change(*demo_files("diss-kcl-01"))
    before = _counts(session)
    with pytest.raises(Invalid) as err:
        record_run(session, session.get(Person, lab.ids["a1"]), _upload("diss-kcl-01", toml=toml, csv=csv))
    assert err.value.field == field or err.value.field.startswith(field)
    assert err.value.message
    session.rollback()
    assert _counts(session) == before


def test_series_and_quantities_round_trip(session: Any, lab: Any) -> None:
    run = record_run(session, session.get(Person, lab.ids["a1"]), _upload("diss-kcl-01"))
    t, y = series(run)
    _, csv = demo_files("diss-kcl-01")
    readings = parse_readings(csv.decode(), source="x.csv")
    assert (t == readings.time_s).all() and (y == readings.temperature_K).all()
    q = result_quantity(run.current_result, "molar_enthalpy")
    assert math.isclose(q.to("J/mol").magnitude.n, 1000 * run.current_result.molar_enthalpy_kj_mol)
    assert math.isclose(q.to("J/mol").magnitude.s, 1000 * run.current_result.molar_enthalpy_kj_mol_std)
    assert result_quantity(run.current_result, "calorimeter_heat_capacity") is None


def test_calorimeters_due_lists_the_stale_and_the_uncalibrated(session: Any, lab: Any) -> None:
    import datetime as dt

    from webapp.services.calorimeters import calorimeters_due

    due = calorimeters_due(session, max_age_days=30)
    assert [c.id for c, _ in due] == [lab.calorimeter_id]  # never calibrated; the spare is fresh
    later = dt.datetime.now(dt.UTC).replace(tzinfo=None) + dt.timedelta(days=31)
    assert {c.id for c, _ in calorimeters_due(session, max_age_days=30, now=later)} == {
        lab.calorimeter_id,
        lab.spare_calorimeter_id,
    }
    assert session.get(Calorimeter, lab.spare_calorimeter_id) is not None


def test_analysis_of_reproduces_the_stored_result(session: Any, lab: Any) -> None:
    from webapp.services.runs import analysis_of

    tech = session.get(Person, lab.ids["tech"])
    record_run(session, tech, _upload("cal-electrical-01", calorimeter_id=lab.calorimeter_id))
    toml, _ = demo_files("neut-hcl-naoh-01")
    run = record_run(
        session, tech, _upload("neut-hcl-naoh-01", toml=without_heat_capacity(toml), calorimeter_id=lab.calorimeter_id)
    )
    second = reanalyze_run(session, tech, run, AnalysisOptions(method="equal-area", after=(300.0, 600.0)))
    for result in run.results:
        a = analysis_of(run, result)
        assert a.delta_t.method == result.method
        assert math.isclose(a.gum.values["molar_enthalpy"], result.molar_enthalpy_kj_mol, rel_tol=1e-12)
        assert math.isclose(a.gum.expanded_uncertainty, result.expanded_uncertainty, rel_tol=1e-12)
    assert analysis_of(run).delta_t.method == second.method == "equal-area"
