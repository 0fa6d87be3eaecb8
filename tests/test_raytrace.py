"""The ray tracer (references.raytrace) against closed forms, the exact solver and path counts."""

import json
import math

import numpy as np
import pytest

from conftest import assert_refused, case_toml, make_case, run_cli
from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from references import closed_forms, multilayer, raytrace

from fdtd_cases.case import ORIENTATIONS


def case_of(chip=None, emitter=None, **tables):
    """A flat n = 3 chip, emitter 0.6 µm deep, with the given tables merged in (as make_case does)."""
    case = parse_case(make_case(chip={"index": 3.0, **(chip or {})}, emitter={"depth": 0.6, **(emitter or {})},
                                **tables))
    return case, make_layout(case, fdtd=False)


def within(ours, ref, error, sigmas=4.0, floor=0.0):
    return abs(ours - ref) <= sigmas * error + floor


@pytest.mark.parametrize("orientation", ORIENTATIONS)
def test_flat_surface_escape_cone_with_fresnel(orientation):
    """A flat, lossless half-space: the escaped fraction is the bulk pattern times the Fresnel
    transmission over the cone, 2 int_0^tc pattern T dtheta (closed_forms.escape_cone, derived
    there; its T is checked against tmm), within four standard errors."""
    case, layout = case_of(emitter={"orientation": orientation})
    r = raytrace.run_case(case, layout, rays=100000, lateral="periodic")
    ref = closed_forms.escape_cone(orientation, 3.0, 1.0, dim=2, fresnel_losses=True)
    assert within(r["efficiency"], ref, r["statistical_error"]), \
        f"rays {r['efficiency']:.5f} +/- {r['statistical_error']:.5f} vs closed form {ref:.5f}"
    b = r["budget"]
    assert b["bottom"] + b["truncated"] == pytest.approx(1 - r["efficiency"], abs=1e-9)
    assert b["truncated"] < 1e-3  # grazing rays that wrap round the period until the step limit


@pytest.mark.parametrize("orientation", ["parallel", "out-of-plane"])
def test_flat_film_against_the_exact_solver_incoherent_limit(orientation):
    """A flat chip with an anti-reflection film: rays against the exact planar solver averaged over
    emitter depths spanning one chip wavelength far below the surface (its incoherent limit)."""
    film = [{"index": 1.73, "thickness": 0.1445}]
    case, layout = case_of(film=film, emitter={"orientation": orientation})
    r = raytrace.run_case(case, layout, rays=100000, lateral="periodic")
    stack = multilayer.Stack(1.0, ((1.73 + 0j, 0.1445),), 3.0 + 0j, math.inf)
    depths = 15 + np.linspace(0, 1 / 3.0, 12, endpoint=False)
    runs = [multilayer.emitter(stack, d, 1.0, orientation) for d in depths]
    ref = sum(x["efficiency"] * x["emission"] for x in runs) / sum(x["emission"] for x in runs)
    assert within(r["efficiency"], ref, r["statistical_error"], floor=2e-3), \
        f"rays {r['efficiency']:.5f} +/- {r['statistical_error']:.5f} vs exact incoherent {ref:.5f}"


@pytest.mark.parametrize("alpha_cm,thickness", [(50.0, 4.0), (400.0, 2.0)])
def test_randomising_top_over_a_mirror_multipass(alpha_cm, thickness):
    """An ideal randomising top over an absorbing chip on a perfect mirror, isotropic (out-of-plane)
    emitter: against the multi-pass closed form (closed_forms.multipass, derived there after
    Yablonovitch, JOSA 72, 899 (1982))."""
    case, layout = case_of(chip={"index": 3.0, "alpha": alpha_cm, "thickness": thickness, "back": "mirror"},
                           emitter={"depth": thickness / 3, "orientation": "out-of-plane"})
    scene = raytrace.scene_from_case(case, layout, 1.0, "periodic")
    rng = np.random.default_rng(7)
    n = 100000
    pos, d = raytrace.emitter_rays(case, layout, "out-of-plane", 0.0, n, rng)
    r = raytrace.trace(scene, pos, d, "s", rng=rng, randomising=True, weight_floor=1e-6)
    ours = np.mean(r["top"])
    error = np.std(r["top"]) / math.sqrt(n)
    ref = closed_forms.multipass(3.0, 1.0, alpha_cm * 1e-4, thickness, thickness / 3, 1.0, dim=2)
    assert within(ours, ref, error, floor=1e-3), f"rays {ours:.5f} +/- {error:.5f} vs multi-pass {ref:.5f}"


@pytest.mark.parametrize("lateral", ["absorbing", "periodic"])
def test_budget_conserves_every_ray(lateral):
    """Energy conservation: without any loss no weight may go missing (the tracer books as absorbed
    whatever did not end in top, bottom, sides or truncated, so a ray that loses weight at an
    interface or an escape that is not counted shows up here); with losses the absorbed share of
    every ray lies between 0 and 1."""
    for chip, film in (({"index": 2.6, "alpha": 80.0, "thickness": 3.0, "back": "metal", "back_index": 0.2,
                         "back_extinction": 4.0}, [{"index": 1.7, "thickness": 0.12, "alpha": 200.0}]),
                       ({"index": 2.6, "thickness": 3.0, "back": "substrate", "back_index": 1.5}, [])):
        case, layout = case_of(chip=chip, film=film, surface={"pattern": "triangle", "period": 1.6, "height": 0.8},
                               emitter={"depth": 1.5, "orientation": "parallel"})
        scene = raytrace.scene_from_case(case, layout, 1.0, lateral)
        rng = np.random.default_rng(3)
        pos, d = raytrace.emitter_rays(case, layout, "parallel", 0.0, 20000, rng)
        r = raytrace.trace(scene, pos, d, "p", rng=rng)
        assert np.all(r["absorbed"] > -1e-12) and np.all(r["absorbed"] < 1 + 1e-12)
        if not film:
            assert np.max(np.abs(r["absorbed"])) < 1e-12
        else:
            assert np.mean(r["absorbed"]) > 0.05


@pytest.mark.parametrize("pol", ["s", "p"])
def test_v_groove_path_count(pol):
    """Symmetric V-grooves with 60-degree facets (height = period * tan(60)/2), n = 2.5, rays going
    straight up (a normal ray family) spread over one period. Path count (derived here): a ray meets
    one facet at 60 degrees (beyond the 23.6-degree critical angle: total reflection) and turns
    120 degrees, so it meets the opposite facet head-on; there T0 = 4n/(n+1)^2 leaves (passing over
    the neighbouring ridge) and R0 goes back, meets the first facet again at 60 degrees (total
    reflection) and leaves straight down. So top = T0 and bottom = R0 for either polarisation."""
    period = 1.0
    case, layout = case_of(chip={"index": 2.5},
                           surface={"pattern": "triangle", "period": period, "height": period * math.tan(math.radians(60)) / 2},
                           emitter={"depth": 1.2})
    scene = raytrace.scene_from_case(case, layout, 1.0, "periodic")
    n = 40000
    x = (np.arange(n) + 0.5) / n * period - period / 2
    x = x[np.abs(x) > 1e-6]
    pos = np.column_stack([x, np.full(len(x), -1.0)])
    d = np.tile([0.0, 1.0], (len(x), 1))
    r = raytrace.trace(scene, pos, d, pol, rng=np.random.default_rng(5))
    T0 = 4 * 2.5 / 3.5 ** 2
    top = np.mean(r["top"])
    error = math.sqrt(T0 * (1 - T0) / len(x))
    assert within(top, T0, error), f"rays {top:.5f} vs path count {T0:.5f}"
    assert np.mean(r["bottom"]) == pytest.approx(1 - top, abs=1e-12)


def test_rays_command_json(tmp_path):
    case = tmp_path / "texture.toml"
    case.write_text(case_toml(make_case(light={"wavelength": 0.9}, chip={"index": 2.4},
                                        surface={"pattern": "triangle", "period": 3.0, "height": 1.5},
                                        emitter={"depth": 2.0})))
    result = run_cli("rays", case, "--rays", "4000", "--json", "--quiet")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    for key in ("efficiency", "efficiency_spectrum", "wavelengths", "by_orientation", "budget",
                "statistical_error", "rays_for_half_percent", "farfield"):
        assert key in data, key
    assert abs(sum(data["budget"].values()) - 1) < 1e-9
    assert 0 < data["statistical_error"] < 0.02
    # Stated in the text output, as a user reads it.
    text = run_cli("rays", case, "--rays", "2000").stdout
    assert "standard error" in text and "0.5% statistical error" in text


def test_rays_refuses_periodic_for_a_random_surface(tmp_path):
    case = tmp_path / "rough.toml"
    case.write_text(case_toml(make_case(light={"wavelength": 0.9}, chip={"index": 2.4},
                                        surface={"pattern": "random", "rms": 0.1, "correlation": 0.3},
                                        emitter={"depth": 1.0})))
    result = run_cli("rays", case, "--lateral", "periodic")
    assert_refused(result, "--lateral")


THICK_FLAT = make_case(light={"wavelength": 0.6}, chip={"index": 2.5, "alpha": 4.0, "thickness": 500.0, "back": "mirror"},
                       emitter={"depth": 250.0, "orientation": "out-of-plane"})
"""A 500 µm flat chip on a mirror, alpha = 4 /cm: light crosses it a few times, far sideways."""


def test_rays_on_a_thick_chip_use_periodic_sides_by_default(tmp_path):
    """The default sides of a periodic (here flat) pattern on a chip far thicker than the window are
    periodic: the escaped fraction equals the flat chip's incoherent sum of passes (derived in
    references.multipass, Fresnel coefficients as tmm's, see test_multipass.py) within four standard
    errors; asking for absorbing sides loses most of the light sideways and says so, naming the share
    and the option."""
    import outcouple
    from references import multipass as m

    R = lambda th: np.abs(m.planar.fresnel(2.5, 1.0, th)[0]) ** 2  # noqa: E731
    exact = m.flat_closed_form("out-of-plane", R, lambda th: 1 - R(th), 4e-4, 250.0, 500.0,
                               lambda th: np.ones_like(np.asarray(th, float)))
    r = outcouple.rays(THICK_FLAT, rays=20000)
    assert r["lateral"] == "periodic" and not r["warnings"]
    assert within(r["efficiency"], exact, r["statistical_error"]), (r["efficiency"], exact)
    path = tmp_path / "thick.toml"
    path.write_text(case_toml(THICK_FLAT))
    out = run_cli("rays", path, "--lateral", "absorbing", "--rays", "4000")
    assert out.returncode == 0, out.stderr
    assert "warning" in out.stderr and "--lateral periodic" in out.stderr and "% of the light left" in out.stderr
    share = float(out.stderr.split("% of the light left")[0].split()[-1])
    assert share > 50
