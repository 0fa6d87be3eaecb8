"""Build and run one Meep simulation for one (orientation, position) job.

This is the only module of the package that imports Meep. It reads every
position from a :class:`fdtd_cases.layout.Layout` and returns plain numpy
arrays: the DFT tangential fields on the monitor lines (on Meep's Yee grid),
Meep's own flux through the same lines (only when asked, for cross-checks), the
Fourier transform of the source current, and run facts.

A job of a point source is one node of the integral over the out-of-plane
wavenumber kz (:mod:`fdtd_cases.kz`): the 2-D cell with Bloch phase
exp(i kz z) (Meep's ``k_point = (0, 0, kz)``, all six field components) at
one wavelength. With any ``k_point`` Meep 1.25 copies every object one cell
over in each direction unless ``ensure_periodicity=False``, and an object
that reaches outside the cell (the chip polygon, the mirror and substrate
blocks) then fills the whole cell: it is turned off, and the run checks the
ambient and the chip's epsilon before it starts.
"""

import atexit
import math
import time

import meep as mp
import numpy as np

from .attenuation import d_conductivity

# Meep prints its elapsed time on standard output when the process exits; a job run in the calling
# process (one job, fdtd_cases.runner.run_many) would append it to `run --json`'s output.
atexit.unregister(mp.report_elapsed_time)

COMPONENTS = {
    # orientation: (source component, saved components)
    "parallel": (mp.Ex, ("ex", "ey", "hz")),
    "normal": (mp.Ey, ("ex", "ey", "hz")),
    "out-of-plane": (mp.Ez, ("ez", "hx", "hy")),
}
ALL_COMPONENTS = ("ex", "ey", "ez", "hx", "hy", "hz")
"""Saved at kz not 0, where the two 2-D polarisations couple."""
_MEEP_COMPONENT = {"ex": mp.Ex, "ey": mp.Ey, "ez": mp.Ez, "hx": mp.Hx, "hy": mp.Hy, "hz": mp.Hz}

KZ_MODE = "real/imag"
"""Meep's kz_2d for point-source runs. With real sources and real, isotropic, non-dispersive media
(conductivity included) the fields of one 2-D polarisation can be kept real and those of the other
imaginary, which halves the work: its fluxes equal those of "complex" to 2e-6 (test_fdtd_point.py; the stop
rule ends the two a step apart), 1.45 times faster here."""

KZ_BANDWIDTH = 0.1
"""Frequency width of the source pulse of a kz run, relative to its one frequency. At a fixed kz
the guided modes of a chip have, each, a frequency where their group velocity across the cell
vanishes; there light stays by the emitter and rings until the run-time limit, and a broad pulse
excites it and pollutes the one frequency the run is for. Measured on a 0.35 um n = 2 chip on an
n = 1.5 substrate: with the band's broad pulse (0.5) the runs above kz = k0 hit the limit (27 s
each) and one above every mode emitted 0.080 where nothing can carry power away; with 0.1 they
stop by decay in 2-4 s with the emitted power within 1.5%, and that one emits 0.0012."""

MAX_RUN_CROSSINGS = 60
"""Safety stop: at most this many light crossings of the cell (in chip material) after the pulse."""


def is_master():
    """True on the process that writes files (always, without MPI)."""
    return bool(mp.am_master())


def monitor_lines(layout, x0):
    """Monitor lines of a job: name -> (start, end, outward normal).

    Each line lies on grid lines; ``normal`` is one of "+x", "-x", "+y", "-y"
    and points out of the region the line encloses (the domain, or the
    emitter's contour).
    """
    xs, yt, yb = layout.x_side, layout.y_top, layout.y_bottom
    xl, xr, yl, yh = layout.contour_box(x0)
    return {
        "top": ((-xs, yt), (xs, yt), "+y"),
        "bottom": ((-xs, yb), (xs, yb), "-y"),
        "left": ((-xs, yb), (-xs, yt), "-x"),
        "right": ((xs, yb), (xs, yt), "+x"),
        "contour_top": ((xl, yh), (xr, yh), "+y"),
        "contour_bottom": ((xl, yl), (xr, yl), "-y"),
        "contour_left": ((xl, yl), (xl, yh), "-x"),
        "contour_right": ((xr, yl), (xr, yh), "+x"),
    }


YEE_OFFSET = {"parallel": (0.5, 0.0), "normal": (0.0, 0.5), "out-of-plane": (0.0, 0.0)}
"""Where Meep's 2-D Yee grid keeps each orientation's source component (Ex, Ey, Ez), in cells from
the grid lines at whole multiples of the cell size (the layout puts x = 0 and y = 0 on such lines)."""


def lagrange_weights(t):
    """Weights of the cubic Lagrange interpolation at nodes -1, 0, 1, 2 for a point a fraction ``t`` of
    a cell past node 0 (0 <= t < 1); one node of weight 1 when ``t`` is 0."""
    if abs(t) < 1e-9:
        return {0: 1.0}
    return {-1: -t * (t - 1) * (t - 2) / 6, 0: (t + 1) * (t - 1) * (t - 2) / 2,
            1: -(t + 1) * t * (t - 2) / 2, 2: (t + 1) * t * (t - 1) / 6}


def source_points(orientation, x0, y0, resolution):
    """The emitter as grid sources: a list of (x, y, weight), each on a grid point of its component.

    Meep spreads a point source that falls between two grid points of its component over the two
    with linear weights. Along that axis the current's spectrum is then cos(k dx / 2) times the
    true one: plane waves travelling along the split are weakened, by 4% in power at 16 points per
    wavelength. Measured on a flat n = 2.5 chip at 16 points per chip wavelength: a dipole along y
    split in y came out 1.9% low against the exact answer, and 0.6% high on its own grid point; a
    dipole along z half a cell off its row 1.9% low, on it 0.0%. Cubic Lagrange weights over four
    grid points instead (the Lagrange interpolation formula) leave the spectrum 1 - 0.023 (k dx)^4,
    within 1e-3 of the true one for every wave the chip carries. Weights sum to 1 (the dipole's
    moment) and are symmetric about a point halfway between two grid points (the mirror plane).
    """
    per_axis = []
    for position, offset in zip((x0, y0), YEE_OFFSET[orientation]):
        cells = position * resolution - offset
        base = math.floor(cells + 1e-9)
        per_axis.append([((base + node + offset) / resolution, weight)
                         for node, weight in lagrange_weights(cells - base).items()])
    return [(x, y, wx * wy) for x, wx in per_axis[0] for y, wy in per_axis[1]]


def source_pulse(layout, frequency=None):
    """(centre frequency, width) of the source pulse: the band's, or a kz run's narrow one at ``frequency``."""
    if frequency is None:
        return layout.fcen, layout.fwidth
    return frequency, KZ_BANDWIDTH * frequency


def chip_objects(surface, polygon, material, cell):
    """The chip as Meep objects, built so that Meep 1.25 averages each face well and quickly.

    Meep averages epsilon over each pixel that an object's face crosses (subpixel averaging) and
    does so accurately for blocks; for a prism in Meep 1.25 the averaging around its corners is
    coarser. Measured on a rectangular grating (period 0.8 µm, depth 0.3 µm, fill 0.5, n = 2.5, 1 µm
    light, out-of-plane emitter 1 µm deep, 40 points per µm, 16 per chip wavelength): the prism gave
    0.0925, blocks 0.0969, against 0.0987 converged (bench/validate_textures.py, where a plain Meep
    script extrapolates to the same 0.0987). A grating is therefore built as a block for the chip
    below its grooves and a block per ridge.

    A flat chip is one block: the same efficiency and budget as the rectangle as a prism to eight
    digits (a flat n = 3.3 chip; a chip on a mirror and one on a substrate, three orientations),
    and Meep sets it up five times faster (0.14 s instead of 0.76 s for a 4 µm window).

    Other patterns (sloped or curved faces) are a prism, but only over the textured band: a block
    holds the chip from its bottom to two cells below the pattern's deepest point, and the prism
    (the surface, closed four cells below that point) overlaps it by two cells. Meep's cost of a
    prism grows with its vertex count times the pixels inside its bounding box, and the band's box
    is the pattern's depth instead of the whole chip's. The seam is a face between two objects of
    the same material that never meets the surface, so it averages to the chip's epsilon: measured
    on the triangle above, all three orientations equal the one-prism chip to 6 digits, the run
    7 s instead of 12 s; the sine (48 vertices per period) 100 s instead of 210 s. Cutting the band
    itself into per-period prisms would be faster still, but their seams meet the surface and
    Meep 1.25 does not average such pixels as one face (the sine moved by 0.4 to 0.6%).

    ``cell``: the grid spacing, µm.
    """
    x_min, x_max = polygon[:, 0].min(), polygon[:, 0].max()
    y_bottom = polygon[:, 1].min()
    if surface.pattern == "flat":  # the polygon is a rectangle
        y_top = polygon[:, 1].max()
        return [mp.Block(center=mp.Vector3((x_min + x_max) / 2, (y_bottom + y_top) / 2),
                         size=mp.Vector3(x_max - x_min, y_top - y_bottom, mp.inf), material=material)]
    if surface.pattern != "grating":
        surface_line = polygon[:-2]  # geometry.chip_polygon: the surface, then two bottom corners
        deepest = surface_line[:, 1].min()
        band_bottom, body_top = max(deepest - 4 * cell, y_bottom), deepest - 2 * cell
        objects = []
        if band_bottom > y_bottom:  # else the chip is too thin for a body below the band
            objects.append(mp.Block(center=mp.Vector3((x_min + x_max) / 2, (y_bottom + body_top) / 2),
                                    size=mp.Vector3(x_max - x_min, body_top - y_bottom, mp.inf), material=material))
        band = np.vstack([surface_line, [[x_max, band_bottom], [x_min, band_bottom]]])
        return objects + [mp.Prism(vertices=[mp.Vector3(x, y) for x, y in band], height=mp.inf, material=material)]
    h = surface.height
    objects = [mp.Block(center=mp.Vector3((x_min + x_max) / 2, (y_bottom - h) / 2),
                        size=mp.Vector3(x_max - x_min, -h - y_bottom, mp.inf), material=material)]
    width = surface.fill * surface.period
    for c in np.arange(math.ceil(x_min / surface.period), math.floor(x_max / surface.period) + 1) * surface.period:
        left, right = max(c - width / 2, x_min), min(c + width / 2, x_max)
        if right > left:
            objects.append(mp.Block(center=mp.Vector3((left + right) / 2, -h / 2), size=mp.Vector3(right - left, h, mp.inf),
                                    material=material))
    return objects


def build_simulation(case, layout, orientation, x0, symmetric, kz=None, kz_mode=KZ_MODE, frequency=None):
    """A ready-to-run ``mp.Simulation`` of one job (no monitors yet).

    ``kz``: out-of-plane wavenumber in Meep's units (cycles per µm, kz / 2 pi), or None for a line
    source; ``kz_mode``: Meep's ``kz_2d`` ("real/imag" or "complex"); ``frequency``: the one
    frequency of a kz run (its pulse is then narrow, see ``KZ_BANDWIDTH``).
    """
    chip = mp.Medium(index=case.chip.index,
                     D_conductivity=d_conductivity(case.chip.alpha_per_um, case.chip.index))
    geometry = chip_objects(case.surface, layout.chip_polygon, chip, 1 / layout.resolution)
    for y_low, y_high, index, alpha in layout.films:
        geometry.append(mp.Block(center=mp.Vector3(0, (y_low + y_high) / 2), size=mp.Vector3(mp.inf, y_high - y_low),
                                 material=mp.Medium(index=index, D_conductivity=d_conductivity(alpha, index))))
    if layout.substrate_y is not None:
        depth = layout.substrate_y - layout.y_cell_bottom + 1.0
        geometry.append(mp.Block(center=mp.Vector3(0, layout.substrate_y - depth / 2), size=mp.Vector3(mp.inf, depth),
                                 material=mp.Medium(index=case.chip.back_index)))
    if layout.mirror_y is not None:
        # mp.metal is not averaged: a grid node exactly on its face falls inside or outside by
        # rounding, and outside puts the mirror one cell low (measured: +39% on a thin chip). The
        # face sits a quarter cell above the mirror's grid line so that line is always metal.
        face = layout.mirror_y + 0.25 / layout.resolution
        depth = face - layout.y_cell_bottom + 1.0
        geometry.append(mp.Block(center=mp.Vector3(0, face - depth / 2), size=mp.Vector3(mp.inf, depth),
                                 material=mp.metal))
        boundary = [mp.PML(layout.pml, direction=mp.X), mp.PML(layout.pml, direction=mp.Y, side=mp.High)]
    else:
        boundary = [mp.PML(layout.pml)]
    component = COMPONENTS[orientation][0]
    fcen, fwidth = source_pulse(layout, frequency)
    pulse = mp.GaussianSource(fcen, fwidth=fwidth)
    sources = [mp.Source(pulse, component=component, center=mp.Vector3(x, y), amplitude=weight)
               for x, y, weight in source_points(orientation, x0, -layout.depth, layout.resolution)]
    symmetries = []
    if symmetric:
        symmetries = [mp.Mirror(mp.X, phase=-1 if component == mp.Ex else 1)]
    bloch = {} if not kz else {"k_point": mp.Vector3(0, 0, kz), "ensure_periodicity": False, "kz_2d": kz_mode}
    return mp.Simulation(
        **bloch,
        cell_size=mp.Vector3(layout.cell_x, layout.cell_y),
        geometry_center=mp.Vector3(0, layout.y_center),
        resolution=layout.resolution,
        boundary_layers=boundary,
        geometry=geometry,
        default_material=mp.Medium(index=case.ambient.index),
        sources=sources,
        symmetries=symmetries,
    )


def _region(start, end, resolution):
    """Centre and size of a line, shortened by a hair at both ends.

    The ends lie on grid lines; rounding could put them a hair beyond, and Meep
    would then include one more Yee sample than postprocess.flux expects.
    """
    (x1, y1), (x2, y2) = start, end
    hair = 1e-4 / resolution
    size = mp.Vector3(max(x2 - x1 - 2 * hair, 0), max(y2 - y1 - 2 * hair, 0))
    return mp.Vector3((x1 + x2) / 2, (y1 + y2) / 2), size


def _field_map_region(layout):
    """The cell inside the absorbing layers: centre and size of the field picture."""
    top = layout.y_cell_top - layout.pml
    bottom = layout.y_cell_bottom + (layout.pml if layout.bottom_pml else 0.0)
    return mp.Vector3(0, (top + bottom) / 2), mp.Vector3(2 * layout.x_side, top - bottom)


def _check_epsilon(sim, case, layout, x0):
    """The chip below the emitter and the ambient above the top monitor are where they belong.

    Guards the periodicity trap described in the module docstring (an object filling the cell).
    """
    check_epsilon(sim, (((x0, -layout.depth), case.chip.index, "chip"), ((0.0, layout.y_top), case.ambient.index, "ambient")),
                  "the geometry was not built as laid out")


def check_epsilon(sim, points, what):
    """Raise RuntimeError unless epsilon is index^2 at each ((x, y), index, name) of ``points``."""
    for (x, y), index, name in points:
        eps = sim.get_epsilon_point(mp.Vector3(x, y))
        if abs(eps - index ** 2) > 1e-6 * index ** 2:
            raise RuntimeError(f"the {name} at ({x:g}, {y:g}) has epsilon {eps:g}, not {index ** 2:g}: {what}")


def run_job(case, layout, orientation, x0, symmetric, field_map=False, kz=None, wavelength=None, kz_mode=KZ_MODE,
            cross_check=False):
    """Run one job and return its raw results.

    For a node of a point source, ``kz`` (cycles per µm) and ``wavelength``
    (µm): the fields at that one wavelength only, all six components saved.

    Returns
    -------
    dict
        ``lines``: name -> {start, end, normal, fields: {component: complex
        array (n_wavelengths, n_points)}}; with ``cross_check``, ``meep_flux``:
        name -> outward flux per wavelength from Meep's own monitors on the same
        lines (off by default: they cost time and the answer does not use them);
        ``source_current``: complex
        Fourier transform of the source current per wavelength (Meep's
        ``ldos_Jdata``); ``time_steps``, ``meep_time``, ``wall_time``, ``setup_time`` (building the
        simulation and Meep's set-up: epsilon averaging, chunks), ``step_time`` (the time steps) (s),
        ``grid_points``, ``stopped_by_decay`` (False when the safety limit
        ended the run). With ``field_map``: ``field_map`` = {component,
        wavelength, extent (x0, x1, y0, y1), magnitude (ny, nx)}, the magnitude
        of the field component along z (Ez or Hz) at the centre wavelength
        over the cell inside the absorbing layers, from a DFT.
    """
    mp.verbosity(0)
    started = time.perf_counter()
    frequency = None if kz is None else 1.0 / wavelength
    sim = build_simulation(case, layout, orientation, x0, symmetric, kz=kz, kz_mode=kz_mode, frequency=frequency)
    freqs, saved = list(1.0 / layout.wavelengths), COMPONENTS[orientation][1]
    if kz is not None:
        freqs = [frequency]
    sim.init_sim()  # here rather than in sim.run, so that the set-up is timed on its own
    if kz:  # at kz = 0 the run is the line source's, with one polarisation
        _check_epsilon(sim, case, layout, x0)
        saved = ALL_COMPONENTS
    lines = monitor_lines(layout, x0)
    dft, flux = {}, {}
    for name, (start, end, normal) in lines.items():
        center, size = _region(start, end, layout.resolution)
        dft[name] = sim.add_dft_fields([_MEEP_COMPONENT[c] for c in saved], freqs, center=center, size=size,
                                       yee_grid=True)
        if cross_check:
            weight = -1.0 if normal.startswith("-") else 1.0
            flux[name] = sim.add_flux(freqs, mp.FluxRegion(center=center, size=size, weight=weight))
    picture = None
    if field_map:
        along_z = "ez" if orientation == "out-of-plane" else "hz"  # the component along z of its polarisation
        center, size = _field_map_region(layout)
        picture = (along_z, sim.add_dft_fields([_MEEP_COMPONENT[along_z]], [frequency or layout.fcen], center=center,
                                                size=size))
    crossing = case.chip.index * (layout.cell_x + layout.cell_y)
    limit = 10.0 / source_pulse(layout, frequency)[1] + MAX_RUN_CROSSINGS * crossing
    set_up = time.perf_counter() - started
    sim.run(mp.dft_ldos(freqs), until_after_sources=mp.stop_when_dft_decayed(
        tol=case.grid.decay, minimum_run_time=crossing, maximum_run_time=limit))
    stepping = time.perf_counter() - started - set_up
    out_lines = {}
    for name, (start, end, normal) in lines.items():
        fields = {c: np.array([sim.get_dft_array(dft[name], _MEEP_COMPONENT[c], i) for i in range(len(freqs))])
                  for c in saved}
        out_lines[name] = {"start": start, "end": end, "normal": normal, "fields": fields}
    result = {
        "lines": out_lines,
        "source_current": np.array(sim.ldos_Jdata, dtype=complex),
        "time_steps": int(sim.fields.t),
        "meep_time": float(sim.meep_time()),
        "grid_points": int(layout.grid_points),
        "stopped_by_decay": bool(sim.meep_time() < limit),
        "meep_version": mp.__version__,
        "setup_time": set_up, "step_time": stepping,
    }
    if cross_check:
        result["meep_flux"] = {name: np.array(mp.get_fluxes(obj)) for name, obj in flux.items()}
    if picture is not None:
        along_z, obj = picture
        values = np.abs(sim.get_dft_array(obj, _MEEP_COMPONENT[along_z], 0)).T.astype(np.float32)
        center, size = _field_map_region(layout)
        result["field_map"] = {
            "component": along_z, "wavelength": 1.0 / (frequency or layout.fcen), "magnitude": values,
            "extent": (center.x - size.x / 2, center.x + size.x / 2, center.y - size.y / 2, center.y + size.y / 2)}
    result["wall_time"] = time.perf_counter() - started
    return result
