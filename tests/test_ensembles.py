"""Emitter ensembles: sampling tables for [emitter] x, the in-plane orientation, the position average.

References: the trapezoid rule on a periodic function is exact for harmonics of the period below
the number of points (a standard property of the rule, e.g. Trefethen & Weideman, SIAM Review 56,
2014); the midpoint rule's nodes; the power-weighting rule of docs/conventions.md (sum over sum).
"""

import numpy as np
import pytest

from conftest import make_case, requires_meep
from fdtd_cases.case_file import parse_case
from fdtd_cases.errors import CaseError
from fdtd_cases.accuracy import positions_needed
from postprocess.budget import summarise

GRATING = {"pattern": "grating", "period": 1.0, "height": 0.25}


def test_period_sampling_is_the_trapezoid_rule_over_one_period():
    case = parse_case(make_case(surface=GRATING, emitter={"x": {"across": "period", "count": 8}}))
    assert case.emitter.x == pytest.approx([i / 8 for i in range(8)])
    # Exact for every harmonic below the count: the mean of cos(2 pi m x / P) at the nodes is 0.
    for m in range(1, 8):
        assert np.mean(np.cos(2 * np.pi * m * np.array(case.emitter.x))) == pytest.approx(0, abs=1e-12)


def test_span_sampling_is_the_midpoint_rule():
    case = parse_case(make_case(emitter={"x": {"span": 2.0, "count": 4}}))
    assert case.emitter.x == pytest.approx([-0.75, -0.25, 0.25, 0.75])


@pytest.mark.parametrize("spec, key", [
    ({"across": "period", "count": 4}, "emitter.x.across"),            # a flat surface has no period
    ({"across": "width", "count": 4}, "emitter.x.across"),
    ({"span": -1.0, "count": 4}, "emitter.x.span"),
    ({"span": 1.0, "count": 0}, "emitter.x.count"),
    ({"span": 1.0, "count": 2.5}, "emitter.x.count"),
    ({"span": 1.0}, "emitter.x"),
])
def test_bad_sampling_tables_name_their_key(spec, key):
    with pytest.raises(CaseError) as caught:
        parse_case(make_case(emitter={"x": spec}), source="ens.toml")
    assert caught.value.key == key


def test_in_plane_is_parallel_and_out_of_plane():
    case = parse_case(make_case(emitter={"orientation": "in-plane"}))
    assert case.emitter.orientations() == ("parallel", "out-of-plane")


def test_positions_report_each_position_and_the_spread():
    """Two positions of equal bulk power: one escapes 10% of 2 units emitted, the other 30% of 1. Sum over
    sum: (0.2 + 0.3) / 3; the positions' own values 0.1 and 0.3, mean 0.2, standard deviation 0.1."""
    def job(x, emitted, top):
        return {"orientation": "normal", "x": x, "bulk": np.array([1.0]),
                "fluxes": {"top": np.array([top]), "bottom": np.array([emitted - top]), "sides": np.array([0.0]),
                           "emitted": np.array([emitted])}}
    s = summarise([job(0.0, 2.0, 0.2), job(0.5, 1.0, 0.3)], np.array([1.0]), lossless=True)
    assert s["efficiency"] == pytest.approx(0.5 / 3)
    p = s["positions"]
    assert p["x"] == [0.0, 0.5] and p["efficiency"] == pytest.approx([0.1, 0.3])
    assert p["mean"] == pytest.approx(0.2) and p["spread"] == pytest.approx(0.1)
    assert "positions" not in summarise([job(0.0, 2.0, 0.2)], np.array([1.0]), lossless=True)


def test_positions_needed_follows_the_propagating_harmonics():
    """floor(2 n P / lambda) + 1: n = 2, P = 1, lambda = 1 -> 5; at the band's short end more."""
    assert positions_needed(parse_case(make_case(surface=GRATING))) == 5
    banded = parse_case(make_case(light={"wavelength": 1.0, "band": 0.2, "samples": 3}, surface=GRATING))
    assert positions_needed(banded) == 5  # 2 * 2 * 1 / 0.9 = 4.44
    assert positions_needed(parse_case(make_case())) is None


@requires_meep
@pytest.mark.fdtd
def test_position_average_converges_with_count_and_the_rule_reaches_one_percent():
    """One FDTD run at 20 positions over a period (out-of-plane line emitter, n = 2, period 1 µm at
    1 µm, 12 points per wavelength). Subsets of 1, 2, 4, 5 and 10 positions are the trapezoid rule
    with fewer nodes: their averages approach the 20-position one, and the rule's count (5) is within
    1%; one position alone is far off (the dependence on x is strong here)."""
    import outcouple

    data = make_case(surface=GRATING, emitter={"depth": 0.6, "orientation": "out-of-plane",
                                              "x": {"across": "period", "count": 20}},
                     grid={"points_per_wavelength": 12, "width": 8.0})
    result = outcouple.run(data, workers=2, progress=False).to_dict()
    values = np.array(result["positions"]["efficiency"])
    full = values.mean()
    error = {n: abs(values[:: 20 // n].mean() / full - 1) for n in (1, 2, 4, 5, 10)}
    print({n: f"{100 * e:.2f}%" for n, e in error.items()})
    needed = positions_needed(parse_case(data))
    assert needed == 5 and error[needed] < 0.01
    assert error[1] > 0.05 and error[10] < error[5] <= error[2]
