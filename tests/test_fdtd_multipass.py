"""The top's response from Meep's periodic cells (outcouple multipass), against the outside.

Sources: Fresnel reflection and transmission of a flat top with a film, from the PyPI package
``tmm`` (Born and Wolf's thin-film formulas); conservation of power for a lossless texture, and
reciprocity of diffraction efficiencies (the efficiency of order m from kx equals that of order -m
from -(kx + m G), e.g. Petit (ed.), "Electromagnetic Theory of Gratings", 1980, ch. 1; from memory).
Small cells, 8 angle bins, so that the whole module runs in about a minute.
"""

import numpy as np
import pytest
import tmm

from conftest import make_case, requires_meep
from fdtd_cases.angle_bins import bin_centres
from fdtd_cases.case_file import parse_case

pytestmark = [pytest.mark.fdtd, requires_meep]

BINS = 8
LAMBDA = 0.6
FILM = {"index": 1.8, "thickness": round(LAMBDA / (4 * 1.8), 4)}
CHIP = {"index": 2.5, "alpha": 4.0, "thickness": 500.0, "back": "mirror"}
GRATING = {"pattern": "grating", "period": 0.48, "height": 0.2, "fill": 0.5}
"""lambda / (n period) = 0.5: each order moves two bins (of 0.25 in sin(theta)), so orders of a bin
centre land on bin centres and reciprocity holds bin to bin."""


def response(data, fdtd=True):
    from outcouple import thick_chip

    case = parse_case(data, source="test")
    return thick_chip.top_response(case, BINS, fdtd=fdtd, workers=2, progress=False)


@pytest.fixture(scope="module")
def cache(tmp_path_factory):
    import os

    folder = tmp_path_factory.mktemp("responses")
    old = os.environ.get("OUTCOUPLE_CACHE")
    os.environ["OUTCOUPLE_CACHE"] = str(folder)
    yield folder
    if old is None:
        del os.environ["OUTCOUPLE_CACHE"]
    else:
        os.environ["OUTCOUPLE_CACHE"] = old


def test_flat_top_with_a_film_equals_tmm(cache):
    """Meep's flat top with a quarter-wave film (n = 1.8 on n = 2.5) against tmm at each bin centre:
    transmission and specular reflection within 0.005 of the incident power (seen: 0.003 at most), no
    other order, and the same cell at every bin."""
    data = make_case(chip=CHIP, film=[FILM], light={"wavelength": LAMBDA},
                     emitter={"depth": 250.0, "orientation": "isotropic"})
    tops, facts = response(data)
    assert facts["source"] == "fdtd" and facts["runs"] == BINS // 2 * 2 * 2  # u >= 0, two pols, bare + top
    theta = np.arcsin(bin_centres(BINS))
    for (_, lam, pol), top in tops.items():
        ref = [tmm.coh_tmm(pol, [2.5, FILM["index"], 1.0], [np.inf, FILM["thickness"], np.inf], t, lam) for t in theta]
        T = np.array([r["T"] for r in ref])
        R = np.array([r["R"] for r in ref])
        assert np.abs(top["transmit"] - T).max() < 5e-3, (pol, top["transmit"], T)
        assert np.abs(np.diag(top["reflect"]) - R).max() < 5e-3, (pol, np.diag(top["reflect"]), R)
        assert np.abs(top["reflect"] - np.diag(np.diag(top["reflect"]))).max() < 1e-6


@pytest.fixture(scope="module")
def grating(cache):
    data = make_case(chip=CHIP, surface=GRATING, light={"wavelength": LAMBDA},
                     emitter={"depth": 250.0, "orientation": "isotropic"})
    return data, response(data)


def test_lossless_grating_conserves_power_and_is_reciprocal(grating):
    """Per incident bin, reflected plus transmitted power is 1 within 1% (seen: 1e-5); the reflection
    matrix equals its reciprocal image R[j, i] = R[N-1-i, N-1-j] within 1e-3 (seen: 1e-8)."""
    _, (tops, _) = grating
    for (_, _, pol), top in tops.items():
        R, T = top["reflect"], top["transmit"]
        assert np.abs(R.sum(axis=0) + T - 1).max() < 1e-2, pol
        assert np.abs(R - R[::-1, ::-1].T).max() < 1e-3, pol
        assert np.count_nonzero(R > 1e-3) > BINS  # the grating does diffract: off-diagonal orders carry power
        assert np.allclose(top["farfield"].sum(axis=0), T, atol=1e-12)


def test_the_response_is_cached_and_keyed(grating):
    """A second call reads the cache (no Meep run) and returns the same arrays; another period is
    another key, so it is not read from the first one's file."""
    from outcouple import thick_chip

    data, (tops, facts) = grating
    again, facts2 = response(data)
    assert facts2["cached"] and not facts["cached"] and facts2["cache_file"] == facts["cache_file"]
    for key, top in tops.items():
        assert np.array_equal(again[key]["reflect"], top["reflect"])
    other = parse_case({**data, "surface": {**GRATING, "period": 0.5}}, source="test")
    grid = {"resolution": facts["resolution"], "period": 0.5}
    assert thick_chip.response_key(other, BINS, grid, True) != thick_chip.response_key(
        parse_case(data, source="test"), BINS, {"resolution": facts["resolution"], "period": 0.48}, True)


def test_multipass_budget_adds_up_with_the_grating(grating):
    """The whole model on the grating's response: the budget sums to 1, the top beats the flat top
    (the grating sends trapped light out), and stays below the ideal randomising top."""
    import outcouple

    data, _ = grating
    out = outcouple.multipass(data, angles=BINS, workers=2, progress=False)
    assert out["top_response"]["cached"]
    assert sum(out["budget"].values()) == pytest.approx(1.0, abs=1e-6)
    assert out["flat"] < out["efficiency"] < out["randomising"]


def test_thinning_curves_and_the_report_hook(grating, tmp_path):
    """The thinning picture's curves: at 1000 µm with alpha = 4 /cm the texture lies between the flat
    top and the randomising bound, and every curve falls as the chip thickens (absorption); the ray
    tracer runs on the same chips. The report's hook finds no 90-bin response in the cache (this test
    made 8 bins) and runs nothing."""
    from outcouple import thick_chip
    from postprocess.plots import plot_thinning

    data, (tops, _) = grating
    case = parse_case(data, source="test")
    flat = thick_chip._exact_tops(case.model_copy(update={"surface": thick_chip.Flat(pattern="flat")}), BINS)
    curves = thick_chip.thinning_curves(case, tops, BINS, flat, [1.0, 30.0, 1000.0], rays=500, ray_points=2)
    for key in ("flat", "texture", "randomising"):
        assert curves[key][0] > curves[key][-1], key
    assert curves["flat"][-1] < curves["texture"][-1] < curves["randomising"][-1]
    assert len(curves["rays"]) == 2 and all(0 < r < 1 for r in curves["rays"])
    plot_thinning(curves, tmp_path / "thin.png")
    assert (tmp_path / "thin.png").stat().st_size > 10000
    assert thick_chip.cached_thinning(case) is None
