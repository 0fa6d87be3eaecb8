"""Flux integration rule and the power-weighting rule of docs/conventions.md (derived here)."""

import numpy as np
import pytest

from postprocess.budget import bulk_power, summarise
from postprocess.flux import line_flux


def test_uniform_plane_wave_flux_is_exact():
    """A plane wave going up with E_z = 1, H_x = 1 (S_y = 1) through a line of length 2: flux 2
    for integer-point samples; half-integer samples of E_x = -1, H_z = 1 give the same."""
    res, n = 10, 20
    ez_hx = {"ez": np.ones((1, n + 1)), "hx": np.ones((1, n + 1))}
    ex_hz = {"ex": -np.ones((1, n + 2)), "hz": np.ones((1, n + 2))}
    for fields in (ez_hx, ex_hz):
        assert line_flux(fields, (-1, 0.5), (1, 0.5), "+y", res)[0] == pytest.approx(2.0, rel=1e-12)
        assert line_flux(fields, (-1, 0.5), (1, 0.5), "-y", res)[0] == pytest.approx(-2.0, rel=1e-12)


def test_linear_flux_density_integrates_exactly():
    """S_x(y) = y on [0, 1] through a vertical line: integral 1/2 (trapezoid is exact for linear)."""
    res, n = 8, 8
    y_int = np.arange(n + 1) / res
    y_half = (np.arange(n + 2) - 0.5) / res
    fields = {"ey": y_half[None, :], "hz": np.ones((1, n + 2))}
    assert line_flux(fields, (0, 0), (0, 1), "+x", res)[0] == pytest.approx(0.5, rel=1e-12)
    fields = {"ez": -y_int[None, :], "hy": np.ones((1, n + 1))}
    assert line_flux(fields, (0, 0), (0, 1), "+x", res)[0] == pytest.approx(0.5, rel=1e-12)


def test_power_weighting_is_sum_over_sum_not_mean_of_ratios():
    """Two jobs with equal bulk power: one emits 2x (structure enhances), escapes 10%; the other emits
    0.5x, escapes 50%. LEE = (0.2 + 0.25) / (2 + 0.5) = 0.18, not the mean ratio 0.30."""
    wl = np.array([1.0])
    def job(orientation, emitted, top):
        return {"orientation": orientation, "x": 0.0, "bulk": np.array([1.0]),
                "fluxes": {"top": np.array([top]), "bottom": np.array([emitted - top]),
                           "sides": np.array([0.0]), "emitted": np.array([emitted])}}
    s = summarise([job("parallel", 2.0, 0.2), job("normal", 0.5, 0.25)], wl, lossless=True)
    assert s["efficiency"] == pytest.approx(0.18)
    assert s["by_orientation"] == {"parallel": pytest.approx(0.1), "normal": pytest.approx(0.5)}
    assert s["balance_error"] == pytest.approx(0.0, abs=1e-15)


def test_lossless_budget_reports_its_residual_as_balance_error_not_absorption():
    """Poynting's theorem: without loss nothing is absorbed. A residual of the flux lines (here 0.8%
    of the emitted power, as a finite grid leaves) is the balance error; absorbed is exactly 0.
    With loss the same residual is the absorbed fraction and there is no balance error."""
    wl = np.array([1.0])
    job = {"orientation": "normal", "x": 0.0, "bulk": np.array([1.0]),
           "fluxes": {"top": np.array([0.2]), "bottom": np.array([0.6]), "sides": np.array([0.208]),
                      "emitted": np.array([1.0])}}
    s = summarise([job], wl, lossless=True)
    assert s["budget"]["absorbed"] == 0.0 and s["jobs"][0]["budget"]["absorbed"] == 0.0
    assert s["balance_error"] == pytest.approx(0.008)
    lossy = summarise([job], wl, lossless=False)
    assert lossy["budget"]["absorbed"] == pytest.approx(-0.008) and lossy["balance_error"] is None


def test_bulk_power_closed_form_ratios():
    """In 2-D the in-plane line current radiates half the out-of-plane power (Im G_xx(0) = 1/8 vs
    Im G_zz(0) = 1/4 for G = (i/4) H0(kr)); power grows as omega |I|^2."""
    J = np.array([1.0, 2.0])
    wl = np.array([1.0, 0.5])
    assert bulk_power("out-of-plane", wl, J) == pytest.approx([2 * np.pi / 4, 4 * np.pi * 4 / 4])
    assert bulk_power("parallel", wl, J) == pytest.approx(bulk_power("out-of-plane", wl, J) / 2)
