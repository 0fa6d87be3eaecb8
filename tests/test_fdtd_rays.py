"""Ray optics against full wave (FDTD) on the same geometry and domain.

Both run through the package as `outcouple compare` runs them: the FDTD jobs through the runner
and analysis, the rays through references.raytrace on the FDTD layout (absorbing sides where the
FDTD has its side monitors). Cases found by a study of several patterns (periods, depths, widths,
bands); the numbers measured there are in the README.
"""

import pytest

from conftest import make_case, requires_meep, run_case
from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from references import raytrace
from references.reference import planar

pytestmark = [requires_meep, pytest.mark.fdtd]


def both(data):
    case = parse_case(data)
    wave = run_case(data)
    ray = raytrace.run_case(case, make_layout(case), rays=20000)
    return case, wave, ray


def test_large_period_v_grooves_agree():
    """V-grooves 6 um wide and 3 um deep (12 chip wavelengths) on an n = 2.0 chip, emitter 7 um
    deep, a 0.9-1.1 um band: features far larger than the wavelength, where ray optics is expected
    to hold (common practice: period >> lambda / n). The combined efficiency agrees within 5%
    (measured +2.4%). Per orientation the agreement at this one position was within 4% but moved
    to 16% at another position, so only the combined value is asserted."""
    data = make_case(light={"band": 0.2, "samples": 7}, surface={"pattern": "triangle", "period": 6.0, "height": 3.0},
                     emitter={"depth": 7.0, "orientation": "isotropic"}, grid={"points_per_wavelength": 12, "width": 24})
    _, wave, ray = both(data)
    assert ray["efficiency"] == pytest.approx(wave["efficiency"], rel=0.05), \
        f"rays {ray['efficiency']:.4f} vs FDTD {wave['efficiency']:.4f} ({100 * (ray['efficiency'] / wave['efficiency'] - 1):+.1f}%)"


def test_subwavelength_texture_disagrees():
    """V-grooves of period 0.25 um (half the chip wavelength, 0.5 um) and depth 0.25 um: too fine
    to diffract into air anywhere in the band, so the wave sees a graded layer and stays near the
    flat chip (exact planar solver), while rays see 45-degree facets. Ray optics must be shown
    wrong here: combined +16% measured, the normal emitter four times too high."""
    data = make_case(light={"band": 0.2, "samples": 5}, surface={"pattern": "triangle", "period": 0.25, "height": 0.25},
                     emitter={"depth": 2.0, "orientation": "isotropic"}, grid={"points_per_wavelength": 16, "width": 10})
    case, wave, ray = both(data)
    gap = ray["efficiency"] / wave["efficiency"] - 1
    assert gap > 0.10, f"rays {ray['efficiency']:.4f} vs FDTD {wave['efficiency']:.4f}: only {100 * gap:+.1f}%"
    normal = ray["by_orientation"]["normal"] / wave["by_orientation"]["normal"]
    assert normal > 2, f"normal emitter: rays / FDTD = {normal:.2f}"
    flat = planar(parse_case({**data, "surface": {"pattern": "flat"}}))
    assert wave["efficiency"] == pytest.approx(flat["efficiency"], rel=0.12), "the wave result stays near the flat chip"
