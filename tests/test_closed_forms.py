"""Closed forms (references.closed_forms) against published formulas and independent integrals."""

import math

import numpy as np
import pytest
import tmm
from scipy import integrate

from references import closed_forms as cf
from references import multilayer as ml


def _pattern_3d(orientation, theta):
    """Bulk dipole radiation per steradian (Jackson, Classical Electrodynamics, sec. 9.2: sin^2 of the
    angle to the dipole axis, times 3/(8 pi)); a horizontal dipole averaged over azimuth."""
    if orientation == "normal":
        return 3 / (8 * np.pi) * np.sin(theta) ** 2
    return 3 / (16 * np.pi) * (1 + np.cos(theta) ** 2)


@pytest.mark.parametrize("n_chip", [1.8, 2.5, 3.5])
def test_3d_escape_cone_formulas(n_chip):
    """(1 - cos tc)/2, 1/2 - 3/8 cos tc - 1/8 cos^3 tc (parallel), 1/2 - 3/4 cos tc + 1/4 cos^3 tc
    (normal), as stated in the issue and in Lukosz, JOSA 71, 744 (1981); against a direct
    integration of the dipole patterns over the cone (scipy quad)."""
    tc = math.asin(1 / n_chip)
    c = math.cos(tc)
    stated = {"isotropic": (1 - c) / 2, "parallel": 0.5 - 3 / 8 * c - c ** 3 / 8, "normal": 0.5 - 0.75 * c + 0.25 * c ** 3}
    for orientation, value in stated.items():
        assert cf.escape_cone(orientation, n_chip, 1.0, dim=3) == pytest.approx(value, rel=1e-12)
    for orientation in ("parallel", "normal"):
        direct = integrate.quad(lambda t: 2 * np.pi * _pattern_3d(orientation, t) * np.sin(t), 0, tc)[0]
        assert stated[orientation] == pytest.approx(direct, rel=1e-10)
    assert (2 * stated["parallel"] + stated["normal"]) / 3 == pytest.approx(stated["isotropic"], rel=1e-12)


@pytest.mark.parametrize("n_chip", [3.0, 3.5, 6.0])
def test_textbook_large_index_approximation(n_chip):
    """The textbook 1/(4 n^2) (e.g. Schubert, Light-Emitting Diodes, sec. 5.2) approximates the
    isotropic cone to order 1/n^2 relative."""
    exact = cf.escape_cone("isotropic", n_chip, 1.0, dim=3)
    assert cf.large_index_cone(n_chip) == pytest.approx(exact, rel=0.5 / n_chip ** 2)


@pytest.mark.parametrize("orientation", ["parallel", "normal"])
def test_3d_thick_limit_with_fresnel(orientation):
    """A point dipole deep in a flat half-space (depth-averaged over one chip wavelength, so the
    interference averages out): the exact solver against the cone weighted by tmm's transmission,
    and the closed form with Fresnel losses against the same."""
    n_chip = 3.0
    tc = math.asin(1 / n_chip)
    # Gauss-Legendre in u with theta = tc (1 - u^2) smooths the square-root edge of T at tc.
    u, w = np.polynomial.legendre.leggauss(200)
    u, w = (u + 1) / 2, w / 2
    theta = tc * (1 - u ** 2)
    weight = 2 * np.pi * np.sin(theta) * w * 2 * tc * u
    T = {pol: np.array([tmm.coh_tmm(pol, [n_chip, 1.0], [np.inf, np.inf], t, 1.0)["T"] for t in theta]) for pol in "sp"}
    if orientation == "normal":
        reference = np.sum(weight * 3 / (8 * np.pi) * np.sin(theta) ** 2 * T["p"])
    else:
        reference = np.sum(weight * 3 / (16 * np.pi) * (T["s"] + np.cos(theta) ** 2 * T["p"]))
    assert cf.escape_cone(orientation, n_chip, 1.0, dim=3, fresnel_losses=True) == pytest.approx(reference, rel=1e-4)
    stack = ml.Stack(1.0, (), complex(n_chip), math.inf)
    depths = 15 + np.linspace(0, 1 / n_chip, 12, endpoint=False)
    runs = [ml.emitter(stack, d, 1.0, orientation, dim=3) for d in depths]
    ours = sum(r["efficiency"] * r["emission"] for r in runs) / sum(r["emission"] for r in runs)
    assert ours == pytest.approx(reference, rel=1e-3), f"solver {ours:.6f} vs tmm-weighted cone {reference:.6f}"


@pytest.mark.parametrize("n_chip", [2.0, 3.5])
def test_lambertian_escape(n_chip):
    """Randomised internal light: the fraction inside the cone is sin^2 tc (3-D, Yablonovitch, JOSA
    72, 899 (1982)) or sin tc (2-D, derived here), against the cosine-weighted integrals."""
    tc = math.asin(1 / n_chip)
    three = integrate.quad(lambda t: np.cos(t) * np.sin(t), 0, tc)[0] / 0.5
    two = integrate.quad(np.cos, 0, tc)[0]
    assert cf.lambertian_escape(n_chip, 1.0, dim=3) == pytest.approx(three, rel=1e-12)
    assert cf.lambertian_escape(n_chip, 1.0, dim=2) == pytest.approx(two, rel=1e-12)


@pytest.mark.parametrize("x", [1e-3, 0.2, 1.5])
def test_slab_transmittances(x):
    """Lambertian and isotropic transmittances through an absorbing thickness: 2 E3 and E2 (exponential
    integrals, Abramowitz & Stegun 5.1.4) against direct angle integrals; the 2-D forms likewise."""
    lam3 = integrate.quad(lambda mu: 2 * mu * np.exp(-x / mu), 0, 1)[0]
    iso3 = integrate.quad(lambda mu: np.exp(-x / mu), 0, 1)[0]
    assert cf.lambertian_transmittance(x, 3) == pytest.approx(lam3, rel=1e-9)
    assert cf.isotropic_transmittance(x, 3) == pytest.approx(iso3, rel=1e-9)
    phi = np.linspace(0, np.pi / 2, 20001)[:-1] + np.pi / 80000
    lam2 = np.sum(np.cos(phi) * np.exp(-x / np.cos(phi))) * np.pi / 40000
    iso2 = np.sum(np.exp(-x / np.cos(phi))) * np.pi / 40000 * 2 / np.pi
    assert cf.lambertian_transmittance(x, 2) == pytest.approx(lam2, rel=1e-6)
    assert cf.isotropic_transmittance(x, 2) == pytest.approx(iso2, rel=1e-6)


@pytest.mark.parametrize("dim", [2, 3])
@pytest.mark.parametrize("alpha,R", [(0.0, 1.0), (2e-3, 0.9), (0.05, 0.95), (0.0, 0.0), (0.01, 0.0)])
def test_multipass_equals_the_sum_of_passes(dim, alpha, R):
    """The closed multi-pass sum against following the light pass by pass (the model's own
    definition, summed explicitly until nothing is left), with the round trip computed here from
    the angle integral directly."""
    n, w, d = 3.3, 4.0, 1.5
    tc = math.asin(1 / n)
    p = cf.lambertian_escape(n, 1.0, dim)
    if dim == 3:
        trip = integrate.quad(lambda t: np.cos(t) * np.sin(t) * np.exp(-2 * alpha * w / np.cos(t)), tc, np.pi / 2)[0]
        trip /= np.cos(tc) ** 2 / 2
    else:
        trip = integrate.quad(lambda t: np.cos(t) * np.exp(-2 * alpha * w / np.cos(t)), tc, np.pi / 2)[0]
        trip /= 1 - np.sin(tc)
    arriving = 0.5 * cf.isotropic_transmittance(alpha * d, dim) + \
        0.5 * R * cf.isotropic_transmittance(alpha * (2 * w - d), dim)
    escaped = 0.0
    for _ in range(200000):
        escaped += arriving * p
        arriving *= (1 - p) * R * trip
        if arriving < 1e-15:
            break
    assert cf.multipass(n, 1.0, alpha, w, d, R, dim) == pytest.approx(escaped, rel=1e-9)


@pytest.mark.parametrize("dim", [2, 3])
def test_weak_absorption_limit(dim):
    """R = 1, alpha w -> 0: the full model tends to its weak-absorption form (derived in
    closed_forms), which for large n is Yablonovitch's 1 / (1 + 4 n^2 alpha w) (3-D; JOSA 72,
    899 (1982)) and 1 / (1 + pi n alpha w) (2-D, derived here)."""
    n, w = 3.3, 2.0
    for aw in (1e-5, 1e-4):
        full = cf.multipass(n, 1.0, aw / w, w, w / 2, 1.0, dim)
        limit = cf.weak_absorption_limit(n, 1.0, aw / w, w, dim)
        assert full == pytest.approx(limit, rel=50 * aw), f"alpha w = {aw}: model {full} vs limit {limit}"
    big_n, aw = 30.0, 1e-4
    yablonovitch = 1 / (1 + 4 * big_n ** 2 * aw) if dim == 3 else 1 / (1 + np.pi * big_n * aw)
    assert cf.weak_absorption_limit(big_n, 1.0, aw, 1.0, dim) == pytest.approx(yablonovitch, rel=0.01)
