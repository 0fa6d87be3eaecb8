"""Textured surfaces at the default grid against grid-converged values.

The reference values are limits extrapolated (Richardson extrapolation, the published method;
postprocess.convergence) from runs at 24, 32 and 48 points per chip wavelength (grating) and 16,
24 and 32 (triangle, sine) by the committed script bench/validate_textures.py. For the grating an
independent plain Meep script there (ridges as blocks, Meep's own source and flux monitors, none
of the package's code) extrapolates to the same out-of-plane value within 0.03%; for the triangle
another (one prism with its own vertices) to within 0.18%. The values are
in tests/data/textured_converged.json and quoted in the README.
"""

import json
from pathlib import Path

import pytest

from conftest import requires_meep

pytestmark = [requires_meep, pytest.mark.fdtd]

DATA = json.loads((Path(__file__).resolve().parent / "data" / "textured_converged.json").read_text())
TEXTURES = {
    "grating": {"pattern": "grating", "period": DATA["period"], "height": DATA["height"], "fill": 0.5},
    "triangle": {"pattern": "triangle", "period": DATA["period"], "height": DATA["height"]},
    "sine": {"pattern": "sine", "period": DATA["period"], "height": DATA["height"]},
}


@pytest.mark.parametrize("name", sorted(TEXTURES))
def test_default_grid_is_within_two_percent_of_the_converged_value(name):
    import outcouple

    case = {**DATA["cases"][name], "surface": TEXTURES[name]}
    result = outcouple.run(case, workers=2, progress=False).to_dict()
    limit = DATA["limits"][name]
    error = result["efficiency"] / limit["combined"] - 1
    assert abs(error) < 0.02, f"{name}: {result['efficiency']:.5f} against {limit['combined']:.5f} ({error:+.2%})"
    # The in-plane dipoles carry most of the light; the weak normal one is checked by the combination.
    for orientation in ("parallel", "out-of-plane"):
        own = result["by_orientation"][orientation] / limit[orientation] - 1
        assert abs(own) < 0.03, f"{name} {orientation}: {own:+.2%}"
    # What the run prints as its grid's error is not below the error it has.
    assert result["grid_error"]["estimate"] >= abs(error)
