"""FDTD (Meep) against the exact planar solver on flat stacks: films and back sides.

The exact solver (references.multilayer) is itself checked against tmm, image theory, the
textbook dipole integrals and energy conservation in test_multilayer.py. Jobs run through the
package's public API, as ``outcouple run`` runs them, two worker processes at a time.
"""

import pytest

from conftest import make_case, requires_meep, run_case
from fdtd_cases.case_file import parse_case
from references.reference import planar

pytestmark = [requires_meep, pytest.mark.fdtd]


def test_anti_reflection_film():
    """A quarter-wave film (n = 1.73, 0.1445 um) on an n = 3.0 half-space: top fraction per
    orientation within 3% of exact, and the film raises the efficiency over the bare chip as the
    exact solver says it must."""
    data = make_case(chip={"index": 3.0}, film=[{"index": 1.73, "thickness": 0.1445}],
                     emitter={"depth": 0.35, "orientation": "isotropic"}, grid={"points_per_wavelength": 24})
    summary = run_case(data)
    exact = summary["reference"]
    for name, ours in summary["by_orientation"].items():
        ref = exact["by_orientation"][name]
        assert ours == pytest.approx(ref, rel=0.03), f"{name}: FDTD {ours:.5f} vs exact {ref:.5f} ({100 * (ours / ref - 1):+.2f}%)"
    assert summary["efficiency"] == pytest.approx(exact["efficiency"], rel=0.03)
    assert summary["balance_error"] < 0.02


def test_thin_chip_on_a_mirror():
    """A 0.6 um chip (n = 3.3) on a perfect mirror, emitter 0.25 um deep, wavelength 1 um: most
    of the light is launched into guided modes. FDTD sides (guided power reaching the lateral
    monitors) within 3% of the exact guided power from the mode residues, for all orientations;
    the escaped fraction within 3% for the out-of-plane and parallel emitters. The normal emitter
    sends under 1% of its light out (0.008 exact); there the FDTD is still 14% low at 90 points
    per um, so its top is not asserted (README, validation).

    A thin chip on a mirror is badly conditioned (the efficiency moves by several percent per nm
    of thickness) and converges slowly: 90 points per um here, where 60 leaves the out-of-plane
    value +3.9% high through grid dispersion."""
    data = make_case(chip={"index": 3.3, "thickness": 0.6, "back": "mirror"},
                     emitter={"depth": 0.25, "orientation": "isotropic"}, grid={"resolution": 90})
    summary = run_case(data)
    exact = summary["reference"]
    for job in summary["jobs"]:
        name = job["orientation"]
        one = planar(parse_case({**data, "emitter": {"depth": 0.25, "orientation": name}}), dim=2, modes=True)
        ours, ref = job["budget"]["sides"], one["budget"]["sides"]
        assert ours == pytest.approx(ref, rel=0.03), f"{name} sides: FDTD {ours:.4f} vs exact guided {ref:.4f}"
        if name != "normal":
            ours, ref = job["efficiency"], exact["by_orientation"][name]
            assert ours == pytest.approx(ref, rel=0.03), f"{name}: FDTD {ours:.5f} vs exact {ref:.5f}"
