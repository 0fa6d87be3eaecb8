"""The multi-pass model over angle bins (references.multipass) and ``outcouple multipass`` without Meep.

Sources: the flat chip's incoherent sum of passes is derived in the references.multipass docstring
and integrated here by adaptive quadrature (scipy); the Fresnel coefficients are Born and Wolf's,
taken from the PyPI package ``tmm``; the randomising top's closed form is
references.closed_forms.multipass (Yablonovitch's multi-pass argument, JOSA 72, 899 (1982), in 2-D).
"""

import json
import math

import numpy as np
import pytest
import tmm

from conftest import assert_refused, case_toml, make_case, run_cli
from fdtd_cases.angle_bins import bin_edges, spread
from references import closed_forms
from references import multipass as m

N_CHIP, N_AMB = 2.5, 1.0


def tmm_top(pol):
    """Reflectance and transmittance of a flat n = 2.5 / air top as functions of theta, from tmm."""
    def R(theta):
        return np.array([tmm.coh_tmm(pol, [N_CHIP, N_AMB], [np.inf, np.inf], t, 1.0)["R"]
                         for t in np.ravel(theta)]).reshape(np.shape(theta))
    return R, (lambda theta: 1 - R(theta))


def bins_answer(top, orientation, count, alpha, thickness, depth, Rb):
    back = lambda th: np.full_like(th, Rb)  # noqa: E731
    s0, d0 = m.emitter_light(orientation, count, alpha, depth, thickness, back)
    crossing = m.bin_average(lambda th: m.attenuation(alpha, thickness, th), count)
    round_trip = m.bin_average(lambda th: back(th) * m.attenuation(alpha, 2 * thickness, th), count)
    return m.solve(top, s0, d0, crossing, round_trip, m.bin_average(back, count), "mirror")


CHIPS = [  # alpha (1/µm), thickness, depth (µm), back reflectance
    (4e-4, 500.0, 250.0, 1.0), (1e-2, 100.0, 3.0, 1.0), (5e-3, 50.0, 10.0, 0.5), (0.0, 100.0, 5.0, 0.0),
    (1e-3, 1000.0, 500.0, 0.9)]


@pytest.mark.parametrize("orientation", ["out-of-plane", "parallel", "normal"])
@pytest.mark.parametrize("chip", CHIPS, ids=lambda c: f"a{c[0]:g}-w{c[1]:g}-R{c[3]:g}")
def test_flat_chip_equals_the_closed_form_sum_of_passes(orientation, chip):
    """90 bins with tmm's Fresnel coefficients against the closed form (derived in references.multipass)
    integrated adaptively: within 0.5% (seen: 0.001% to 0.18%)."""
    pol = "s" if orientation == "out-of-plane" else "p"
    R, T = tmm_top(pol)
    R_fast = lambda th: np.abs(m.planar.fresnel(N_CHIP, N_AMB, th)[0 if pol == "s" else 1]) ** 2  # noqa: E731
    alpha, thickness, depth, Rb = chip
    exact = m.flat_closed_form(orientation, R_fast, lambda th: 1 - R_fast(th), alpha, depth, thickness,
                               lambda th: np.full_like(np.asarray(th, float), Rb))
    top = m.flat_top(R, T, 90, N_CHIP, N_AMB)
    got = bins_answer(top, orientation, 90, alpha, thickness, depth, Rb)
    assert got["efficiency"] == pytest.approx(exact, rel=5e-3)
    b = got["budget"]
    assert sum(b.values()) == pytest.approx(1.0, abs=1e-9)
    assert b["absorbed_top"] == pytest.approx(0.0, abs=1e-12)
    if alpha == 0 and Rb == 0:  # nothing comes back: one pass, everything not escaped leaves by the back
        assert got["passes_99"] == 1


def test_fresnel_helper_agrees_with_tmm():
    """The closed form above uses references.planar.fresnel; it equals tmm's reflectance (Born and Wolf)."""
    theta = np.linspace(0, 1.5, 31)
    for i, pol in enumerate("sp"):
        ours = np.abs(m.planar.fresnel(N_CHIP, N_AMB, theta)[i]) ** 2
        assert np.allclose(ours, tmm_top(pol)[0](theta), atol=1e-12)


@pytest.mark.parametrize("chip", CHIPS + [(1e-3, 10.0, 5.0, 1.0)], ids=lambda c: f"a{c[0]:g}-w{c[1]:g}-R{c[3]:g}")
def test_lambertian_top_reproduces_the_randomising_closed_form(chip):
    """The ideal randomising top as a matrix gives references.closed_forms.multipass to 1e-6 (the cone's
    edge, sin theta_c = 0.4, is a bin edge at 90 bins)."""
    alpha, thickness, depth, Rb = chip
    got = bins_answer(m.lambertian_top(90, N_CHIP, N_AMB), "out-of-plane", 90, alpha, thickness, depth, Rb)
    expected = closed_forms.multipass(N_CHIP, N_AMB, alpha, thickness, depth, Rb, dim=2)
    assert got["efficiency"] == pytest.approx(expected, abs=1e-6)


def test_lossless_trapped_light_is_reported_not_lost():
    """A flat lossless chip on a perfect mirror traps everything outside the escape cone for ever: the
    sum of passes is singular; the escaped part is still the cone's (Fresnel multiple reflections on a
    mirror, closed form with alpha = 0) and the rest is reported as trapped."""
    R_fast = lambda th: np.abs(m.planar.fresnel(N_CHIP, N_AMB, th)[0]) ** 2  # noqa: E731
    top = m.flat_top(R_fast, lambda th: 1 - R_fast(th), 90, N_CHIP, N_AMB)
    got = bins_answer(top, "out-of-plane", 90, 0.0, 100.0, 5.0, 1.0)
    # Inside the cone every ray escapes eventually: the cone's share of the emission, both halves.
    cone = 2 * math.asin(N_AMB / N_CHIP) / (2 * math.pi) * 2
    assert got["efficiency"] == pytest.approx(cone, rel=5e-3)
    assert got["budget"]["trapped"] == pytest.approx(1 - got["efficiency"], abs=5e-3)


def test_spread_puts_a_uniform_interval_into_bins():
    edges = bin_edges(4)  # -1, -0.5, 0, 0.5, 1
    assert np.allclose(spread(-0.25, 0.25, edges), [0, 0.5, 0.5, 0])
    assert np.allclose(spread(0.75, 1.25, edges), [0, 0, 0, 1])  # past grazing: kept in the last bin
    assert np.allclose(spread(1.5, 2.0, edges), [0, 0, 0, 1])


def test_farfield_of_a_flat_top_is_snell_s_law():
    """The escaped power of the bin around u lands at the ambient angle asin(n u) (Snell), its total
    the bin's transmission."""
    R_fast = lambda th: np.abs(m.planar.fresnel(N_CHIP, N_AMB, th)[0]) ** 2  # noqa: E731
    top = m.flat_top(R_fast, lambda th: 1 - R_fast(th), 90, N_CHIP, N_AMB)
    assert np.allclose(top["farfield"].sum(axis=0), top["transmit"], atol=1e-12)
    i = 50  # u from 0.1111 to 0.1333: ambient sin from 0.2778 to 0.3333, 16.1 to 19.5 degrees
    column = top["farfield"][:, i]
    lit = np.nonzero(column)[0] - 90
    assert lit.min() == 16 and lit.max() == 19


MULTIPASS_CASE = make_case(chip={"index": 2.5, "alpha": 4.0, "thickness": 500.0, "back": "mirror"},
                           emitter={"depth": 250.0, "orientation": "isotropic"}, light={"wavelength": 0.6})


def test_cli_multipass_flat_exact_json(tmp_path):
    """A flat chip: the exact top, no Meep; the printed JSON carries the usual keys, the sweep's
    thickness points equal single runs at those thicknesses, and the flat answer equals the closed form."""
    path = tmp_path / "thick.toml"
    path.write_text(case_toml(MULTIPASS_CASE))
    r = run_cli("multipass", path, "--json", "--vary", "chip.thickness=300:500:2")
    assert r.returncode == 0, r.stderr
    out = json.loads(r.stdout)
    for key in ("efficiency", "budget", "by_orientation", "farfield", "passes_99", "wavelengths", "top_response",
                "flat", "randomising", "sweep"):
        assert key in out
    assert out["top_response"]["source"] == "exact" and out["top_response"]["runs"] == 0
    assert out["efficiency"] == pytest.approx(out["flat"], rel=1e-12)
    assert out["sweep"][-1]["efficiency"] == pytest.approx(out["efficiency"], rel=1e-12)
    assert sum(out["farfield"]["intensity"]) == pytest.approx(out["efficiency"], rel=1e-9)
    # Closed form (references.multipass docstring), combined over the three orientations.
    exact = []
    for orientation in ("parallel", "normal", "out-of-plane"):
        i = 0 if orientation == "out-of-plane" else 1
        R = lambda th, i=i: np.abs(m.planar.fresnel(2.5, 1.0, th)[i]) ** 2  # noqa: E731
        exact.append(m.flat_closed_form(orientation, R, lambda th, R=R: 1 - R(th), 4e-4, 250.0, 500.0,
                                        lambda th: np.ones_like(np.asarray(th, float))))
    assert out["efficiency"] == pytest.approx(np.mean(exact), rel=5e-3)


@pytest.mark.parametrize("args, words", [
    (("--vary", "chip.index=2:3:2"), ("--vary", "chip.index")),
    (("--vary", "chip.thickness=1:2"), ("--vary", "START:STOP:COUNT")),
    (("--angles", "1"), ("--angles",)),
    (("--response", "exact", "--vary", "chip.alpha=-1:2:2"), ("--vary", "positive")),
])
def test_cli_multipass_refuses_bad_options(tmp_path, args, words):
    path = tmp_path / "thick.toml"
    path.write_text(case_toml(MULTIPASS_CASE))
    assert_refused(run_cli("multipass", path, *args), *words)


def test_cli_multipass_refuses_point_sources_and_films_on_a_texture(tmp_path):
    path = tmp_path / "point.toml"
    path.write_text(case_toml({**MULTIPASS_CASE, "emitter": {**MULTIPASS_CASE["emitter"], "source": "point"}}))
    assert_refused(run_cli("multipass", path), path.name, "emitter.source")
    path = tmp_path / "films.toml"
    path.write_text(case_toml({**MULTIPASS_CASE, "surface": {"pattern": "grating", "period": 0.5, "height": 0.1},
                               "film": [{"index": 1.5, "thickness": 0.1}]}))
    assert_refused(run_cli("multipass", path), path.name, "film")


def test_ray_optics_top_of_a_flat_surface_is_fresnel():
    """The bin-by-bin ray-optics top (references.multipass.ray_optics_top) of a flat surface: specular
    reflection and transmission equal tmm's at each bin centre within Monte-Carlo noise (20 000 rays a
    bin: 0.01), and every ray is accounted for."""
    import dataclasses

    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from references import raytrace

    case = parse_case(make_case(chip={"index": N_CHIP}, light={"wavelength": 1.0}, emitter={"depth": 1.0}))
    scene = raytrace.scene_from_case(case, make_layout(case, fdtd=False), 1.0, lateral="periodic")
    scene = dataclasses.replace(scene, back="open", y_back=-1e-3, alpha=0.0)
    for pol in "sp":
        top = m.ray_optics_top(scene, 10, pol, rays_per_bin=20000)
        R, _ = tmm_top(pol)
        expected = R(np.arcsin(bin_edges(10)[:-1] + 0.1))
        assert np.allclose(np.diag(top["reflect"]), expected, atol=0.01), pol
        assert np.allclose(top["reflect"].sum(axis=0) + top["transmit"], 1.0, atol=1e-12)
        assert np.allclose(top["farfield"].sum(axis=0), top["transmit"], atol=1e-12)
