"""The kz quadrature of point sources (fdtd_cases.kz) on integrands known in closed form (no Meep).

The 2-D power per dkz of a dipole in bulk follows from the textbook dipole pattern
dP/dOmega = (3 P / 8 pi) sin^2(angle to the dipole) (Jackson, Classical Electrodynamics, 9.22):
with kz = k cos(theta), P_2D(kz) = (2 pi / k) integral dP/dOmega dphi (both hemispheres), so
(derived here) P_2D = (3 pi P / 2k)(1 - u^2/n^2) for a dipole along z and
(3 pi P / 4k)(1 + u^2/n^2) for one across z, u = kz / k0; (k0 / pi) integral_0^n P_2D du = P.
"""

import numpy as np
import pytest
from scipy import integrate

from conftest import make_case
from fdtd_cases import kz
from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import plan_jobs


@pytest.mark.parametrize("along", ["z", "across"])
@pytest.mark.parametrize("n_chip", [2.0, 3.5])
def test_bulk_dipole_patterns_integrate_to_the_dipole_power(along, n_chip):
    u, w = kz.rule(kz.breakpoints([1.0, n_chip], n_chip), kz.DEFAULT_NODES)
    shape = 2 * (1 - (u / n_chip) ** 2) if along == "z" else 1 + (u / n_chip) ** 2
    # (k0 / pi) sum w P_2D with P_2D = (3 pi P / 4 k) shape, k = n k0: P times this ratio
    ratio = np.sum(w * 3 / (4 * n_chip) * shape)
    assert ratio == pytest.approx(1.0, abs=2e-3), f"kz integral {ratio:.6f} of the dipole power, expected 1"


def test_square_root_ends_and_a_guided_pole():
    """sqrt(1 - u) up to the ambient's break and 1/sqrt(beta - u) below a guided mode (scipy.integrate.quad)."""
    beta, n = 1.8, 2.5
    u, w = kz.rule(kz.breakpoints([1.0], n, guided=[beta]), 6)
    f = np.where(u < 1, np.sqrt(np.clip(1 - u, 0, None)), 0.0) + np.where(u < beta, 1 / np.sqrt(np.abs(beta - u)), 0.0)
    exact = integrate.quad(lambda v: np.sqrt(1 - v), 0, 1)[0] + integrate.quad(lambda v: 1 / np.sqrt(beta - v), 0, beta)[0]
    assert np.sum(w * f) == pytest.approx(exact, rel=1e-6)
    assert not np.any(np.isclose(u[:, None], [1.0, beta, n], atol=1e-9)), "a node on a breakpoint"


@pytest.mark.parametrize("depth", [0.3, 0.6, 1.0])
def test_fringes_set_the_node_count(depth):
    """A full-contrast fringe 1 - cos(2 q d), q = k0 sqrt(n^2 - u^2), integrated to 1e-3 of scipy's quad
    by the nodes the case gets (a fixed 6 nodes per piece failed by 6% at 0.6 wavelength)."""
    case = parse_case(make_case(chip={"index": 2.0}, emitter={"depth": depth, "source": "point"}))
    u, w = kz.case_rule(case, 1.0)
    k0 = 2 * np.pi

    def fringe(v):
        return 1 - np.cos(2 * depth * k0 * np.sqrt(np.clip(4.0 - v * v, 0, None)))
    exact = integrate.quad(fringe, 0, 2.0, points=[1.0], limit=400)[0]
    assert np.sum(w * fringe(u)) == pytest.approx(exact, rel=1e-3)


def test_breakpoints_are_sorted_merged_and_end_at_the_largest_index():
    assert kz.breakpoints([1.0, 1.0 + 1e-9, 2.5], 2.5, guided=[2.2, 3.0]) == [0.0, 1.0, 2.2, 2.5]
    case = parse_case(make_case(chip={"index": 2.4, "thickness": 3.0, "back": "substrate", "back_index": 1.7},
                                film=[{"index": 2.6, "thickness": 0.05}], emitter={"source": "point"}))
    assert kz.largest_index(case) == 2.6 and sorted(kz.half_spaces(case)) == [1.0, 1.7]


def test_point_jobs_cover_every_orientation_position_wavelength_and_node():
    case = parse_case(make_case(light={"wavelength": 1.0, "band": 0.1, "samples": 2},
                                emitter={"depth": 0.3, "x": [0.0, 0.2], "source": "point"}))
    layout = make_layout(case)
    jobs = plan_jobs(case, layout)
    # Point sources run on two grids by default (grid.extrapolate): the second at 0.75 of the resolution.
    assert layout.second is not None and layout.second.resolution == round(0.75 * layout.resolution)
    second = [job for job in jobs if "resolution" in job]
    assert {job["resolution"] for job in second} == {layout.second.resolution}
    assert not any(job["picture"] for job in second)
    own = [job for job in jobs if "resolution" not in job]
    assert [{k: v for k, v in job.items() if k not in ("resolution", "picture")} for job in second] == \
        [{k: v for k, v in job.items() if k != "picture"} for job in own]  # a flat chip: the same nodes
    per = {}
    for job in own:
        per.setdefault((job["orientation"], job["x"], job["wavelength"]), []).append(job)
    assert len(per) == 3 * 2 * 2
    for (_, _, wavelength), nodes in per.items():
        u, w = kz.case_rule(case, wavelength)
        assert [j["kz"] for j in nodes] == pytest.approx(list(u))
        # the weights integrate 1 over [0, n_max] exactly
        assert sum(j["kz_weight"] for j in nodes) == pytest.approx(kz.largest_index(case), rel=1e-9)
    assert all(job["symmetric"] == (job["x"] == 0.0) for job in jobs)


def test_guided_modes_become_breakpoints():
    """A 0.6 um chip of n = 3.3 on a mirror guides light; its modes (found by the exact solver,
    references.multilayer, checked against the slab dispersion relation in test_multilayer.py)
    cut the integral, so no node falls on a mode (nodes crowd towards it: the pole is integrable)."""
    from outcouple.jobs import guided_indices

    case = parse_case(make_case(chip={"index": 3.3, "thickness": 0.6, "back": "mirror"},
                                emitter={"depth": 0.25, "source": "point"}))
    modes = guided_indices(case, [1.0])[0]
    assert modes and all(1.0 < m < 3.3 for m in modes)
    u, _ = kz.case_rule(case, 1.0, modes)
    gaps = np.min(np.abs(u[:, None] - np.array(modes)[None, :]), axis=0)
    assert np.all(gaps > 1e-7)


@pytest.mark.parametrize("orientation", ["parallel", "normal", "out-of-plane"])
@pytest.mark.parametrize("n_chip, depth", [(2.0, 0.25), (2.5, 0.3), (3.5, 0.6)])
def test_exact_kz_spectrum_integrates_to_the_3d_dipole(orientation, n_chip, depth):
    """The exact 2-D power of each kz (references.kz_spectrum, derived there from the plane-wave
    expansion with the azimuth undone), summed with the case's own nodes and weights, equals the
    3-D solver's dipole (references.multilayer, dim=3: checked against the Novotny-Hecht integral
    in test_multilayer.py), which integrates over the transverse wavenumber instead: so the node
    count the tool chooses integrates the kz spectrum of these chips to 1e-3."""
    from references import multilayer as ml
    from references.kz_spectrum import spectrum

    case = parse_case(make_case(chip={"index": n_chip}, emitter={"depth": depth, "source": "point"}))
    stack = ml.Stack(1.0, (), complex(n_chip), np.inf)
    exact = ml.emitter(stack, depth, 1.0, orientation, dim=3)
    u, w = kz.case_rule(case, 1.0)
    values = [spectrum(stack, depth, 1.0, orientation, x) for x in u]
    k0 = 2 * np.pi
    emitted = k0 / np.pi * np.sum(w * np.array([v["emitted"] for v in values]))
    top = k0 / np.pi * np.sum(w * np.array([v["top"] for v in values]))
    assert emitted == pytest.approx(exact["emission"], rel=1e-3)
    assert top / emitted == pytest.approx(exact["efficiency"], rel=1e-3)
    bulk = k0 / np.pi * np.sum(w * np.array([v["bulk"] for v in values]))
    assert bulk == pytest.approx(1.0, rel=1e-3)  # the textbook pattern integrates to the dipole's power


def test_a_point_source_on_a_perfect_mirror_is_refused_with_a_message(tmp_path):
    """Its kz runs diverge against Meep's perfect conductor (measured: fields of 1e17 at kz = 0.935 k0
    on a 0.35 um chip), so `check` and `run` refuse it naming both keys; the exact solver still serves."""
    from conftest import assert_refused, case_toml, run_cli

    case = tmp_path / "mirror.toml"
    case.write_text(case_toml(make_case(chip={"index": 2.0, "thickness": 0.6, "back": "mirror"},
                                        emitter={"depth": 0.3, "source": "point"})))
    assert_refused(run_cli("check", case), "chip.back", "mirror", "emitter.source")
    assert_refused(run_cli("run", case, "-o", tmp_path / "m.h5"), "chip.back", folder=tmp_path, pattern="*.h5")
    assert run_cli("reference", case).returncode == 0


GUIDING = {
    "thin chip on a substrate": {"chip": {"index": 2.0, "thickness": 0.35, "back": "substrate", "back_index": 1.5},
                                 "emitter": {"depth": 0.175, "source": "point"}},
    "high-index film on an open chip": {"chip": {"index": 2.5}, "film": [{"index": 3.0, "thickness": 0.3}],
                                        "emitter": {"depth": 0.5, "source": "point"}},
}


@pytest.mark.parametrize("name", list(GUIDING))
def test_grid_modes_tend_to_the_exact_modes(name):
    """The guided modes the Yee grid carries (fdtd_cases.slab_modes, a 1-D finite-difference
    eigenproblem) tend to the exact solver's (references.multilayer, checked against the slab
    dispersion relation of Saleh & Teich in test_multilayer.py) as the grid is refined, and at the
    default grid differ by more than the quadrature's nearest nodes lie from a breakpoint: the
    reason the runs break the integral at the grid's indices."""
    from fdtd_cases.slab_modes import grid_indices
    from outcouple.jobs import guided_indices

    data = make_case(**GUIDING[name])
    case = parse_case(data)
    exact = np.array(guided_indices(case, [1.0])[0])
    coarse = np.array(grid_indices(case, make_layout(case), 1.0))
    refined = parse_case({**data, "grid": {"resolution": 256}})
    fine = np.array(grid_indices(refined, make_layout(refined), 1.0))
    assert len(exact) == len(coarse) == len(fine) == 2
    np.testing.assert_allclose(fine, exact, atol=5e-5)
    np.testing.assert_allclose(coarse, exact, atol=3e-3)
    if name == "thin chip on a substrate":  # measured: the s mode 1.8011 on the grid, 1.8028 exact
        u, _ = kz.case_rule(case, 1.0, exact)
        nearest = np.min(np.abs(u[:, None] - exact[None, :]))
        assert np.max(np.abs(coarse - exact)) > nearest


def test_runs_break_the_integral_at_the_grid_modes():
    """plan_jobs cuts a guiding stack's integral at the grid's mode indices: Gauss nodes crowd
    towards them from both sides and none falls on one; the weights still sum to the largest
    index (the length of the interval)."""
    from fdtd_cases.slab_modes import grid_indices
    from outcouple.jobs import jobs_of

    case = parse_case(make_case(**GUIDING["thin chip on a substrate"], light={"wavelength": 1.0}))
    layout = make_layout(case)
    u = np.array(sorted({job["kz"] for job in jobs_of(case, layout)}))
    weights = sum(job["kz_weight"] for job in jobs_of(case, layout) if job["orientation"] == "parallel")
    assert weights == pytest.approx(2.0, rel=1e-6)
    for mode in grid_indices(case, layout, 1.0):
        below, above = u[u < mode], u[u > mode]
        assert mode - below.max() < 2e-3 and above.min() - mode < 2e-3
        assert np.min(np.abs(u - mode)) > 1e-7
