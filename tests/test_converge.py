"""Richardson extrapolation, and `outcouple converge` on flat cases with an exact answer."""

import json
import math

import numpy as np
import pytest
from scipy.integrate import quad, simpson

from conftest import SMALL_FLAT_CASE, case_toml, requires_meep, run_cli, small_flat_case
from postprocess.convergence import extrapolate, two_grids


def _trapezoid(cells):
    x = np.linspace(0.0, 1.0, cells + 1)
    return np.trapz(np.exp(x), x)


def test_three_levels_find_the_order_and_the_limit():
    # The trapezoid rule converges as h^2 (Euler-Maclaurin); its Richardson limit from h = 1/4,
    # 1/8, 1/16 must sit on the integral (scipy.integrate.quad as the reference) far closer than
    # the finest level, with the observed order 2.
    cells = [4, 8, 16]
    values = [_trapezoid(n) for n in cells]
    exact = quad(np.exp, 0.0, 1.0)[0]
    fit = extrapolate(cells, values)
    assert fit["observed"] and fit["asymptotic"]
    assert fit["order"] == pytest.approx(2.0, abs=0.01)
    assert abs(fit["limit"] - exact) < 3e-3 * abs(values[-1] - exact), (fit["limit"], exact)  # 1.0e-3 seen
    assert fit["errors"][-1] == pytest.approx(abs(values[-1] - exact), rel=0.01)


def test_two_levels_of_order_two_are_simpsons_rule():
    # Romberg's first step: Richardson on the trapezoid rule at h and h/2 with order 2 is Simpson's
    # rule on the finer points (scipy.integrate.simpson as the reference).
    fit = extrapolate([8, 4], [_trapezoid(8), _trapezoid(4)])
    x = np.linspace(0.0, 1.0, 9)
    assert fit["limit"] == pytest.approx(simpson(np.exp(x), x=x), rel=1e-12)
    assert not fit["observed"] and fit["order"] == 2.0


def test_a_runs_two_grids_are_simpsons_rule_too():
    # The same Romberg step through two_grids (what a two-grid run applies to every number), at the
    # grid ratio a run uses (4 : 3, 12 and 16 points per wavelength), on arrays: a trapezoid rule on
    # 12 and 16 cells of any quadratic's integral is exact after it (Euler-Maclaurin: the error is
    # exactly c h^2 for a quadratic), checked against numpy's polynomial integral.
    poly = np.polynomial.Polynomial([0.3, -1.2, 2.5])
    exact = poly.integ()(1.0) - poly.integ()(0.0)

    def trap(cells):
        x = np.linspace(0.0, 1.0, cells + 1)
        return np.trapz(poly(x), x)

    assert two_grids(trap(16), trap(12), 16, 12) == pytest.approx(exact, rel=1e-12)
    assert abs(trap(16) - exact) > 1e-3
    both = two_grids([trap(16), 2 * trap(16)], [trap(12), 2 * trap(12)], 16.0, 12.0)
    assert both == pytest.approx([exact, 2 * exact], rel=1e-12)


def test_oscillating_levels_are_flagged():
    # Derived here: differences that change sign are not in the asymptotic range; no error
    # estimate may then be smaller than the change between the two finest levels.
    fit = extrapolate([19, 24, 30], [0.1335, 0.1397, 0.1393])
    assert not fit["asymptotic"] and not fit["observed"]
    assert min(fit["errors"]) >= abs(0.1393 - 0.1397) - 1e-12
    with pytest.raises(ValueError):
        extrapolate([24, 24], [0.1, 0.2])


def _converge(tmp_path, orientation, *extra):
    case = tmp_path / f"{orientation}.toml"
    case.write_text(case_toml(small_flat_case(emitter={"orientation": orientation})))
    done = run_cli("converge", case, "--json", "--quiet", *extra)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout), done


@requires_meep
@pytest.mark.fdtd
@pytest.mark.parametrize("orientation, tolerance", [("out-of-plane", "0.02"), ("normal", "0.002")])
def test_converge_extrapolates_towards_the_exact_answer(tmp_path, orientation, tolerance):
    # The exact planar answer (references.multilayer, checked in test_multilayer.py) is the
    # grid-converged value. Measured at 12 points per wavelength (levels 19, 24, 30 per µm):
    # out-of-plane 0.12756 / 0.12745 / 0.12718 -> 0.1267 (exact 0.12698); normal 0.02707 / 0.02698 /
    # 0.02704 -> 0.02716 (exact 0.02699), error estimate 0.00018 (0.7%) at the case's 24.
    result, done = _converge(tmp_path, orientation, "--tolerance", tolerance)
    levels = result["levels"]
    assert [lvl["resolution"] for lvl in levels] == [19.0, 24.0, 30.0]
    exact = levels[0]["exact"]
    assert result["extrapolated"] == pytest.approx(exact, rel=0.01), \
        f"extrapolated {result['extrapolated']:.5f} vs exact {exact:.5f}"
    own = next(lvl for lvl in levels if lvl["resolution"] == result["case_resolution"])
    actual = abs(own["efficiency"] - exact)
    assert own["error_estimate"] >= 0.8 * actual, \
        f"error estimate {own['error_estimate']:.5f} vs actual error {actual:.5f}: overconfident"
    # The verdict follows the estimate: inside 2% for out-of-plane, outside the tight 0.2% for normal.
    assert result["converged"] == (orientation == "out-of-plane")
    assert ("WARNING" in done.stderr) == (orientation == "normal")


@requires_meep
@pytest.mark.fdtd
def test_converge_table_and_a_tight_tolerance(tmp_path):
    case = tmp_path / "chip.toml"
    case.write_text(SMALL_FLAT_CASE)
    done = run_cli("converge", case, "--resolutions", "24,30", "--tolerance", "0.0001", "--quiet")
    assert done.returncode == 0, done.stderr
    assert "assumed order 2" in done.stdout and "<- the case's" in done.stdout
    assert "WARNING" in done.stderr and "not converged to 0.01%" in done.stderr
    assert math.isfinite(float(done.stdout.split("extrapolated (Richardson")[1].split(":")[1].split()[0]))
