"""``outcouple reference``: what it prints, as a user would call it (a subprocess)."""

import json
import math

import pytest
from scipy.integrate import quad

from conftest import CONFIGS, case_toml, make_case, run_cli
from fdtd_cases.case import ORIENTATIONS
from references import closed_forms
from references import multilayer as ml

FLAT_TABLES = {"light": {"wavelength": 0.82}, "chip": {"index": 3.1, "thickness": 0.9, "back": "mirror"},
               "film": [{"index": 1.8, "thickness": 0.114}], "emitter": {"depth": 0.33, "orientation": "isotropic"}}
FLAT = case_toml(make_case(**FLAT_TABLES))

FIELDS = ("efficiency", "by_orientation", "budget", "emission_factor")


def test_flat_case_json(tmp_path):
    """The JSON carries the line emitter's numbers and the point dipole's under point_dipole; each
    orientation's value equals a direct call of the exact solver on the same stack, and the
    combined value is the emission-weighted mean (the rule of docs/conventions.md)."""
    case = tmp_path / "flat.toml"
    case.write_text(FLAT)
    result = run_cli("reference", case, "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    for block in (data, data["point_dipole"]):
        for key in FIELDS:
            assert key in block
        assert set(block["budget"]) == {"top", "bottom", "sides", "absorbed"}
        assert abs(sum(block["budget"].values()) - 1) < 1e-6
        assert block["balance_error"] < 1e-6
    stack = ml.Stack(1.0, ((1.8 + 0j, 0.114),), 3.1 + 0j, 0.9, "mirror")
    for dim, block in ((2, data), (3, data["point_dipole"])):
        runs = {o: ml.emitter(stack, 0.33, 0.82, o, dim=dim) for o in ORIENTATIONS}
        for o, r in runs.items():
            assert block["by_orientation"][o] == pytest.approx(r["efficiency"], rel=1e-9)
        combined = sum(r["efficiency"] * r["emission"] for r in runs.values()) / sum(r["emission"] for r in runs.values())
        assert block["efficiency"] == pytest.approx(combined, rel=1e-9)
    assert "farfield" in data and len(data["farfield"]["angle"]) == len(data["farfield"]["intensity"])
    assert data["kind"] == "exact planar"
    cone = closed_forms.escape_cone("isotropic", 3.1, 1.0, dim=3)
    assert data["escape_cone"]["point_dipole"]["ideal"] == pytest.approx(cone, rel=1e-12)


def test_patterned_case_reports_bounds(tmp_path):
    """A patterned case: the flat baseline of the same stack and the randomising multi-pass
    estimate, labelled as bounds; the multi-pass value equals closed_forms.multipass with a
    perfect mirror (reflectivity 1)."""
    case = tmp_path / "textured.toml"
    case.write_text(case_toml(make_case(**FLAT_TABLES, surface={"pattern": "triangle", "period": 1.2, "height": 0.2})))
    data = json.loads(run_cli("reference", case, "--json").stdout)
    assert "bound" in data["kind"] and "not a prediction" in data["kind"]
    expected = closed_forms.multipass(3.1, 1.0, 0.0, 0.9, 0.33, 1.0, dim=3)
    assert data["randomising_bound"]["point_dipole"] == pytest.approx(expected, rel=1e-12)
    assert math.isclose(expected, 1.0)  # lossless chip on a perfect mirror: all light leaves eventually
    text_out = run_cli("reference", case).stdout
    assert "bracket" in text_out and "randomising multi-pass" in text_out


def test_metal_example_runs():
    result = run_cli("reference", CONFIGS / "metal_back.toml")
    assert result.returncode == 0, result.stderr
    assert "absorbed" in result.stdout and "point dipole" in result.stdout


def test_collected_fraction_rays_against_exact():
    """A lens of NA 0.5 over the flat half-space of configs/flat_check.toml: the exact solver's
    far field integrated over the fan, against Monte-Carlo rays with Fresnel transmission. Below a
    single interface the escaping wave does not interfere with anything, so ray optics is exact
    here up to the emitter's near field (0.3 µm is 1.2 chip wavelengths deep). The fan is
    +/-30 degrees in air, i.e. +/-8.7 degrees inside the n = 3.3 chip."""
    exact = json.loads(run_cli("reference", CONFIGS / "flat_check.toml", "--na", "0.5", "--json").stdout)
    rays = json.loads(run_cli("rays", CONFIGS / "flat_check.toml", "--na", "0.5", "--rays", "100000", "--json",
                              "--quiet").stdout)
    assert exact["collection"]["half_angle"] == pytest.approx(30.0)
    # statistical error of the collected fraction: it is a fraction of the escaped one, so at most that error
    tolerance = 4 * rays["statistical_error"] + 0.002 * exact["collected"]
    assert rays["collected"] == pytest.approx(exact["collected"], abs=tolerance), \
        f"rays {rays['collected']:.5f} vs exact {exact['collected']:.5f} (tolerance {tolerance:.5f})"
    # Derived here: a 2-D Lambertian pattern I(theta) = E cos(theta)/2 integrates to E sin(half-angle);
    # computed by quadrature of cos(theta) over the fan |theta| <= 30 deg, normalised to the escaped
    # efficiency E over -90..90 deg.
    half = math.radians(30.0)
    share = quad(math.cos, -half, half)[0] / quad(math.cos, -math.pi / 2, math.pi / 2)[0]
    assert exact["collection"]["lambertian"] == pytest.approx(exact["efficiency"] * share, rel=1e-9), \
        f"Lambertian in the fan {exact['collection']['lambertian']:.6f} vs quadrature {exact['efficiency'] * share:.6f}"


def test_line_runs_carry_the_point_dipole_baseline_of_reference(tmp_path):
    """The 3-D context a line run prints is the point dipole `reference` reports for the flat stack
    (exact solver, checked against the Novotny-Hecht integral in test_multilayer.py); for a deep
    emitter it approaches the 3-D escape cone with Fresnel losses (closed form, incoherent limit)."""
    import outcouple
    from conftest import make_case
    from outcouple.summary import flat_baseline

    case = outcouple.load_case(make_case(chip={"index": 2.4}, emitter={"depth": 6.0},
                                         surface={"pattern": "grating", "period": 0.5, "height": 0.2}))
    baseline = flat_baseline(case, dim=3)
    flat = outcouple.reference(make_case(chip={"index": 2.4}, emitter={"depth": 6.0}))
    assert baseline == pytest.approx(flat["point_dipole"]["efficiency"], rel=1e-12)
    cone = flat["escape_cone"]["point_dipole"]["with_fresnel"]
    assert baseline == pytest.approx(cone, rel=0.03), f"deep emitter: {baseline:.5f} vs escape cone {cone:.5f}"


def test_many_guided_modes_print_wrapped_with_their_count(tmp_path):
    """A 3 µm chip on a mirror at 0.45 µm guides about 30 modes per polarisation. Their number is the
    slab's: about 2 d sqrt(n^2 - 1) / lambda = 29.8 (the mode count of a mirror-backed slab, Saleh &
    Teich, from memory); the table gives the count and wraps the indices instead of one long line."""
    case = tmp_path / "thick.toml"
    case.write_text(case_toml(make_case(light={"wavelength": 0.45}, chip={"index": 2.45, "thickness": 3.0,
                                                                         "back": "mirror"},
                                        emitter={"depth": 1.0})))
    text = run_cli("reference", case)
    assert text.returncode == 0, text.stderr
    modes = json.loads(run_cli("reference", case, "--json").stdout)["guided_modes"]
    for pol in ("s", "p"):
        assert abs(len(modes[pol]) - 2 * 3.0 * math.sqrt(2.45 ** 2 - 1) / 0.45) < 1.5
        assert f"{len(modes[pol])} mode(s)" in text.stdout
    listed = text.stdout.split("effective indices):")[1].split("method:")[0].strip().splitlines()
    assert len(listed) >= 4 and max(len(row) for row in listed) <= 100
