"""The exact flat half-space reference against outside sources (no Meep needed)."""

import numpy as np
import pytest
import tmm

from references import closed_forms, planar

from fdtd_cases.case import ORIENTATIONS


@pytest.mark.parametrize("n_chip", [2.5, 3.5])
@pytest.mark.parametrize("pol", ["s", "p"])
def test_fresnel_against_tmm(n_chip, pol):
    """Fresnel reflection and transmission over angle, against the PyPI package tmm (coh_tmm)."""
    theta_c = planar.critical_angle(n_chip, 1.0)
    angles = np.linspace(0, 0.999 * theta_c, 25)
    r_s, r_p, T_s, T_p = planar.fresnel(n_chip, 1.0, angles)
    ours_T, ours_r = (T_s, r_s) if pol == "s" else (T_p, r_p)
    for theta, T, r in zip(angles, ours_T, ours_r):
        ref = tmm.coh_tmm(pol, [n_chip, 1.0], [np.inf, np.inf], theta, 1.0)
        assert T == pytest.approx(ref["T"], abs=1e-10), f"theta={theta}: ours {T} vs tmm {ref['T']}"
        assert abs(r) == pytest.approx(abs(ref["r"]), abs=1e-10), f"theta={theta}: |r| ours {abs(r)} vs tmm"


@pytest.mark.parametrize("n_chip", [2.5, 3.5])
def test_normal_incidence_transmission(n_chip):
    """T = 4 n1 n2 / (n1 + n2)^2 at normal incidence (Born & Wolf, Principles of Optics, sec. 1.5), and tmm."""
    _, _, T_s, T_p = planar.fresnel(n_chip, 1.0, 0.0)
    textbook = 4 * n_chip / (n_chip + 1) ** 2
    ref = tmm.coh_tmm("s", [n_chip, 1.0], [np.inf, np.inf], 0.0, 1.0)["T"]
    assert T_s == pytest.approx(textbook, rel=1e-12) and T_p == pytest.approx(textbook, rel=1e-12)
    assert T_s == pytest.approx(ref, rel=1e-12)


def _depth_averaged(n_chip, orientation, ideal_cone, wavelength=1.0, start=12.0, samples=16):
    """Power-weighted mean over one chip wavelength of depths far below the surface."""
    depths = start + np.linspace(0, wavelength / n_chip, samples, endpoint=False)
    runs = [planar.half_space(n_chip, 1.0, d, wavelength, orientation, ideal_cone=ideal_cone) for d in depths]
    return sum(r["top"] for r in runs) / sum(r["emission"] for r in runs)


@pytest.mark.parametrize("n_chip", [2.5, 3.5])
@pytest.mark.parametrize("orientation", ORIENTATIONS)
def test_thick_limit_without_fresnel_matches_closed_forms(n_chip, orientation):
    """Deep emitter, perfect transmission inside the cone: theta_c/pi, (theta_c +- sin cos)/pi.

    The closed forms are derived in closed_forms.escape_cone's docstring by integrating the bulk
    patterns over the escape cone; here they are evaluated from the formula text directly.
    """
    tc = np.arcsin(1 / n_chip)
    closed = {"out-of-plane": tc / np.pi, "parallel": (tc + np.sin(tc) * np.cos(tc)) / np.pi,
              "normal": (tc - np.sin(tc) * np.cos(tc)) / np.pi}[orientation]
    ours = _depth_averaged(n_chip, orientation, ideal_cone=True)
    assert ours == pytest.approx(closed, rel=5e-3), f"ours {ours:.6f} vs closed form {closed:.6f}"
    assert closed_forms.escape_cone(orientation, n_chip, 1.0, dim=2) == pytest.approx(closed, rel=1e-12)


@pytest.mark.parametrize("orientation", ORIENTATIONS)
def test_thick_limit_with_fresnel_against_tmm(orientation):
    """Deep emitter: interference averages out, leaving the bulk pattern times T(theta) from tmm."""
    n_chip = 3.0
    tc = planar.critical_angle(n_chip, 1.0)
    pol = "s" if orientation == "out-of-plane" else "p"

    # Gauss-Legendre in u with theta = tc (1 - u^2) smooths the square-root edge of T at tc.
    u, w = np.polynomial.legendre.leggauss(200)
    u, w = (u + 1) / 2, w / 2
    theta = tc * (1 - u**2)
    T = np.array([tmm.coh_tmm(pol, [n_chip, 1.0], [np.inf, np.inf], t, 1.0)["T"] for t in theta])
    reference = 2 * np.sum(w * planar.pattern(orientation, theta) * T * 2 * tc * u)
    ours = _depth_averaged(n_chip, orientation, ideal_cone=False)
    assert ours == pytest.approx(reference, rel=5e-3), f"ours {ours:.6f} vs tmm-weighted cone {reference:.6f}"


@pytest.mark.parametrize("orientation", ORIENTATIONS)
@pytest.mark.parametrize("n_chip,depth", [(2.5, 0.05), (2.5, 0.37), (3.5, 0.2), (1.8, 1.3)])
def test_emitted_power_equals_top_plus_bottom(orientation, n_chip, depth):
    """Energy conservation (derived here): emitted power from Im G at the source equals the flux
    up plus the flux of the direct and reflected waves down, two independent integrals."""
    r = planar.half_space(n_chip, 1.0, depth, 0.9, orientation)
    assert r["emission"] == pytest.approx(r["top"] + r["bottom_flux"], rel=1e-8)


@pytest.mark.parametrize("orientation", ORIENTATIONS)
def test_no_interface_gives_half(orientation):
    """Exact: with the ambient index equal to the chip's there is no interface; half the light goes up."""
    r = planar.half_space(2.2, 2.2, 0.4, 1.0, orientation)
    assert r["efficiency"] == pytest.approx(0.5, abs=1e-9) and r["emission"] == pytest.approx(1.0, abs=1e-9)
