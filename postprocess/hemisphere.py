"""Far field of a point dipole over the hemisphere, from the top lines of its kz runs.

A point run is a set of 2-D runs, each with the Bloch phase exp(i kz z)
(:mod:`fdtd_cases.kz`). Above the top monitor line the ambient (index n,
k = n k0) is homogeneous, so each run's field there is a sum of upward plane
waves exp(i (kx x + ky y + kz z)), ky = sqrt(k^2 - kx^2 - kz^2). With the
transforms F~(kx) of the line fields (:func:`postprocess.farfield.line_transform`)
and Parseval's theorem along x and z, the escaped power of the 3-D dipole is

    P = (1 / 4 pi^2) double integral s(kx, kz) dkx dkz,
    s = Re[conj(Ez~) Hx~] - Re[conj(Ex~) Hz~]

(Meep's flux convention, no factor 1/2; the y component of the plane waves'
Poynting vector). A plane wave (kx, kz) leaves in the direction
s = (kx, ky, kz) / k, and dkx dkz = k^2 s_y dOmega, so the radiant
intensity (power per steradian) is

    I = k^2 s_y s(kx, kz) / (4 pi^2).

Directions are labelled by two angles that suit the runs: theta_z, the
angle out of the x-y plane (sin theta_z = kz / k, fixed by a run's kz), and
alpha, the angle from the normal within the run's own plane of travel
(kx = k cos(theta_z) sin(alpha)); s = (cos theta_z sin alpha, cos theta_z
cos alpha, sin theta_z) and dOmega = cos(theta_z) d theta_z d alpha. The x-y
plane is theta_z = 0 (the cut across the pattern's lines), the z-y plane
alpha = 0 (the cut along them).

Each run gives a whole row of alpha, by direct transform (H corrected for
Meep's row mean, as in :mod:`postprocess.farfield`). Between the runs' rows,
theta_z is interpolated: I is even in kz (the structure is mirror symmetric
in z), and the kz nodes below the ambient's light line are Gauss nodes in
phi with kz = n k0 sin(phi), i.e. in theta_z itself (the first piece of the
kz integral ends at the ambient index), so the rows, their mirror images and
the zeros at grazing incidence along z are interpolated by one polynomial in theta_z (barycentric form; Gauss nodes
are good interpolation points). A second piece below the ambient index (a
substrate of lower index than the ambient) puts a kink inside; the map is then
less accurate there. Nothing in the interpolation depends on a collection
cone, so a cone chosen after the run (``show --na``) is served by the same
saved fields.

From the interpolated hemisphere (a 0.5 degree grid in theta_z and alpha)
come:

* ``intensity``: the power per degree of polar angle theta (from the normal),
  summed over azimuth, from 0 to 90 degrees: its integral is the escaped
  power, and its integral up to a half-angle the power inside that cone
  (``collected``), the same quantity the exact planar solver gives for a
  flat stack;
* the two cuts per steradian, ``xy`` and ``zy``, each from -90 to 90 degrees;
* ``map``: the intensity per steradian on a 3 degree grid of (theta_z, alpha).

All of them are combined over dipoles and wavelengths like the efficiency
(docs/conventions.md): each run's intensity per |I|^2 of its source, divided
by its dipole's bulk power, summed, and divided by the sum of the emitted
powers scaled the same way.
"""

import numpy as np

from .farfield import ANGLES, line_transform

FINE = np.linspace(-90.0, 90.0, 361)
"""The interpolation grid in theta_z and alpha, degrees."""

POLAR = np.linspace(0.0, 90.0, 91)
"""Polar angles of the azimuth-summed pattern, degrees from the normal."""

MAP_STEP = 6
"""Every 6th point of FINE (3 degrees) goes into the reported map."""

_AZIMUTHS = np.linspace(0.0, 2 * np.pi, 181)


def row(fields, start, end, wavelength, u, n_ambient, resolution, alpha=FINE):
    """Radiant intensity of one kz run along its row of directions, per steradian.

    Parameters
    ----------
    fields : dict
        Tangential components of the top line ("ez", "hx", "ex", "hz"; a pair
        may be missing) at the run's one wavelength, each (1, n_samples).
    wavelength : float
        Vacuum wavelength, µm.
    u : float
        kz / k0 of the run, below ``n_ambient``.
    alpha : array
        Angles within the row, degrees.

    Returns
    -------
    numpy.ndarray
        Intensity per steradian at (theta_z = arcsin(u / n_ambient), alpha), in
        Meep's flux units.
    """
    k = n_ambient * 2 * np.pi / wavelength
    cos_z = np.sqrt(1.0 - (u / n_ambient) ** 2)
    a = np.radians(np.asarray(alpha, dtype=float))
    kx = (k * cos_z * np.sin(a))[None, :]
    s_y = cos_z * np.cos(a)
    rows = np.cos(k * s_y / (2 * resolution))  # Meep's H on the line is the mean of two Yee rows
    flux = np.zeros(len(a))
    for e, h, sign, half in (("ez", "hx", 1.0, False), ("ex", "hz", -1.0, True)):
        if e in fields and h in fields:
            e_t = line_transform(np.asarray(fields[e]), start, end, half, kx)[0]
            h_t = line_transform(np.asarray(fields[h]), start, end, half, kx)[0] / rows
            flux += sign * np.real(np.conj(e_t) * h_t)
    return k ** 2 * s_y * flux / (4 * np.pi ** 2)


def interpolate(theta_z, rows, targets=FINE):
    """Rows at the angles ``theta_z`` (degrees, 0 to 90), mirrored to negative angles and
    interpolated to ``targets`` by one polynomial: array (len(targets), row length).

    The intensity vanishes at theta_z = +-90 degrees (grazing along z: s_y = 0, and the plane
    wave's own flux along y vanishes with it), which pins the polynomial beyond the last run."""
    theta_z = np.asarray(theta_z, dtype=float)
    rows = np.asarray(rows, dtype=float)
    order = np.argsort(theta_z)
    zero = np.zeros((1, rows.shape[1]))
    nodes = np.concatenate(([-90.0], -theta_z[order][::-1], theta_z[order], [90.0]))
    values = np.concatenate((zero, rows[order][::-1], rows[order], zero))
    from scipy.interpolate import BarycentricInterpolator  # here: scipy.interpolate takes 0.15 s to load

    return BarycentricInterpolator(np.radians(nodes), values, axis=0)(np.radians(targets))


def polar_pattern(grid):
    """Power per degree of polar angle (summed over azimuth) at POLAR, from I on FINE x FINE."""
    from scipy.interpolate import RegularGridInterpolator  # here: see interpolate

    lookup = RegularGridInterpolator((FINE, FINE), grid)
    theta = np.radians(POLAR)[:, None]
    phi = _AZIMUTHS[None, :]
    s_x, s_y, s_z = np.sin(theta) * np.cos(phi), np.cos(theta) * np.ones_like(phi), np.sin(theta) * np.sin(phi)
    theta_z = np.degrees(np.arcsin(np.clip(s_z, -1, 1)))
    alpha = np.degrees(np.arctan2(s_x, s_y))
    values = lookup(np.stack([theta_z.ravel(), alpha.ravel()], axis=-1)).reshape(theta_z.shape)
    around = np.trapz(values, _AZIMUTHS, axis=1)
    return around * np.sin(np.radians(POLAR)) * np.pi / 180


def lambertian(escaped):
    """A 3-D Lambertian pattern carrying ``escaped``: per degree of polar angle (at POLAR) and per
    steradian (at ANGLES, the same in every plane through the normal)."""
    theta, cut = np.radians(POLAR), np.radians(ANGLES)
    return escaped * np.sin(2 * theta) * np.pi / 180, escaped * np.cos(cut) / np.pi


def far_field(dipoles, wavelengths, resolution, n_ambient):
    """The hemisphere of a point run, combined over dipoles and wavelengths.

    Parameters
    ----------
    dipoles : list of dict
        From :func:`postprocess.budget.point_sources`: ``orientation``,
        ``fluxes`` (per |I|^2), ``bulk`` and ``nodes`` (the kz runs, with
        ``wavelength``, ``kz``, ``lines`` and ``source_current``).

    Returns
    -------
    dict
        ``farfield`` (see the module docstring; ``angle`` and ``intensity``
        are the polar pattern) and ``farfield_closure`` (its integral over the
        escaped power from the fluxes, minus 1).
    """
    wavelengths = np.asarray(wavelengths, dtype=float)
    total = np.zeros((len(FINE), len(FINE)))
    emitted, top = 0.0, 0.0
    by_orientation = {}
    for dipole in dipoles:
        grid = np.zeros_like(total)
        for i, wavelength in enumerate(wavelengths):
            nodes = [n for n in dipole["nodes"] if np.isclose(n["wavelength"], wavelength) and n["kz"] < n_ambient]
            if not nodes:
                continue
            rows = []
            for node in nodes:
                line = node["lines"]["top"]
                current = np.abs(np.asarray(node["source_current"])[0]) ** 2
                rows.append(row(line["fields"], line["start"], line["end"], wavelength, node["kz"], n_ambient,
                                resolution) / current)
            theta_z = np.degrees(np.arcsin([n["kz"] / n_ambient for n in nodes]))
            grid += interpolate(theta_z, rows) / dipole["bulk"][i]
        total += grid
        emitted += float(np.sum(dipole["fluxes"]["emitted"] / dipole["bulk"]))
        top += float(np.sum(dipole["fluxes"]["top"] / dipole["bulk"]))
        own = by_orientation.setdefault(dipole["orientation"], [np.zeros_like(total), 0.0])
        own[0] += grid
        own[1] += float(np.sum(dipole["fluxes"]["emitted"] / dipole["bulk"]))
    intensity = total / emitted
    polar = polar_pattern(intensity)
    escaped = top / emitted
    lambert_polar, lambert_cut = lambertian(escaped)
    every = slice(None, None, 2)  # FINE at 1 degree = ANGLES
    centre = len(FINE) // 2
    coarse = slice(None, None, MAP_STEP)
    return {
        "farfield": {
            "angle": POLAR.tolist(), "intensity": polar.tolist(), "lambertian": lambert_polar.tolist(),
            "cuts": {"angle": ANGLES.tolist(), "xy": intensity[centre, every].tolist(),
                     "zy": intensity[every, centre].tolist(), "lambertian": lambert_cut.tolist()},
            "by_orientation": {o: {"xy": (g / e)[centre, every].tolist(), "zy": (g / e)[every, centre].tolist()}
                               for o, (g, e) in by_orientation.items()},
            "map": {"theta_z": FINE[coarse].tolist(), "alpha": FINE[coarse].tolist(),
                    "intensity": intensity[coarse, coarse].tolist()},
        },
        "farfield_closure": float(np.trapz(polar, POLAR) / escaped - 1) if escaped > 0 else None,
    }
