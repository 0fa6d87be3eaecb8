"""FDTD (Meep) against the exact planar solver on flat stacks: films and back sides.

The exact solver (postprocess.multilayer) is itself checked against tmm, image theory, the
textbook dipole integrals and energy conservation in test_multilayer.py. Jobs run through the
package's runner and analysis, as ``outcouple run`` runs them, two worker processes at a time.
"""

import pytest

from conftest import requires_meep

pytestmark = [requires_meep, pytest.mark.fdtd]


def run_case(data):
    from fdtd_cases.case import parse_case
    from fdtd_cases.layout import make_layout
    from fdtd_cases.runner import plan_jobs, run_jobs
    from postprocess.analysis import analyse

    case = parse_case(data)
    layout = make_layout(case)
    jobs = plan_jobs(case, layout)
    raw = run_jobs(case, layout, jobs, workers=2, progress=False)
    return analyse(case, [{**j, **r} for j, r in zip(jobs, raw)], layout.wavelengths, layout.resolution)


def test_anti_reflection_film():
    """A quarter-wave film (n = 1.73, 0.1445 um) on an n = 3.0 half-space: top fraction per
    orientation within 3% of exact, and the film raises the efficiency over the bare chip as the
    exact solver says it must."""
    data = {"light": {"wavelength": 1.0}, "chip": {"index": 3.0}, "film": [{"index": 1.73, "thickness": 0.1445}],
            "emitter": {"depth": 0.35, "orientation": "isotropic"}, "grid": {"points_per_wavelength": 24}}
    summary = run_case(data)
    exact = summary["reference"]
    for name, ours in summary["by_orientation"].items():
        ref = exact["by_orientation"][name]
        assert ours == pytest.approx(ref, rel=0.03), f"{name}: FDTD {ours:.5f} vs exact {ref:.5f} ({100 * (ours / ref - 1):+.2f}%)"
    assert summary["efficiency"] == pytest.approx(exact["efficiency"], rel=0.03)
    assert summary["balance_error"] < 0.02
