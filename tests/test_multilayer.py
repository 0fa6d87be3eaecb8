"""The exact planar solver (references.multilayer) against outside references (no Meep needed)."""

import math

import numpy as np
import pytest
import tmm
from scipy import integrate, special

from references import multilayer as ml
from references import planar

from fdtd_cases.case import ORIENTATIONS
AR_FILMS = ((1.73 + 0j, 0.1445),)
ABSORBING_FILMS = ((2.1 + 0.05j, 0.23), (1.45 + 0j, 0.31))


def tmm_stack(n_chip, films, n_ambient):
    return [n_chip, *[n for n, _ in films], n_ambient], [np.inf, *[t for _, t in films], np.inf]


@pytest.mark.parametrize("films", [AR_FILMS, ABSORBING_FILMS, ((3.8 + 0.2j, 0.05),)], ids=["ar", "absorbing", "metal-like"])
@pytest.mark.parametrize("pol", ["s", "p"])
def test_top_reflection_and_transmission_against_tmm(films, pol):
    """Reflectance and transmittance of film stacks seen from inside the chip, 40 angles up to
    grazing, both polarisations, against the PyPI package tmm (coh_tmm, Byrnes)."""
    n_chip, n_amb, lam = 3.2, 1.0, 0.87
    stack = ml.Stack(n_amb, films, complex(n_chip), math.inf)
    theta = np.linspace(0, 0.999 * np.pi / 2, 40)
    ours = ml.response(stack, pol, lam, theta)
    n_list, d_list = tmm_stack(n_chip, films, n_amb)
    for i, th in enumerate(theta):
        ref = tmm.coh_tmm(pol, n_list, d_list, th, lam)
        assert ours["R_up"][i] == pytest.approx(ref["R"], abs=1e-10), f"R at {th:.3f} rad: ours vs tmm"
        assert ours["T_up"][i] == pytest.approx(ref["T"], abs=1e-10), f"T at {th:.3f} rad: ours vs tmm"


@pytest.mark.parametrize("back,index", [("metal", 0.14 + 5.2j), ("substrate", 1.5 + 0j)])
@pytest.mark.parametrize("pol", ["s", "p"])
def test_back_reflection_against_tmm(back, index, pol):
    """Reflectance of the chip/back-medium interface for a wave going down, against tmm."""
    n_chip, lam = 3.2, 0.87
    stack = ml.Stack(1.0, (), complex(n_chip), 1.0, back, index)
    theta = np.linspace(0, 0.999 * np.pi / 2, 30)
    ours = ml.response(stack, pol, lam, theta)["R_down"]
    for i, th in enumerate(theta):
        ref = tmm.coh_tmm(pol, [n_chip, index], [np.inf, np.inf], th, lam)["R"]
        assert ours[i] == pytest.approx(ref, abs=1e-10), f"R_down at {th:.3f} rad: ours {ours[i]} vs tmm {ref}"


@pytest.mark.parametrize("orientation", ORIENTATIONS)
@pytest.mark.parametrize("n_chip,depth", [(2.5, 0.05), (3.5, 0.35), (1.8, 1.3)])
def test_half_space_against_the_angle_quadrature(orientation, n_chip, depth):
    """Open flat half-space: the contour-path solver against planar.half_space, a separate
    implementation (adaptive quadrature over the propagation angle, real axis only)."""
    ours = ml.emitter(ml.Stack(1.0, (), complex(n_chip), math.inf), depth, 0.9, orientation)
    ref = planar.half_space(n_chip, 1.0, depth, 0.9, orientation)
    assert ours["emission"] == pytest.approx(ref["emission"], rel=1e-8)
    assert ours["efficiency"] == pytest.approx(ref["efficiency"], rel=1e-7)


@pytest.mark.parametrize("orientation", ORIENTATIONS)
@pytest.mark.parametrize("kh", [0.3, 1.7, 5.0])
def test_line_current_over_a_mirror_image_theory(orientation, kh):
    """No top interface (ambient = chip) and a perfect mirror at distance h: image theory gives
    emitted / bulk = 1 - J0(2kh) (current along z), 1 - 2 [J0(x) - J1(x)/x] (along the mirror, x),
    1 + 2 J1(x)/x (normal to it), x = 2kh; from Im G of the 2-D dyadic Green's function
    (1/4)(1 + grad grad / k^2) J0(k r) with an image current of opposite (tangential) or equal
    (normal) sign (derived here; image theory as in Balanis, Antenna Theory, ch. 4)."""
    n, lam = 2.0, 1.0
    k = 2 * np.pi * n / lam
    h = kh / k
    stack = ml.Stack(n, (), complex(n), h + 0.5, "mirror")
    ours = ml.emitter(stack, 0.5, lam, orientation)["emission"]
    x = 2 * kh
    exact = {"out-of-plane": 1 - special.j0(x), "parallel": 1 - 2 * (special.j0(x) - special.j1(x) / x),
             "normal": 1 + 2 * special.j1(x) / x}[orientation]
    assert ours == pytest.approx(exact, abs=1e-8), f"ours {ours:.10f} vs image theory {exact:.10f}"


def _novotny_half_space(orientation, n_chip, depth, lam):
    """3-D dipole below a flat interface, normalised power (Novotny & Hecht, Principles of
    Nano-Optics, ch. 10, the dipole-near-interface formulas; equation numbers not quoted, from memory):
    P_perp = 1 + 3/2 Re int s^3/sz r_p e^{2 i k d sz} ds, P_par = 1 + 3/4 Re int s/sz (r_s - sz^2 r_p) e ds,
    over s in [0, 1] (the evanescent part adds nothing for a lossless interface)."""
    k = 2 * np.pi * n_chip / lam

    def terms(s):
        sz = np.sqrt(1 - s * s)
        r_s, r_p, _, _ = planar.fresnel(n_chip, 1.0, np.arcsin(s))
        e = np.exp(2j * k * depth * sz)
        if orientation == "normal":
            return 1.5 * s ** 3 / sz * r_p * e
        return 0.75 * s / sz * (r_s - sz ** 2 * r_p) * e

    # s = sin(theta): ds / sz = dtheta removes the 1/sz edge.
    def f(theta):
        s = np.sin(theta)
        return float(np.real(terms(s) * np.sqrt(1 - s * s)))
    tc = np.arcsin(1 / n_chip)
    return 1 + integrate.quad(f, 0, tc, limit=400)[0] + integrate.quad(f, tc, np.pi / 2, limit=400)[0]


@pytest.mark.parametrize("orientation", ["parallel", "normal"])
@pytest.mark.parametrize("depth", [0.04, 0.3])
def test_point_dipole_emission_against_the_textbook_integral(orientation, depth):
    """3-D emitted power of a dipole below a flat half-space, against the textbook integral."""
    ours = ml.emitter(ml.Stack(1.0, (), complex(3.1), math.inf), depth, 0.8, orientation, dim=3)["emission"]
    ref = _novotny_half_space(orientation, 3.1, depth, 0.8)
    assert ours == pytest.approx(ref, rel=1e-7), f"ours {ours:.9f} vs textbook integral {ref:.9f}"


LOSSLESS_STACKS = {
    "ar film, half-space": ml.Stack(1.0, AR_FILMS, 3.0 + 0j, math.inf),
    "thin chip on mirror": ml.Stack(1.0, (), 3.3 + 0j, 0.5, "mirror"),
    "film, chip on substrate": ml.Stack(1.0, ((1.7 + 0j, 0.1),), 3.3 + 0j, 1.6, "substrate", 1.5 + 0j),
    "guiding film on half-space": ml.Stack(1.0, ((3.8 + 0j, 0.15),), 3.3 + 0j, math.inf),
    "encapsulated, two films, mirror": ml.Stack(1.4, ((2.0 + 0j, 0.3), (1.6 + 0j, 0.2)), 2.5 + 0j, 3.0, "mirror"),
}


@pytest.mark.parametrize("dim", [2, 3])
@pytest.mark.parametrize("orientation", ORIENTATIONS)
@pytest.mark.parametrize("name", list(LOSSLESS_STACKS))
def test_lossless_budget_sums_to_one(name, orientation, dim):
    """Energy conservation (Poynting's theorem): for lossless stacks the emitted power (contour
    integral of the source's own field) equals top + bottom + the power into guided modes found
    independently from the residues at their poles."""
    r = ml.emitter(LOSSLESS_STACKS[name], 0.3, 0.9, orientation, dim=dim, modes=True)
    assert r["balance_error"] < 1e-6, f"{name}: balance error {r['balance_error']:.2e}"
    b = r["budget"]
    assert b["absorbed"] == 0 and abs(sum(b.values()) - 1) < 1e-6


def test_guided_modes_of_a_slab_on_a_mirror():
    """Effective indices of the s (TE) modes of a slab of index n and thickness w on a perfect
    mirror under air: the symmetric-slab modes of thickness 2w that vanish at the mirror, i.e.
    the odd TE modes: tan(kx w) = -kx / gamma (textbook slab waveguide, e.g. Saleh & Teich,
    Fundamentals of Photonics, ch. 9), solved here with scipy's brentq."""
    n, w, lam = 3.3, 0.5, 1.0
    k0 = 2 * np.pi / lam
    r = ml.emitter(ml.Stack(1.0, (), complex(n), w, "mirror"), 0.25, lam, "out-of-plane", modes=True)

    def dispersion(neff):
        kx, gamma = k0 * np.sqrt(n ** 2 - neff ** 2), k0 * np.sqrt(neff ** 2 - 1)
        return kx * np.cos(kx * w) + gamma * np.sin(kx * w)
    grid = np.linspace(1.0001, n - 1e-6, 20001)
    values = dispersion(grid)
    from scipy.optimize import brentq
    roots = [brentq(dispersion, a, b) for a, b, fa, fb in zip(grid, grid[1:], values, values[1:]) if fa * fb < 0]
    # The emitter at mid-depth couples to the modes with a field maximum or slope there; every mode it
    # excites must be one of the slab's.
    assert r["guided_modes"]["s"], "no guided modes found"
    for neff in r["guided_modes"]["s"]:
        assert min(abs(neff - x) for x in roots) < 1e-8, f"mode {neff} not among {roots}"


@pytest.mark.parametrize("dim", [2, 3])
def test_absorbing_chip_budget(dim):
    """An absorbing chip: nothing goes sideways, the budget sums to one, and as the absorption
    goes to zero the result tends to the lossless one (continuity, exact)."""
    lam = 0.9
    lossless = ml.emitter(ml.Stack(1.0, AR_FILMS, 3.0 + 0j, 4.0, "mirror"), 0.3, lam, "parallel", dim=dim)
    weak = ml.emitter(ml.Stack(1.0, AR_FILMS, ml.complex_index(3.0, 1e-5, lam), 4.0, "mirror"),
                      0.3, lam, "parallel", dim=dim)
    strong = ml.emitter(ml.Stack(1.0, AR_FILMS, ml.complex_index(3.0, 0.05, lam), 4.0, "mirror"),
                        0.3, lam, "parallel", dim=dim)
    assert weak["efficiency"] == pytest.approx(lossless["efficiency"], rel=2e-3)
    for r in (weak, strong):
        assert r["budget"]["sides"] == 0 and abs(sum(r["budget"].values()) - 1) < 1e-12
        assert 0 < r["budget"]["absorbed"] < 1
    # Absorption only removes light that would otherwise have come back to the top.
    assert strong["efficiency"] < lossless["efficiency"]


def test_far_field_integrates_to_the_top_fraction():
    """The escaped intensity per degree integrates to the top fraction (the same integral on
    another grid: midpoint rule over 1-degree bins)."""
    angles = np.linspace(-89.95, 89.95, 1800)
    stack = ml.Stack(1.0, AR_FILMS, 3.0 + 0j, 0.8, "mirror")
    for dim in (2, 3):
        r = ml.emitter(stack, 0.3, 0.9, "parallel", dim=dim, angles=np.abs(angles if dim == 2 else angles[900:]))
        total = np.sum(r["intensity"]) * 0.1
        assert total == pytest.approx(r["efficiency"], rel=1e-4), f"dim {dim}: far field {total} vs top"
