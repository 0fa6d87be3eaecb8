"""One period of the chip's top in a Bloch-periodic Meep cell, lit by a plane wave from inside.

The second module of the package that imports Meep (the first is :mod:`fdtd_cases.meep_job`). One
run gives the raw fields from which :mod:`postprocess.redistribution` takes how the texture sends
light arriving from inside the chip at one angle into reflected diffraction orders (back into the
chip) and transmitted ones (into the ambient).

The cell is one period wide (``period``), periodic in x with the Bloch wavenumber
kx = n_chip u / wavelength, where u = sin(theta) is the incidence direction inside the chip
(Meep's ``k_point`` is in cycles per µm). From the bottom up: an absorbing layer in the chip, the
``below`` line, the source line (a current sheet along the whole period with the phase
exp(i 2 pi kx x), Ez for s light, Hz for p light), the ``incident`` line, the texture (its highest
point at y = 0), any films, the ``above`` line in the ambient and an absorbing layer. A run of kind
``"bare"`` fills the whole cell with the chip: its ``below`` line holds the source's own downward
wave (subtracted from a texture run's to leave the reflected light) and its ``incident`` line the
incident power. The chip is lossless here: its bulk absorption belongs to the multi-pass model.

The absorbing layers are thick, with a low nominal reflection, because diffraction orders travel
close to grazing: Meep's PML reflects R0^cos(theta) of a wave at theta, R0 being its nominal
normal-incidence reflection (``R_asymptotic``).

Every object is built over three periods with ``ensure_periodicity=False`` (with a ``k_point`` Meep
1.25 otherwise copies objects one cell over, and an object reaching outside the cell then fills it),
and the run checks the chip's and the ambient's epsilon before it starts.
"""

import cmath
import math
import time

import meep as mp
import numpy as np

from . import geometry
from .attenuation import d_conductivity
from .meep_job import _MEEP_COMPONENT, check_epsilon, chip_objects
from .periodic_cell import (MAX_PERIODS, PML_R0, SAVED_FIELDS, cell_layout, periodic_resolution, pulse_width,
                            tiled_polyline)

SOURCE = {"s": "ez", "p": "hz"}
"""Source component of each polarisation (saved components: ``periodic_cell.SAVED_FIELDS``)."""


def _line(sim, components, freq, y, period):
    return sim.add_dft_fields([_MEEP_COMPONENT[c] for c in components], [freq], center=mp.Vector3(0, y),
                              size=mp.Vector3(period, 0), yee_grid=True)


def run_incidence(case, period, resolution, wavelength, u, pol, kind="texture", decay=1e-9):
    """Run one plane wave of direction ``u`` = sin(theta) in the chip onto one period of the top.

    Parameters
    ----------
    case : fdtd_cases.case.Case
        Its chip index, ambient index, surface and films.
    period : float
        Width of the cell, µm (the pattern's period, or the supercell).
    resolution : float
        Grid points per µm (made exact per period by :func:`periodic_resolution`).
    wavelength : float
        Vacuum wavelength, µm.
    u : float
        sin(theta) of the incident wave inside the chip, -1 < u < 1.
    pol : {"s", "p"}
    kind : {"texture", "bare"}
        The structure, or the chip filling the whole cell (see the module text).
    decay : float
        Stop rule of the DFT fields.

    Returns
    -------
    dict
        ``lines``: name -> {component: complex array of Yee samples along the period} for the lines
        ``below``, ``incident`` and ``above`` (the latter two in texture runs: only those that are
        used); ``resolution``, ``cells``, ``kx`` (cycles per µm), ``time_steps``, ``wall_time``,
        ``meep_version``.
    """
    started = time.perf_counter()
    mp.verbosity(0)
    cells, resolution = periodic_resolution(period, resolution)
    n_chip, n_amb = case.chip.index, case.ambient.index
    film_thickness = sum(f.thickness for f in case.film)
    polyline = tiled_polyline(case.surface, period)
    height = -geometry.deepest_point(polyline)
    y = cell_layout(height, film_thickness, wavelength, resolution)
    cell_y = y["cell_y"]
    chip = mp.Medium(index=n_chip)
    if kind == "bare":
        objects, ambient = [], chip
    else:
        polygon = geometry.chip_polygon(polyline, y["y_bottom"] - 1.0)
        objects, ambient = chip_objects(case.surface, polygon, chip, 1.0 / resolution), mp.Medium(index=n_amb)
        bottom = 0.0
        for film in case.film:  # mp.inf in z (DEVELOPERS.md: a 2-D block of zero z size moves its faces)
            objects.append(mp.Block(center=mp.Vector3(0, bottom + film.thickness / 2),
                                    size=mp.Vector3(mp.inf, film.thickness, mp.inf),
                                    material=mp.Medium(index=film.index,
                                                       D_conductivity=d_conductivity(film.alpha_per_um, film.index))))
            bottom += film.thickness
    freq = 1.0 / wavelength
    kx = n_chip * u * freq
    component, saved = SOURCE[pol], SAVED_FIELDS[pol]

    def bloch(p):
        return cmath.exp(2j * math.pi * kx * p.x)

    width = pulse_width(kx, freq, period, (n_chip, n_amb))  # the same pulse for both kinds: subtracted
    source = mp.Source(mp.GaussianSource(freq, fwidth=width), component=_MEEP_COMPONENT[component],
                       center=mp.Vector3(0, y["source"]), size=mp.Vector3(period, 0), amp_func=bloch)
    sim = mp.Simulation(
        cell_size=mp.Vector3(period, cell_y), geometry_center=mp.Vector3(0, (y["y_top"] + y["y_bottom"]) / 2),
        resolution=resolution, k_point=mp.Vector3(kx), ensure_periodicity=False, geometry=objects, force_complex_fields=True,
        default_material=ambient, sources=[source],
        boundary_layers=[mp.PML(y["pml"], direction=mp.Y, R_asymptotic=PML_R0)])
    sim.init_sim()
    _check_epsilon(sim, y, n_chip, n_amb if kind == "texture" else n_chip)
    names = ("below", "incident") if kind == "bare" else ("below", "above")
    monitors = {name: _line(sim, saved, freq, y[name], period) for name in names}
    crossing = n_chip * cell_y
    limit = 10.0 / width + MAX_PERIODS / freq
    sim.run(until_after_sources=mp.stop_when_dft_decayed(tol=decay, minimum_run_time=crossing,
                                                         maximum_run_time=limit))
    lines = {name: {c: np.asarray(sim.get_dft_array(obj, _MEEP_COMPONENT[c], 0)) for c in saved}
             for name, obj in monitors.items()}
    return {"lines": lines, "resolution": float(resolution), "cells": int(cells), "kx": float(kx),
            "time_steps": int(sim.fields.t), "stopped_by_decay": bool(sim.meep_time() < limit),
            "meep_version": mp.__version__, "wall_time": time.perf_counter() - started}


def _check_epsilon(sim, y, n_chip, n_top):
    """The chip is below the texture and the ambient above it (guards the periodicity trap)."""
    check_epsilon(sim, (((0.0, y["source"]), n_chip, "chip"), ((0.0, y["above"]), n_top, "ambient")),
                  "the periodic cell was not built as laid out")
