"""The notebook's plots: valid, accessible SVG that draws what the calculation found.

The drift curves are checked numerically (through ``drift_curves``), not by reading the SVG back:
they must solve the Newtonian drift law, pass through the fitted levels, lie on the readings of the
drift periods and give back the corrected ΔT of calc.
"""

from __future__ import annotations

import ast
import math
import re
import xml.etree.ElementTree as ET
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from datetime import datetime, timedelta
from functools import cache
from pathlib import Path

import numpy as np
import pytest

from calc.analysis import Analysis, analyze_run, analyze_spec
from calc.deltat.constructions import Construction
from calc.deltat.periods import find_periods
from calc.deltat.registry import METHODS
from calc.io.readings import Readings
from calc.io.runfile import parse_run
from calc.simulation.simulator import simulate_dissolution, write_run
from calc.uncertainty.gum import BudgetLine
from webapp import plots
from webapp.plots import (
    MAX_DRAWN_POINTS,
    OKABE_ITO,
    budget_plot_svg,
    budget_rows,
    calibration_history_svg,
    decimate_minmax,
    drift_curves,
    preview_plot_svg,
    run_plot_svg,
)

ROOT = Path(__file__).resolve().parents[2]
DEMO = sorted((ROOT / "fixtures" / "demo").glob("*.toml"))
NAMES = [p.stem for p in DEMO]
ALL_METHODS = ["regnault-pfaundler", "linear-extrapolation", "equal-area", "model-fit", "naive"]
SVG_NS = "{http://www.w3.org/2000/svg}"


@cache
def analysis(name: str, method: str) -> Analysis:
    return analyze_run(ROOT / "fixtures" / "demo" / f"{name}.toml", method=method, with_reference=False)


@cache
def run_svg(name: str, method: str) -> str:
    return run_plot_svg(analysis(name, method))


def parse(svg: str) -> ET.Element:
    root = ET.fromstring(svg.encode("utf-8"))
    assert root.tag == f"{SVG_NS}svg"
    return root


def texts(root: ET.Element) -> list[str]:
    return ["".join(el.itertext()) for el in root.iter(f"{SVG_NS}text")]


def assert_self_contained_and_accessible(svg: str) -> ET.Element:
    assert svg.startswith("<?xml") and "<!DOCTYPE" not in svg
    root = parse(svg)
    # accessibility: role, a title and a description the role points at
    assert root.get("role") == "img"
    title = root.find(f"{SVG_NS}title")
    desc = root.find(f"{SVG_NS}desc")
    assert title is not None and title.text and desc is not None and desc.text
    assert root.get("aria-labelledby") == title.get("id")
    assert root.get("aria-describedby") == desc.get("id")
    # no external references: only local #fragments; URLs only as the two namespace names
    for el in root.iter():
        for key, value in el.attrib.items():
            if key.endswith("href"):
                assert value.startswith("#"), value
    assert set(re.findall(r"https?://[^\s\"')]+", svg)) <= {
        "http://www.w3.org/2000/svg",
        "http://www.w3.org/1999/xlink",
    }
    assert "<image" not in svg and "@import" not in svg
    # ids are unique and every local reference resolves
    ids = [el.get("id") for el in root.iter() if el.get("id")]
    assert len(ids) == len(set(ids))
    refs = set(re.findall(r"url\(#([^)]+)\)", svg)) | set(re.findall(r'href="#([^"]+)"', svg))
    assert refs <= set(ids)
    return root


# ------------------------------------------------------------------ run plot


def test_every_method_is_covered():
    # the plot knows how to draw each registered method's construction
    assert set(METHODS) == set(ALL_METHODS)
    assert len(DEMO) >= 6


@pytest.mark.parametrize("method", ALL_METHODS)
@pytest.mark.parametrize("name", NAMES)
def test_run_plot_is_valid_accessible_svg(name, method):
    a = analysis(name, method)
    svg = run_svg(name, method)
    root = assert_self_contained_and_accessible(svg)
    shown = texts(root)
    assert "temperature / °C" in shown
    assert "time / s" in shown or "time / min" in shown
    info_title = a.spec.get("info", "title")
    assert info_title and info_title in shown
    assert info_title in root.find(f"{SVG_NS}title").text
    # the corrected ΔT with its standard uncertainty, rounded to 2 significant digits of u
    label = next(s for s in shown if s.startswith("corrected ΔT = "))
    value, u = re.match(r"corrected ΔT = (\S+) K, u = (\S+) K", label).groups()
    value, u = float(value.replace("−", "-")), float(u)
    assert math.isclose(u, a.delta_t.u, rel_tol=0.05)
    assert abs(value - a.delta_t.value) <= 0.5 * 10 ** math.floor(math.log10(u))
    # readings, periods and mixing time are drawn (their groups carry our ids)
    ids = {el.get("id").split("-", 1)[1] for el in root.iter() if el.get("id")}
    assert {"readings", "fore-period", "after-period", "mixing-time"} <= ids
    assert {f"curve-{k}" for k in drift_curves(a)} <= ids


def test_run_plot_is_deterministic_and_ids_differ_between_pictures():
    a = analysis("diss-kcl-01", "regnault-pfaundler")
    one, two = run_plot_svg(a), run_plot_svg(a)
    assert one == two
    other = run_svg("cal-mixing-01", "regnault-pfaundler")
    ids_one = {el.get("id") for el in parse(one).iter() if el.get("id")}
    ids_other = {el.get("id") for el in parse(other).iter() if el.get("id")}
    assert not ids_one & ids_other  # two plots can share one HTML page


def test_user_text_is_shown_literally():
    a = analysis("diss-kcl-01", "naive")
    spec = replace(a.spec, sections={**a.spec.sections, "info": {"title": 'Cup <A> & "B" costs $5 for 2 $ id="x"'}})
    svg = run_plot_svg(replace(a, spec=spec))
    root = assert_self_contained_and_accessible(svg)
    assert 'Cup <A> & "B" costs $5 for 2 $ id="x"' in texts(root)


def test_time_axis_switches_to_minutes_for_long_logs():
    a = analysis("diss-kcl-01", "regnault-pfaundler")
    r = a.readings
    long = replace(r, time_s=r.time_s * 3.0)
    periods = replace(
        a.periods,
        fore=(0.0, 720.0),
        after=(a.periods.after[0] * 3, r.time_s[-1] * 3),
        mixing_time=720.0,
        main_end=a.periods.main_end * 3,
    )
    svg = run_plot_svg(replace(a, readings=long, periods=periods))
    assert "time / min" in texts(parse(svg))


# ------------------------------------------------------------------ drift curves


def _at(curve: tuple[np.ndarray, np.ndarray], t: float) -> float:
    tt, yy = curve
    assert tt[0] - 1e-9 <= t <= tt[-1] + 1e-9, "the curve must reach this time"
    return float(np.interp(t, tt, yy))


def _newton_law(curves: list[tuple[np.ndarray, np.ndarray]]) -> tuple[float, float, float]:
    """Fit dT/dt = a − k·T to the drawn curves; return (a, k, largest misfit relative to max |dT/dt|)."""
    dydt = np.concatenate([np.gradient(yy, tt, edge_order=2) for tt, yy in curves])
    y = np.concatenate([yy for _, yy in curves])
    X = np.column_stack([np.ones_like(y), -y])
    (a, k), *_ = np.linalg.lstsq(X, dydt, rcond=None)
    return float(a), float(k), float(np.max(np.abs(X @ [a, k] - dydt)) / np.max(np.abs(dydt)))


def _delta_t(a: Analysis, start: float, end: float, law_a: float, k: float, t_i: float, t_f: float) -> float:
    """ΔT = T(t_f) − T(t_i) − ∫ g(T) dt, trapezoid on the readings (docs/methods.md §2.3; common practice, no source)."""
    t, y = a.readings.time_s, a.readings.temperature_K
    inside = (t > t_i) & (t < t_f)
    tt = np.concatenate([[t_i], t[inside], [t_f]])
    yy = np.concatenate([[start], y[inside], [end]])
    g = law_a - k * yy
    return (end - start) - float(np.sum(0.5 * (g[1:] + g[:-1]) * np.diff(tt)))


def _rms_on(a: Analysis, curve: tuple[np.ndarray, np.ndarray], window: tuple[float, float]) -> float:
    t, y = a.readings.time_s, a.readings.temperature_K
    m = (t >= max(window[0], curve[0][0])) & (t <= min(window[1], curve[0][-1]))
    return float(np.sqrt(np.mean((y[m] - np.interp(t[m], *curve)) ** 2)))


@pytest.mark.parametrize("name", NAMES)
def test_newtonian_drift_curves_solve_one_law_and_give_back_delta_t(name):
    a = analysis(name, "regnault-pfaundler")
    c = a.delta_t.construction.to_dict()  # the stored form: what the notebook keeps and exports
    curves = drift_curves(a)
    assert set(curves) == {"fore", "after"}
    t_i, t_f = c["t_i"], c["t_f"]
    two = a.kind in ("neutralization", "mixing-calibration")
    # the drawn curves solve Newton's law of cooling dT/dt = g0 + k (T0 − T) (common practice, no source);
    # one-solution runs: one law across both periods; two-solution runs: the after period's own law
    law_a, k, misfit = _newton_law([curves["after"]] if two else [curves["fore"], curves["after"]])
    assert misfit < 1e-5  # numerical derivative of the drawn points (second order) is this exact
    assert math.isclose(k, c["k_per_s"], rel_tol=1e-5, abs_tol=1e-9)
    # they pass through the fitted levels at t_i and t_f
    start, end = _at(curves["fore"], t_i), _at(curves["after"], t_f)
    assert math.isclose(start, a.delta_t.start_temperature, abs_tol=1e-9)
    if two:
        assert math.isclose(end, c["after_newton"][0], abs_tol=1e-9)
        assert curves["fore"][0][-1] == pytest.approx(t_i)  # the other system's fore line stops at mixing
    else:
        assert math.isclose(end, c["newton_joint"][1], abs_tol=1e-9)
        assert curves["fore"][0][-1] == pytest.approx(t_f)  # extrapolated across the main period
        assert curves["after"][0][0] == pytest.approx(t_i)
    # and with the readings of the main period they give calc's corrected ΔT
    assert _delta_t(a, start, end, law_a, k, t_i, t_f) == pytest.approx(a.delta_t.value, abs=1e-5)
    assert a.delta_t.end_temperature - a.delta_t.start_temperature == pytest.approx(a.delta_t.value, abs=1e-12)
    # they lie on the readings of their drift periods: rms within 1.5 × the fit's residual SD
    s = c["residual_sd_K"]
    assert _rms_on(a, curves["fore"], a.periods.fore) < 1.5 * s
    assert _rms_on(a, curves["after"], a.periods.after) < 1.5 * s


@pytest.mark.parametrize("method", ["linear-extrapolation", "equal-area"])
@pytest.mark.parametrize("name", NAMES)
def test_straight_drift_lines_meet_delta_t_at_t_x(name, method):
    a = analysis(name, method)
    curves = drift_curves(a)
    t_x = a.delta_t.construction.t_x
    if method == "linear-extrapolation":
        assert t_x == a.periods.mixing_time
    fore, after = curves["fore"], curves["after"]
    assert fore[0][-1] == pytest.approx(t_x) and after[0][0] == pytest.approx(t_x)
    for _tt, yy in (fore, after):
        assert np.max(np.abs(np.diff(yy, 2))) < 1e-9  # straight
    assert _at(fore, t_x) == pytest.approx(a.delta_t.start_temperature, abs=1e-9)
    assert _at(after, t_x) == pytest.approx(a.delta_t.end_temperature, abs=1e-9)
    assert _at(after, t_x) - _at(fore, t_x) == pytest.approx(a.delta_t.value, abs=1e-9)
    # lines are fitted to the ≤ 5 min next to the main period; on the whole period they stay close
    assert _rms_on(a, fore, a.periods.fore) < 0.03
    assert _rms_on(a, after, (a.periods.after[0], a.periods.after[0] + 300.0)) < 0.03


@pytest.mark.parametrize("name", NAMES)
def test_model_curve_starts_at_the_start_level_and_follows_the_after_period(name):
    a = analysis(name, "model-fit")
    ((tt, yy),) = drift_curves(a).values()
    t_i = a.delta_t.construction.t_i
    assert _at((tt, yy), t_i) == pytest.approx(a.delta_t.start_temperature, abs=1e-9)
    t, y = a.readings.time_s, a.readings.temperature_K
    m = (t >= a.periods.after[0]) & (t <= a.periods.after[1])
    # on average the fitted model passes through the after-period readings (within the 0.01 K resolution)
    assert abs(float(np.mean(y[m] - np.interp(t[m], tt, yy)))) < 0.01


@pytest.mark.parametrize("name", NAMES)
def test_naive_levels_are_the_start_and_the_extreme_reading(name):
    a = analysis(name, "naive")
    curves = drift_curves(a)
    t, y = a.readings.time_s, a.readings.temperature_K
    post = y[t > a.periods.mixing_time]
    extreme = post.max() if a.delta_t.value > 0 else post.min()
    assert np.all(curves["extreme"][1] == extreme)
    fore = y[(t >= a.periods.fore[0]) & (t <= a.periods.fore[1])]
    assert np.all(curves["start"][1] == pytest.approx(np.mean(fore[-5:])))
    assert extreme - curves["start"][1][0] == pytest.approx(a.delta_t.value)


def test_unknown_method_draws_no_curve_but_still_renders():
    a = analysis("diss-kcl-01", "naive")
    b = replace(a, delta_t=replace(a.delta_t, method="someone-elses-method", construction=Construction()))
    assert drift_curves(b) == {}
    assert_self_contained_and_accessible(run_plot_svg(b))


# ------------------------------------------------------------------ long logs


def _long_analysis(tmp_path: Path) -> Analysis:
    sim = simulate_dissolution(11, dt=0.5, fore_s=240.0, after_s=760.0)
    path = write_run(sim, tmp_path, "long")
    return analyze_run(path, with_reference=False)


def test_long_log_renders_with_thinned_readings(tmp_path):
    a = _long_analysis(tmp_path)
    assert len(a.readings) >= 2000
    svg = run_plot_svg(a)
    root = assert_self_contained_and_accessible(svg)
    group = next(el for el in root.iter() if (el.get("id") or "").endswith("-readings"))
    d = next(group.iter(f"{SVG_NS}path")).get("d")
    vertices = len(re.findall(r"[ML] ", d))
    assert 100 < vertices <= MAX_DRAWN_POINTS


def test_decimation_keeps_extremes_spikes_and_order():
    rng = np.random.default_rng(5)
    t = np.arange(2500) * 0.5
    y = 295.0 + 0.01 * rng.standard_normal(t.size)
    y[1234] += 0.5  # a spike
    y[77] -= 0.3
    td, yd = decimate_minmax(t, y)
    assert td.size <= MAX_DRAWN_POINTS
    assert np.all(np.diff(td) > 0)
    assert td[0] == t[0] and td[-1] == t[-1]
    assert 1234 * 0.5 in td and 77 * 0.5 in td
    idx = np.searchsorted(t, td)
    assert np.array_equal(y[idx], yd)  # a subset of the readings
    small_t, small_y = decimate_minmax(t[:500], y[:500])
    assert np.array_equal(small_t, t[:500]) and np.array_equal(small_y, y[:500])


def test_concurrent_rendering_gives_the_same_pictures():
    # the web server renders in threads: figures must not share state
    jobs = [(n, m) for n in NAMES[:3] for m in ("regnault-pfaundler", "equal-area")]
    serial = [run_svg(n, m) for n, m in jobs]
    with ThreadPoolExecutor(max_workers=3) as pool:
        threaded = list(pool.map(lambda job: run_plot_svg(analysis(*job)), jobs * 2))
    assert threaded == serial * 2


# ------------------------------------------------------------------ preview


def test_preview_plot_shows_detected_periods():
    a = analysis("react-mg-hcl-01", "regnault-pfaundler")
    r = a.readings
    periods = find_periods(r.time_s, r.temperature_K, resolution=0.01)  # mixing time detected
    svg = preview_plot_svg(r.time_s, r.temperature_K, periods)
    root = assert_self_contained_and_accessible(svg)
    shown = texts(root)
    assert {"temperature / °C", "time / s", "fore", "after", "mixing time (detected)"} <= set(shown)
    assert "(detected)" in root.find(f"{SVG_NS}desc").text


# ------------------------------------------------------------------ budget


def _line(name: str, contribution: float, uc2: float) -> BudgetLine:
    return BudgetLine(
        name=name,
        label=f"input {name}",
        value=1.0,
        unit="g",
        standard_uncertainty=0.1,
        distribution="normal",
        dof=math.inf,
        sensitivity=contribution / 0.1,
        contribution=contribution,
        share=contribution**2 / uc2,
    )


def _budget(contributions: list[float]) -> list[BudgetLine]:
    uc2 = sum(c * c for c in contributions)
    return [_line(chr(ord("a") + i), c, uc2) for i, c in enumerate(contributions)]


@pytest.mark.parametrize("name", NAMES)
def test_budget_rows_add_up_to_the_combined_uncertainty(name):
    a = analysis(name, "regnault-pfaundler")
    rows = budget_rows(a.gum.budget, top=4)
    assert len(rows) <= 5
    shares = [s for _, s, _ in rows]
    assert shares[:4] == sorted(shares[:4], reverse=True)
    # independent inputs: u_c² = Σ (c_i u(x_i))², so the shares add to 1 and the contributions,
    # grouped or not, add in quadrature to u_c (JCGM 100:2008, GUM eq. (10))
    assert sum(shares) == pytest.approx(1.0, abs=1e-9)
    assert math.hypot(*(c for _, _, c in rows)) == pytest.approx(a.gum.uncertainties[a.main], rel=1e-9)


@pytest.mark.parametrize("name", NAMES)
def test_budget_plot_has_one_bar_per_shown_input(name):
    a = analysis(name, "regnault-pfaundler")
    unit = a.value(a.main)[2]
    svg = budget_plot_svg(a.gum.budget, unit=unit, top=5)
    root = assert_self_contained_and_accessible(svg)
    rows = budget_rows(a.gum.budget, top=5)
    bars = [el for el in root.iter() if re.search(r"-bar-\d+$", el.get("id") or "")]
    assert len(bars) == len(rows)
    shown = "\n".join(texts(root))
    for label, share, _ in rows:
        assert label.split()[0] in shown
        assert f"{100 * share:.1f} %" in shown
    assert "share of the variance u_c² / %" in texts(root)
    assert unit in shown


def test_budget_groups_the_rest_as_other():
    budget = _budget([5.0, 4.0, 3.0, 2.0, 1.0, 0.5])
    rows = budget_rows(budget, top=3)
    assert [r[0] for r in rows] == ["input a", "input b", "input c", "other (3 inputs)"]
    assert rows[-1][2] == pytest.approx(math.sqrt(2.0**2 + 1.0**2 + 0.5**2))
    assert rows[-1][1] == pytest.approx((4 + 1 + 0.25) / (25 + 16 + 9 + 4 + 1 + 0.25))
    # one input left over is shown by name, inputs that contribute nothing are left out
    rows = budget_rows(_budget([3.0, 2.0, 1.0, 0.0]), top=2)
    assert [r[0] for r in rows] == ["input a", "input b", "input c"]
    svg = budget_plot_svg(budget, unit="kJ/mol", top=3)
    assert "other (3 inputs)" in texts(parse(svg))


def test_empty_budget_renders():
    svg = budget_plot_svg([], unit="K")
    assert "no uncertainty contributions" in texts(assert_self_contained_and_accessible(svg))


# ------------------------------------------------------------------ calibration history


def _markers(root: ET.Element) -> int:
    group = next(el for el in root.iter() if (el.get("id") or "").endswith("-cal-points"))
    return len(list(group.iter(f"{SVG_NS}use")))


@pytest.mark.parametrize("n", [1, 2, 25])
def test_calibration_history_draws_each_point(n):
    start = datetime(2025, 1, 6, 9, 30)
    points = [(start + timedelta(days=7 * i, hours=i), 18.6 + 0.3 * math.sin(i), 1.1 + 0.05 * i) for i in range(n)]
    svg = calibration_history_svg(points, current=(18.67, 1.2))
    root = assert_self_contained_and_accessible(svg)
    assert _markers(root) == n
    shown = texts(root)
    assert "heat capacity / (J/K)" in shown
    assert any("expanded uncertainty" in s for s in shown)
    assert any(s.startswith("in use: 18.7 ± 1.2 J/K") for s in shown)
    assert f"{n} calibrations" in root.find(f"{SVG_NS}desc").text


def test_calibration_history_labels_standard_uncertainty_and_handles_no_points():
    svg = calibration_history_svg([(datetime(2025, 3, 1), 18.6, 0.6)], uncertainty="standard")
    assert any("standard uncertainty u" in s for s in texts(assert_self_contained_and_accessible(svg)))
    svg = calibration_history_svg([], current=(18.0, 1.0))
    assert "no calibrations recorded yet" in texts(assert_self_contained_and_accessible(svg))
    with pytest.raises(ValueError, match="uncertainty"):
        calibration_history_svg([], uncertainty="sometimes")


# ------------------------------------------------------------------ palette and layering

_HEX = re.compile(r"#([0-9a-fA-F]{6})\b")


def test_palette_is_okabe_ito():
    # Okabe & Ito, "Color Universal Design" (2002/2008), RGB values (from memory)
    published = {
        "black": (0, 0, 0),
        "orange": (230, 159, 0),
        "sky_blue": (86, 180, 233),
        "bluish_green": (0, 158, 115),
        "yellow": (240, 228, 66),
        "blue": (0, 114, 178),
        "vermillion": (213, 94, 0),
        "reddish_purple": (204, 121, 167),
    }
    assert {k: tuple(int(v[i : i + 2], 16) for i in (1, 3, 5)) for k, v in OKABE_ITO.items()} == published


def test_pictures_use_only_the_palette_and_greys():
    palette = {v.lower() for v in OKABE_ITO.values()}
    svgs = [run_svg(n, m) for n in NAMES[:2] for m in ALL_METHODS]
    a = analysis(NAMES[0], "regnault-pfaundler")
    svgs.append(budget_plot_svg(a.gum.budget, unit="J/K", top=2))
    svgs.append(calibration_history_svg([(datetime(2025, 1, 1), 18.0, 1.0)], current=(18.0, 1.0)))
    seen = set()
    for svg in svgs:
        for h in _HEX.findall(svg):
            colour = "#" + h.lower()
            r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
            assert colour in palette or r == g == b, colour
            seen.add(colour)
    assert len(seen & palette) >= 5


def test_plots_module_imports_no_web_or_database_code():
    # the plots package's modules import one another, and nothing else of the notebook
    modules = sorted(Path(plots.__file__).parent.glob("*.py"))
    assert len(modules) >= 5
    imported = set()
    for path in modules:
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                imported |= {a.name for a in node.names}
            elif isinstance(node, ast.ImportFrom):
                imported.add(node.module or "")
        assert "matplotlib.pyplot" not in path.read_text(encoding="utf-8"), path.name
    tops = {m.split(".")[0] for m in imported if not m.startswith("webapp.plots.")}
    assert not tops & {"flask", "sqlalchemy", "alembic", "webapp"}


def test_reanalyzed_run_renders():
    # the web app re-analyses with edited periods through analyze_spec
    a = analysis("neut-hcl-naoh-01", "regnault-pfaundler")
    r: Readings = a.readings
    spec = parse_run(
        (ROOT / "fixtures" / "demo" / "neut-hcl-naoh-01.toml").read_text(encoding="utf-8"),
        source="neut-hcl-naoh-01.toml",
        base_dir=ROOT / "fixtures" / "demo",
    )
    b = analyze_spec(spec, r, after=(330.0, float(r.time_s[-1])), with_reference=False)
    assert b.periods.after[0] == 330.0
    root = assert_self_contained_and_accessible(run_plot_svg(b))
    assert "Neutralization" in root.find(f"{SVG_NS}title").text


def test_spikes_are_marked_and_do_not_set_the_scale(tmp_path):
    # two wild readings (a loose contact): the analysis leaves them out, the plot marks them
    sim = simulate_dissolution(12, fore_s=240.0, after_s=700.0, resolution=0.001, spikes=2, spike_K=3.0)
    a = analyze_run(write_run(sim, tmp_path, "spiky"), with_reference=False)
    assert 1 <= len(a.rejected) <= 4
    svg = run_plot_svg(a)
    root = assert_self_contained_and_accessible(svg)
    assert any((el.get("id") or "").endswith("-rejected") for el in root.iter())
    assert any("rejected as spike" in t for t in texts(root))
