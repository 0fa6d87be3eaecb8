"""The angular-spectrum far field against exact 2-D beams, and the collection helpers.

Complex-source-point beams are exact solutions (Hankel functions, scipy.special) with a
closed-form far field, so these checks need no FDTD. Sampling follows the runner's Yee grid:
Ez and Hx on the integer points of the line, Ex and Hz on the half-integer ones.
"""

import numpy as np
import pytest
from scipy.special import hankel1

from postprocess import farfield
from postprocess.flux import line_flux

OMEGA = 2 * np.pi  # vacuum wavelength 1 µm

BEAMS = [  # (index, beam parameter b in µm, tilt in degrees)
    (1.0, 0.5, 0.0),
    (1.5, 0.4, 25.0),
]


def _beam(kind, n, b, tilt_deg, height=1.0, resolution=20, half_width=60.0, averaged_rows=False):
    """Exact fields of a complex-source-point beam on the line y = height, Yee-sampled.

    A line source at the complex position r_s = i b (sin(tilt), cos(tilt)) (Deschamps,
    Electron. Lett. 7, 684 (1971); Felsen, Symp. Math. 18, 1976) gives the exact Helmholtz
    solution F = H0(k R), R = sqrt((x - x_s)^2 + (y - y_s)^2): a beam along the tilt whose far
    zone, from the Hankel asymptote with R -> r - i b cos(theta - tilt), carries the power per
    radian (Meep's flux convention Re[conj(E) x H], no 1/2)

        E along z (F = Ez, Hx = (1 / (i omega)) dEz/dy):        (2 / (pi omega)) exp(2 k b cos(theta - tilt))
        H along z (F = Hz, Ex = (i / (omega n^2)) dHz/dy):  (2 / (pi omega n^2)) exp(2 k b cos(theta - tilt))

    The fields fade along the line, so truncating it at +/-60 µm costs little. On this line
    Im(R^2) keeps one sign, so the principal square root is continuous. With ``averaged_rows``
    H is given as Meep gives it, the mean of its values half a cell above and below the line.
    """
    cells = int(round(2 * half_width * resolution))
    dx = 1.0 / resolution
    x = -half_width + dx * np.arange(cells + 1) if kind == "ez" else -half_width - dx / 2 + dx * np.arange(cells + 2)
    k, tilt = n * OMEGA, np.radians(tilt_deg)
    xs, ys = 1j * b * np.sin(tilt), 1j * b * np.cos(tilt)

    def at(y):
        r = np.sqrt((x - xs) ** 2 + (y - ys) ** 2)
        return hankel1(0, k * r), -k * hankel1(1, k * r) * (y - ys) / r

    f, dfdy = at(height)
    if averaged_rows:
        (f_low, d_low), (f_high, d_high) = at(height - dx / 2), at(height + dx / 2)
        h_rows = (d_low + d_high) / 2 if kind == "ez" else (f_low + f_high) / 2
    if kind == "ez":
        hx = h_rows / (1j * OMEGA) if averaged_rows else dfdy / (1j * OMEGA)
        fields, scale = {"ez": f[None, :], "hx": hx[None, :]}, 2 / (np.pi * OMEGA)
    else:
        hz = h_rows if averaged_rows else f
        fields, scale = {"hz": hz[None, :], "ex": (1j / (OMEGA * n ** 2) * dfdy)[None, :]}, 2 / (np.pi * OMEGA * n ** 2)
    exact = scale * np.exp(2 * k * b * np.cos(np.radians(farfield.ANGLES) - tilt))
    return fields, (-half_width, height), (half_width, height), resolution, exact


@pytest.mark.parametrize("kind", ["ez", "hz"])
@pytest.mark.parametrize("n, b, tilt", BEAMS)
def test_beam_pattern_matches_the_exact_far_field(kind, n, b, tilt):
    fields, start, end, resolution, exact = _beam(kind, n, b, tilt)
    pattern = farfield.line_pattern(fields, start, end, [1.0], n)[0]
    strong = exact > 0.3 * exact.max()  # where the beam is: the truncation ripple stays below 1% there
    worst = np.max(np.abs(pattern[strong] / exact[strong] - 1))
    assert worst < 0.02, f"{kind} beam n={n} tilt={tilt}: ours vs exact worst relative difference {worst:.4f}"
    peak = farfield.ANGLES[np.argmax(pattern)]
    assert peak == pytest.approx(tilt, abs=2.0), f"beam tilted {tilt} deg peaks at {peak} deg in ours"


@pytest.mark.parametrize("kind", ["ez", "hz"])
def test_row_averaged_h_is_corrected(kind):
    # H as Meep saves it (the mean of the rows at +-dx/2), on a coarse grid (10 points per
    # wavelength in the index-1.5 ambient) where the averaging matters: with the resolution given
    # the pattern is back on the exact one; without, it is low by about (k dx cos(theta))^2 / 8.
    n, b, tilt = BEAMS[1]
    fields, start, end, resolution, exact = _beam(kind, n, b, tilt, resolution=15, averaged_rows=True)
    strong = exact > 0.3 * exact.max()
    corrected = farfield.line_pattern(fields, start, end, [1.0], n, resolution=resolution)[0]
    worst = np.max(np.abs(corrected[strong] / exact[strong] - 1))
    assert worst < 0.02, f"corrected pattern vs exact: worst relative difference {worst:.4f}"
    raw = farfield.line_pattern(fields, start, end, [1.0], n)[0]
    axis = int(np.argmin(np.abs(farfield.ANGLES - tilt)))
    expected = (n * OMEGA / resolution) ** 2 / 8 * np.cos(np.radians(farfield.ANGLES[axis])) ** 2
    assert 1 - raw[axis] / corrected[axis] == pytest.approx(expected, rel=0.1)


@pytest.mark.parametrize("kind", ["ez", "hz"])
@pytest.mark.parametrize("n, b, tilt", BEAMS)
def test_pattern_integrates_to_the_line_flux(kind, n, b, tilt):
    # Parseval: the far-field integral equals the Poynting flux through the line (integrated by
    # postprocess.flux) when the fields fade at its ends; and both equal the exact pattern's integral.
    fields, start, end, resolution, exact = _beam(kind, n, b, tilt)
    total = farfield.integrate(farfield.line_pattern(fields, start, end, [1.0], n))[0]
    flux = line_flux(fields, start, end, "+y", resolution)[0]
    assert total == pytest.approx(flux, rel=1e-3), f"far-field integral {total:.6f} vs line flux {flux:.6f}"
    assert total == pytest.approx(farfield.integrate(exact), rel=1e-3), "far-field integral vs exact integral"


def test_lambertian_collection_is_sine_of_the_half_angle():
    # Derived here: in 2-D a constant-radiance pattern sends (P / 2) cos(theta) per radian, so
    # the fan |theta| <= h holds P sin(h); half the power lies within 30 degrees.
    pattern = farfield.lambertian(0.4)
    assert np.trapz(pattern, farfield.ANGLES) == pytest.approx(0.4, rel=1e-4)
    for half in (5.0, 23.6, 30.0, 61.3, 90.0):
        got = farfield.collected(farfield.ANGLES, pattern, half)
        assert got == pytest.approx(0.4 * np.sin(np.radians(half)), rel=2e-4), f"fan {half}: {got}"
    assert farfield.half_power_angle(farfield.ANGLES, pattern) == pytest.approx(30.0, abs=0.05)


def test_numerical_aperture_to_half_angle():
    # NA = n sin(theta): 0.5 in air is 30 degrees; 0.75 in an index-1.5 encapsulant also 30.
    from fdtd_cases.case import Collection

    assert Collection(na=0.5).degrees(1.0) == pytest.approx(30.0)
    assert Collection(na=0.75).degrees(1.5) == pytest.approx(30.0)
    assert Collection(half_angle=12.5).degrees(1.5) == 12.5
