"""From line fluxes to the power budget and the extraction efficiency.

Rules (docs/conventions.md): the efficiency of one job at one wavelength is
P_top / P_emitted, P_emitted being the outward flux through the closed
contour around the emitter. Jobs and wavelengths are combined power-weighted:
each job's fluxes are divided by the power its emitter would radiate in bulk
chip material, then LEE = sum(P_top) / sum(P_emitted). The budget is
top (escaped), bottom (through the back side), sides (through the lateral
monitors: edge emission and guided light, plus the thin ambient sliver between
the surface and the top monitor) and absorbed (emitted minus the rest), all as
fractions of the emitted power.

Bulk power of a 2-D line current of complex amplitude I (current times
length in z) at angular frequency omega in a homogeneous medium, in Meep's
units (flux Re[conj(E) x H], no factor 1/2; epsilon0 = mu0 = c = 1):

    out-of-plane (J along z):  P0 = omega |I|^2 / 4
    in-plane (J along x or y): P0 = omega |I|^2 / 8

from P = (omega mu / 2) |I|^2 Im G(0) with the 2-D Green's function
G = (i/4) H0(k r), Im G_zz(0) = 1/4 and Im G_xx(0) = 1/8 (the in-plane
projection averages cos^2 over the circle), doubled for Meep's flux
convention; both independent of the medium's index in 2-D. A test checks
these against a bulk Meep run.

A 3-D point dipole of current moment I (current times length) in a
homogeneous medium of index n radiates, in the same units,

    P0 = n omega^2 |I|^2 / (6 pi)

(the textbook dipole power omega^4 n |p|^2 / (12 pi epsilon0 c^3) with
I = -i omega p, doubled for Meep's flux convention; Jackson, Classical
Electrodynamics, eq. 9.24, with the medium's index), whatever the dipole's
direction. Its fluxes are the kz integrals of the 2-D runs' fluxes
(:mod:`fdtd_cases.kz`): P_3D = (k0 / pi) sum_j w_j P_2D(u_j), each run's
fluxes taken per |I|^2 of its own source (all runs share one source pulse).
Tests check this scaling through single kz runs of Meep against the exact power of that kz
(references/kz_spectrum.py, whose bulk part integrates to P0 and whose whole to the exact 3-D
dipole), through whole point runs against the exact 3-D dipole, and through a kz-integrated run
in a homogeneous cell against P0 (emission factor 0.994 combined at 12 points per wavelength).
"""

import numpy as np

from .flux import line_flux

BULK_FACTOR = {"out-of-plane": 0.25, "parallel": 0.125, "normal": 0.125}
CONTOUR = ("contour_top", "contour_bottom", "contour_left", "contour_right")


def bulk_power(orientation, wavelengths, source_current):
    """Power the job's emitter would radiate in bulk material, per wavelength (Meep units)."""
    omega = 2 * np.pi / np.asarray(wavelengths)
    return BULK_FACTOR[orientation] * omega * np.abs(np.asarray(source_current)) ** 2


def bulk_power_3d(index, wavelengths, source_current):
    """Power a point dipole would radiate in bulk material of ``index``, per wavelength (Meep units)."""
    omega = 2 * np.pi / np.asarray(wavelengths)
    return index * omega ** 2 * np.abs(np.asarray(source_current)) ** 2 / (6 * np.pi)


def point_sources(jobs, wavelengths, resolution, index):
    """The point dipoles of a point-source run, one per orientation and position, from its kz nodes.

    Each job is one node (``wavelength``, ``kz``, ``kz_weight``, its lines at
    that wavelength); the result has the shape :func:`summarise` takes:
    ``orientation``, ``x``, ``fluxes`` (per wavelength) and ``bulk``, all per
    |I|^2, plus ``nodes`` (the jobs of each dipole, for run facts).
    """
    wavelengths = np.asarray(wavelengths, dtype=float)
    dipoles = {}
    for job in jobs:
        i = int(np.argmin(np.abs(wavelengths - job["wavelength"])))
        k0 = 2 * np.pi / wavelengths[i]
        scale = job["kz_weight"] * k0 / np.pi / np.abs(np.asarray(job["source_current"])[0]) ** 2
        entry = dipoles.setdefault((job["orientation"], job["x"]), {
            "orientation": job["orientation"], "x": job["x"], "nodes": [],
            "fluxes": {k: np.zeros(len(wavelengths)) for k in ("top", "bottom", "sides", "emitted")},
            "bulk": bulk_power_3d(index, wavelengths, np.ones(len(wavelengths)))})
        for key, value in job_fluxes(job["lines"], resolution).items():
            entry["fluxes"][key][i] += scale * value[0]
        entry["nodes"].append(job)
    return list(dipoles.values())


def job_fluxes(lines, resolution):
    """Outward fluxes of one job, per wavelength: top, bottom, sides, emitted."""
    flux = {name: line_flux(line["fields"], line["start"], line["end"], line["normal"], resolution)
            for name, line in lines.items()}
    return {
        "top": flux["top"],
        "bottom": flux["bottom"],
        "sides": flux["left"] + flux["right"],
        "emitted": sum(flux[name] for name in CONTOUR),
    }


def _budget(top, bottom, sides, emitted, lossless):
    """Fractions of the emitted power; without loss absorbed is exactly 0 (the residual is the balance error)."""
    absorbed = 0.0 if lossless else emitted - top - bottom - sides
    return {"top": top / emitted, "bottom": bottom / emitted, "sides": sides / emitted,
            "absorbed": absorbed / emitted}


def _by(jobs, scaled, key):
    """Efficiency per value of the job field ``key`` (in first-seen order): its jobs' top over emitted, summed."""
    out = {}
    for value in dict.fromkeys(job[key] for job in jobs):
        chosen = [s for s, job in zip(scaled, jobs) if job[key] == value]
        out[value] = float(sum(np.sum(s["top"]) for s in chosen) / sum(np.sum(s["emitted"]) for s in chosen))
    return out


def _positions(jobs, scaled):
    """Over several emitter positions: each position's efficiency (its orientations and wavelengths
    summed over summed, as the whole run) and their spread; None for one position.

    ``mean`` is the plain average of the positions' efficiencies, ``spread`` their standard deviation
    (population), ``min`` and ``max`` the extremes. The run's ``efficiency`` is the sum over sum of
    all jobs, which weights each position by its emitted power (an ensemble of emitters of equal
    intrinsic strength).
    """
    per_x = _by(jobs, scaled, "x")
    if len(per_x) < 2:
        return None
    return position_stats(list(per_x), list(per_x.values()))


def position_stats(xs, values):
    """``positions`` of a summary from each position's efficiency (see :func:`_positions`)."""
    return {"x": [float(x) for x in xs], "efficiency": list(values), "mean": float(np.mean(values)),
            "spread": float(np.std(values)), "min": min(values), "max": max(values)}


def summarise(jobs, wavelengths, lossless):
    """Combine jobs into the reported numbers.

    Parameters
    ----------
    jobs : list of dict
        Each with ``orientation``, ``x``, ``fluxes`` (from :func:`job_fluxes`)
        and ``bulk`` (from :func:`bulk_power`).
    wavelengths : array
        Vacuum wavelengths, µm.
    lossless : bool
        Whether chip and ambient are lossless (then the balance error is reported).

    Returns
    -------
    dict
        The JSON-ready summary (see the README's result reference).
    """
    keys = ("top", "bottom", "sides", "emitted")
    scaled = [{k: job["fluxes"][k] / job["bulk"] for k in keys} for job in jobs]
    total = {k: sum(s[k] for s in scaled) for k in keys}           # per wavelength
    grand = {k: float(np.sum(total[k])) for k in keys}
    budget = _budget(**grand, lossless=lossless)
    residual = grand["emitted"] - grand["top"] - grand["bottom"] - grand["sides"]
    per_job = []
    for s, job in zip(scaled, jobs):
        b = _budget(*(float(np.sum(s[k])) for k in keys), lossless)
        per_job.append({
            "orientation": job["orientation"], "x": job["x"],
            "efficiency": b["top"], "budget": b,
            "emission_factor": float(np.mean(s["emitted"])),
            "efficiency_spectrum": (s["top"] / s["emitted"]).tolist(),
        })
    positions = _positions(jobs, scaled)
    return {
        **({"positions": positions} if positions else {}),
        "efficiency": budget["top"],
        "efficiency_spectrum": (total["top"] / total["emitted"]).tolist(),
        "wavelengths": [float(w) for w in wavelengths],
        "by_orientation": _by(jobs, scaled, "orientation"),
        "budget": budget,
        "balance_error": abs(residual) / grand["emitted"] if lossless else None,
        "emission_factor": grand["emitted"] / (len(jobs) * len(wavelengths)),
        "jobs": per_job,
    }
