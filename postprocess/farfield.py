"""Far field from the DFT fields on the top monitor line (angular-spectrum decomposition).

Above the top line the ambient is homogeneous and the light only goes up (the
PML absorbs it), so the field there is a sum of upward plane waves
exp(i (kx x + ky y)), ky = sqrt(k^2 - kx^2), k = n_ambient * omega. A plane
wave of transverse wave number kx leaves at the angle theta from the normal
with kx = k sin(theta); the power per unit kx of the plane-wave spectrum, times
dkx/dtheta = k cos(theta), is the power per radian of far-field angle.

With the spatial Fourier transforms F~(kx) = integral F(x) exp(-i kx x) dx of
the line fields and Parseval's theorem (integral |f|^2 dx = (1/2 pi)
integral |f~|^2 dkx), in Meep's units (flux Re[conj(E) x H], no factor 1/2;
epsilon0 = mu0 = c = 1; mu = 1, epsilon = n^2 in the ambient):

* E along z (out-of-plane emitter): Hx = (ky / omega) Ez for an upward wave,
  S_y = (ky / omega) |Ez~|^2 / (2 pi) per unit kx;
* H along z (in-plane emitters): Ex = -(ky / (omega epsilon)) Hz,
  S_y = (ky / (omega epsilon)) |Hz~|^2 / (2 pi) per unit kx.

The upward amplitude is taken from E and H together, A = (Ez~ + Hx~ omega /
ky) / 2 and B = (Hz~ - Ex~ omega epsilon / ky) / 2, which is exactly the
field of a pure upward wave and, for the fields of a finite line, the same
combination of equivalent electric and magnetic line currents that a
near-to-far transformation (Love's equivalence principle) radiates into the
upper half-space. Multiplied by cos(theta) it has no singularity at grazing
angles:

    P_s(theta) = (n^2 omega / 2 pi) |(cos(theta) Ez~ + Hx~ / n) / 2|^2
    P_p(theta) = (omega / 2 pi) |(cos(theta) Hz~ - n Ex~) / 2|^2

per radian, evaluated at kx = n omega sin(theta). Integrated over theta from
-90 to 90 degrees this equals the Poynting flux through the line whenever the
fields vanish at the line's ends (Parseval); a test checks it against the
flux integral, against Meep's own near-to-far transformation and against the
exact planar solver.

Sample positions on the Yee grid (see :mod:`postprocess.flux`): Ez and Hx at
the N + 1 integer points of the line (trapezoid weights), Ex and Hz at the
half-integer points, of which the N inside the line are used (midpoint
weights).

Meep saves H on the line (Hx, or Hz) as the mean of the two Yee rows half a
cell above and below it. For an upward wave of vertical wave number ky that
mean is cos(ky dx / 2) times the wave's H on the line (derived here: the
rows carry exp(+-i ky dx / 2)), so with ``resolution`` given the H transform
is divided by cos(k cos(theta) dx / 2). Without it the pattern came out low
by close to 1 - (k dx cos(theta))^2 / 8 against Meep's own near-to-far
transformation (0.4% in air at 29 points per µm, 1% in an index-1.5
ambient), which radiates each row from its own height; with it the two agree
to 1e-4..6e-4 (tests/test_farfield_meep.py).
"""

import numpy as np

ANGLES = np.linspace(-90.0, 90.0, 181)
"""Far-field angles, degrees from the surface normal, positive towards +x."""

CLOSURE_WARN = 0.02
"""Far-field integral against the top flux: above this relative difference, reports warn."""


def line_transform(values, start, end, half_integer, kx):
    """Fourier transform along x of Yee samples: (n_wavelengths, n_points) -> (n_wavelengths, n_angles)."""
    (x1, _), (x2, _) = start, end
    count = values.shape[-1]
    if half_integer:
        cells = count - 2
        dx = (x2 - x1) / cells
        x = x1 + (np.arange(cells) + 0.5) * dx
        values, weights = values[..., 1:-1], np.full(cells, dx)
    else:
        cells = count - 1
        dx = (x2 - x1) / cells
        x = x1 + np.arange(count) * dx
        weights = np.full(count, dx)
        weights[[0, -1]] *= 0.5
    # kx depends on the wavelength: (n_wavelengths, n_angles, n_points) in one product.
    phase = np.exp(-1j * kx[:, :, None] * x[None, None, :])
    return np.einsum("wap,wp->wa", phase, values * weights)


def line_pattern(fields, start, end, wavelengths, n_ambient, angles=ANGLES, resolution=None):
    """Power radiated into the ambient per radian of angle, from a top line's DFT fields.

    Parameters
    ----------
    fields : dict
        Component name -> complex array (n_wavelengths, n_samples) on the Yee
        grid: "ez" and "hx" (out-of-plane emitter) or "ex" and "hz" (in-plane
        emitters), as saved by the runner for the top line.
    start, end : (float, float)
        End points of the line, µm (a line along x, outward normal +y).
    wavelengths : array
        Vacuum wavelengths, µm.
    n_ambient : float
        Refractive index of the (lossless) ambient.
    angles : array
        Angles from the normal, degrees, within [-90, 90].
    resolution : float, optional
        Grid points per µm of fields saved by Meep, whose H is the mean of
        the Yee rows at +-dx/2 (corrected, see the module's notes); None for
        fields sampled exactly on the line.

    Returns
    -------
    numpy.ndarray
        (n_wavelengths, n_angles): power per radian, in Meep's flux units.
    """
    omega = 2 * np.pi / np.asarray(wavelengths, dtype=float)
    theta = np.radians(np.asarray(angles, dtype=float))
    kx = n_ambient * omega[:, None] * np.sin(theta)[None, :]
    cos = np.cos(theta)[None, :]
    n = n_ambient
    rows = 1.0 if resolution is None else np.cos(n * omega[:, None] * cos / (2 * resolution))
    if "ez" in fields:
        ez = line_transform(fields["ez"], start, end, False, kx)
        hx = line_transform(fields["hx"], start, end, False, kx) / rows
        amplitude = (cos * ez + hx / n) / 2
        factor = n ** 2 * omega[:, None] / (2 * np.pi)
    else:
        hz = line_transform(fields["hz"], start, end, True, kx) / rows
        ex = line_transform(fields["ex"], start, end, True, kx)
        amplitude = (cos * hz - n * ex) / 2
        factor = omega[:, None] / (2 * np.pi)
    return factor * np.abs(amplitude) ** 2


def integrate(pattern, angles=ANGLES):
    """Integral over angle (trapezoid) of a pattern given per radian: the total power."""
    return np.trapz(pattern, np.radians(np.asarray(angles, dtype=float)), axis=-1)


def lambertian(escaped, angles=ANGLES):
    """A 2-D Lambertian pattern carrying the power ``escaped``, per degree.

    In the plane a Lambertian (constant-radiance) emitter sends power
    proportional to cos(theta) per unit angle; normalised over -90..90 degrees
    the intensity is (escaped / 2) cos(theta) per radian.
    """
    theta = np.radians(np.asarray(angles, dtype=float))
    return escaped / 2 * np.cos(theta) * np.pi / 180


def collected(angles, intensity, half_angle):
    """Power inside the fan |theta| <= half_angle (degrees), from an intensity per degree.

    Only the sampled angles count: a pattern given from 0 to 90 degrees (a
    point dipole's, per degree of polar angle) gives the power inside the
    cone of that half-angle. The intensity is interpolated linearly between the given angles, so the
    edge of the fan need not fall on a sample.
    """
    angles = np.asarray(angles, dtype=float)
    intensity = np.asarray(intensity, dtype=float)
    low, high = max(-half_angle, angles[0]), min(half_angle, angles[-1])
    inside = (angles > low) & (angles < high)
    grid = np.concatenate(([low], angles[inside], [high]))
    values = np.interp(grid, angles, intensity)
    return float(np.trapz(values, grid))


def half_power_angle(angles, intensity):
    """Half-angle (degrees) of the fan about the normal that holds half of the pattern's power.

    A 2-D Lambertian pattern gives 30 degrees (sin(theta) = 1/2).
    """
    angles = np.asarray(angles, dtype=float)
    total = collected(angles, intensity, 90.0)
    if total <= 0:
        return None
    grid = np.linspace(0.0, 90.0, 901)
    inside = np.array([collected(angles, intensity, h) if h > 0 else 0.0 for h in grid])
    return float(np.interp(0.5 * total, inside, grid))
