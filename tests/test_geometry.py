"""Surface patterns: conventions of docs/conventions.md and the definitions in the README's case reference."""

import numpy as np
import pytest

from fdtd_cases import geometry
from conftest import make_case
from fdtd_cases.case_file import parse_case


def _surface(**table):
    return parse_case(make_case(emitter={"depth": 2.0}, surface=table)).surface


PATTERNS = [
    {"pattern": "flat"},
    {"pattern": "grating", "period": 0.7, "height": 0.2, "fill": 0.3},
    {"pattern": "triangle", "period": 0.9, "height": 0.45},
    {"pattern": "sine", "period": 0.8, "height": 0.3},
    {"pattern": "random", "rms": 0.05, "correlation": 0.2, "seed": 7},
    {"pattern": "profile", "points": [[-0.5, -0.1], [0.0, 0.0], [0.4, -0.3]]},
]


@pytest.mark.parametrize("table", PATTERNS, ids=[t["pattern"] for t in PATTERNS])
def test_highest_point_is_zero_and_depth_is_the_height(table):
    line = geometry.surface_polyline(_surface(**table), -3.0, 3.0)
    assert line[:, 1].max() == pytest.approx(0.0, abs=1e-12)
    assert line[0, 0] == -3.0 and line[-1, 0] == 3.0 and np.all(np.diff(line[:, 0]) >= 0)
    expected = table.get("height", 0.3 if table["pattern"] == "profile" else None)
    if expected is not None and table["pattern"] != "flat":
        assert -geometry.deepest_point(line) == pytest.approx(expected, rel=1e-9)


def test_grating_fill_and_ridge_on_axis():
    line = geometry.surface_polyline(_surface(**PATTERNS[1]), -0.7 * 3, 0.7 * 3)
    x = np.linspace(-0.35, 0.35, 70001)
    top = np.array([geometry.surface_depth_at(line, v) for v in x[::100]]) == 0
    assert top.mean() == pytest.approx(0.3, abs=0.01)
    assert geometry.surface_depth_at(line, 0.0) == 0.0


def test_sine_formula():
    s = _surface(**PATTERNS[3])
    line = geometry.surface_polyline(s, -2, 2)
    x = np.linspace(-1.5, 1.5, 301)
    exact = -0.5 * 0.3 * (1 - np.cos(2 * np.pi * x / 0.8))
    assert np.max(np.abs(np.interp(x, line[:, 0], line[:, 1]) - exact)) < 0.3 * 3e-3


@pytest.mark.parametrize("table,symmetric", [(PATTERNS[0], True), (PATTERNS[1], True), (PATTERNS[2], True),
                                             (PATTERNS[3], True), (PATTERNS[4], False), (PATTERNS[5], False)])
def test_mirror_symmetry_detection(table, symmetric):
    s = _surface(**table)
    assert geometry.is_mirror_symmetric(s, geometry.surface_polyline(s, -3, 3)) is symmetric


def test_symmetric_profile_is_detected():
    s = _surface(pattern="profile", points=[[-0.4, -0.2], [0.0, 0.0], [0.4, -0.2]])
    assert geometry.is_mirror_symmetric(s, geometry.surface_polyline(s, -3, 3))


def test_random_profile_statistics_and_seed():
    """rms as asked; autocorrelation exp(-(dx/L)^2): at lag L it is 1/e (definition in the case reference),
    estimated here with numpy on a long profile."""
    L, rms = 0.2, 0.05
    x = np.arange(0, 400.0, L / 8)
    y = geometry.random_heights(rms, L, 3, x)
    assert np.sqrt(np.mean((y - y.mean()) ** 2)) == pytest.approx(rms, rel=1e-9)
    z = y - y.mean()
    lag = 8
    corr = np.mean(z[:-lag] * z[lag:]) / np.mean(z * z)
    assert corr == pytest.approx(np.exp(-1), abs=0.03), f"autocorrelation at L: {corr:.3f} vs 1/e"
    assert np.array_equal(y, geometry.random_heights(rms, L, 3, x))
    assert not np.array_equal(y, geometry.random_heights(rms, L, 4, x))


def test_chip_polygon_closes_below():
    line = geometry.surface_polyline(_surface(**PATTERNS[2]), -2, 2)
    poly = geometry.chip_polygon(line, -5.0)
    assert poly[-1].tolist() == [-2, -5.0] and poly[-2].tolist() == [2, -5.0]
