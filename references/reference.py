"""Reference values of a case from the models that need no FDTD.

For a flat case: the exact planar result (:mod:`references.multilayer`)
for the 2-D line emitter the FDTD simulates and for the 3-D point dipole
in the same stack. For a patterned case: the same numbers for the flat
surface of the same stack (a baseline, what the pattern must beat) and the
randomising-surface multi-pass estimate (:mod:`references.closed_forms`),
which is what an ideal scattering texture would reach; both are bounds to
compare against, not predictions of the pattern.

Orientations and wavelengths combine as in the FDTD (docs/conventions.md): every
(orientation, wavelength) emitter carries the same bulk power, so emitted
and escaped powers (fractions of the bulk power) add directly.
"""

import numpy as np

from fdtd_cases.case import CATEGORIES

from . import closed_forms, multilayer


def stack_at(case, wavelength):
    """The case's flat stack at one vacuum wavelength (µm)."""
    chip = case.chip
    films = tuple((multilayer.complex_index(f.index, f.alpha_per_um, wavelength), f.thickness) for f in case.film)
    back_index = None
    if chip.back == "metal":
        back_index = complex(chip.back_index, chip.back_extinction)
    elif chip.back == "substrate":
        back_index = complex(chip.back_index)
    return multilayer.Stack(
        ambient=case.ambient.index, films=films,
        chip=multilayer.complex_index(chip.index, chip.alpha_per_um, wavelength),
        thickness=chip.thickness, back=chip.back, back_index=back_index)


def planar(case, dim=2, modes=False, angles=None):
    """Exact flat-stack budget of the case's emitter, combined over orientations and wavelengths.

    Parameters
    ----------
    dim : {2, 3}
        2: the line emitter (what the FDTD simulates); 3: the point dipole.
    modes : bool
        Compute the guided power from the guided modes (independent check,
        ``balance_error``), see :func:`references.multilayer.emitter`.
    angles : array, optional
        Ambient angles (degrees from the normal, -90 to 90): add ``farfield``,
        the escaped power per degree at those angles.

    Returns
    -------
    dict
        ``efficiency``, ``efficiency_spectrum``, ``wavelengths``,
        ``by_orientation``, ``budget`` (fractions of the emitted power),
        ``emission_factor`` (emitted / bulk power, mean), ``balance_error``
        (largest over the runs, lossless stacks with ``modes``),
        ``guided_modes`` (with ``modes``: effective indices of the guided
        modes at the first wavelength, {"s": [...], "p": [...]}).
    """
    wavelengths = case.light.wavelengths()
    orientations = case.emitter.orientations()
    farfield = angles is not None
    angles = np.asarray(angles, dtype=float) if farfield else None
    emitted = np.zeros((len(orientations), len(wavelengths)))
    parts = {c: np.zeros_like(emitted) for c in CATEGORIES}
    intensity = np.zeros(len(angles)) if farfield else None
    balance, guided = [], {}
    for i, orientation in enumerate(orientations):
        for j, lam in enumerate(wavelengths):
            r = multilayer.emitter(stack_at(case, lam), case.emitter.depth, lam, orientation, dim=dim,
                                   angles=np.abs(angles) if farfield else None, modes=modes)
            emitted[i, j] = r["emission"]
            for c in CATEGORIES:
                parts[c][i, j] = r["budget"][c] * r["emission"]
            if farfield:
                intensity += r["intensity"] * r["emission"]
            if r["balance_error"] is not None:
                balance.append(r["balance_error"])
            if j == 0:
                for pol, found in r["guided_modes"].items():
                    guided[pol] = sorted(set(guided.get(pol, [])) | {round(n, 9) for n in found})
    total = emitted.sum()
    result = {
        "efficiency": float(parts["top"].sum() / total),
        "efficiency_spectrum": (parts["top"].sum(axis=0) / emitted.sum(axis=0)).tolist(),
        "wavelengths": [float(w) for w in wavelengths],
        "by_orientation": {o: float(parts["top"][i].sum() / emitted[i].sum()) for i, o in enumerate(orientations)},
        "budget": {c: float(parts[c].sum() / total) for c in CATEGORIES},
        "emission_factor": float(emitted.mean()),
        "balance_error": max(balance) if balance else None,
        "guided_modes": guided or None,
    }
    if farfield:
        result["farfield"] = {"angle": angles.tolist(), "intensity": (intensity / total).tolist()}
    return result


def back_reflectivity(case, dim, wavelength):
    """Reflectivity of the back side for randomised (Lambertian) light inside the chip.

    Open back: 0 (the light leaves); mirror: 1; metal or substrate: the
    Fresnel reflectance of the chip/back interface (both polarisations
    averaged, total internal reflection included) weighted by cos theta
    (2-D) or cos theta sin theta (3-D).
    """
    back = case.chip.back
    if back == "open":
        return 0.0
    if back == "mirror":
        return 1.0
    theta = np.linspace(0, np.pi / 2, 2001)[:-1] + np.pi / 8000
    stack = stack_at(case, wavelength)
    reflect = sum(multilayer.response(stack, pol, wavelength, theta)["R_down"] for pol in ("s", "p")) / 2
    weight = np.cos(theta) * (np.sin(theta) if dim == 3 else 1)
    return float(np.sum(reflect * weight) / np.sum(weight))


def randomising_bound(case, dim):
    """Multi-pass efficiency of an ideal randomising top over the case's chip and back side.

    The chip's own absorption and the back side's reflectivity set the
    number of passes; films are left out (the randomising surface is taken to
    face the ambient directly). Combined over the wavelengths like the rest.
    """
    values = []
    for lam in case.light.wavelengths():
        values.append(closed_forms.multipass(
            case.chip.index, case.ambient.index, case.chip.alpha_per_um, case.chip.thickness,
            case.emitter.depth, back_reflectivity(case, dim, lam), dim=dim))
    return float(np.mean(values))


def escape_cones(case):
    """Escape-cone closed forms of the chip's orientations, 2-D and 3-D, with and without Fresnel losses."""
    n, na = case.chip.index, case.ambient.index
    name = case.emitter.orientation
    out = {}
    for dim in (2, 3):
        key = "line_emitter" if dim == 2 else "point_dipole"
        out[key] = {"ideal": closed_forms.escape_cone(name, n, na, dim),
                    "with_fresnel": closed_forms.escape_cone(name, n, na, dim, fresnel_losses=True)}
    return out


def case_reference(case, modes=True, angles=None):
    """Everything ``outcouple reference`` reports, JSON-ready (``angles``: see :func:`planar`)."""
    flat = case.surface.pattern == "flat"
    result = planar(case, dim=2, modes=modes, angles=angles)
    result["point_dipole"] = planar(case, dim=3, modes=modes)
    result["kind"] = "exact planar" if flat else "flat-surface baseline of the same stack (a bound, not a prediction)"
    result["method"] = ("exact plane-wave (angular-spectrum) expansion of the emitter's field in the flat stack, "
                        "guided modes from their poles")
    result["escape_cone"] = escape_cones(case)
    if not flat:
        bound = {}
        for dim, key in ((2, "line_emitter"), (3, "point_dipole")):
            bound[key] = randomising_bound(case, dim)
        result["randomising_bound"] = bound
    return result
