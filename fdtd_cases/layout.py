"""The simulated domain derived from a case: grid, cell, monitors, checks.

Everything here is plain numpy: ``outcouple check`` uses it without running
Meep, and the Meep builder reads every position from it, so the preview, the
estimate and the simulation agree. All monitor lines lie on grid lines (the
cell is centred on x = 0 with an even number of cells across, and every
length is a whole number of cells), so saved Yee-grid fields sit at known
positions.

Vertical layout, top to bottom::

    PML (ambient)
    ambient gap                  (AMBIENT_GAP wavelengths above y = 0)
    top monitor   y_top          (TOP_GAP wavelengths above y = 0)
    surface, highest point y = 0
    chip, emitter at y = -depth inside its square flux contour
    bottom monitor y_bottom
    PML (chip material, open back; or substrate below y = -thickness)
    or a perfect mirror at y = -thickness

Films (flat surfaces only) lie on y = 0 and the top monitor and ambient
gap are measured from the top film.

Side monitors run from y_bottom to y_top at x = -width/2 and x = +width/2.
"""

import math
from dataclasses import dataclass, field, replace

import numpy as np

from . import geometry
from .errors import CaseError

TOP_GAP = 0.6
"""Top monitor height above y = 0, in longest vacuum wavelengths."""
AMBIENT_GAP = 1.0
"""Ambient above y = 0 before the absorbing layer, in longest vacuum wavelengths."""
MIN_PPW_ERROR = 8
MIN_PPW_WARN = 12
COURANT = 0.5
"""Meep's default Courant factor: time step = COURANT / resolution."""
UPDATES_PER_SECOND = 9e7
"""Serial Meep 2-D grid-point updates per second measured on the development machine."""
BYTES_PER_POINT = 120
"""Memory per grid point of a 2-D Meep run with PML, measured (peak RSS / points)."""
EXTRA_BYTES = 150e6
"""Memory of a Meep process before the grid (Python, libraries)."""


@dataclass(frozen=True)
class Layout:
    """Derived, grid-aligned description of one case's simulation domain.

    All lengths in µm; ``resolution`` in points per µm.
    """

    resolution: float
    wavelengths: np.ndarray
    width: float
    pml: float
    cell_x: float
    cell_y: float
    y_center: float
    y_top: float
    y_bottom: float
    x_side: float
    contour: float
    depth: float
    pattern_bottom: float
    polyline: np.ndarray = field(repr=False)
    chip_polygon: np.ndarray = field(repr=False)
    mirror_y: float | None
    bottom_pml: bool
    films: tuple
    """(y_low, y_high, index, alpha in 1/µm) of each film, from the chip outward."""
    substrate_y: float | None
    """Top of the substrate half-space (y = -thickness), when the back side is a substrate."""
    symmetric: bool
    points_per_wavelength: dict
    fcen: float
    fwidth: float
    warnings: tuple = ()
    second: "Layout | None" = field(default=None, repr=False)
    """The coarser grid of a two-grid run (``grid.extrapolate``), or None."""

    @property
    def cell(self):
        """(x, y) size of the simulation cell, µm."""
        return self.cell_x, self.cell_y

    @property
    def grid_points(self):
        return int(round(self.cell_x * self.resolution) * round(self.cell_y * self.resolution))

    @property
    def y_cell_bottom(self):
        return self.y_center - self.cell_y / 2

    @property
    def y_cell_top(self):
        return self.y_center + self.cell_y / 2

    def contour_box(self, x0):
        """(x_left, x_right, y_low, y_high) of the flux contour around an emitter at x0."""
        return (snap_down(x0 - self.contour, self.resolution), snap_up(x0 + self.contour, self.resolution),
                snap_down(-self.depth - self.contour, self.resolution), snap_up(-self.depth + self.contour, self.resolution))

    def estimate(self, chip_index):
        """Rough run-time and memory estimate for one job.

        The run lasts the pulse (10 / fwidth in Meep time, two cutoffs of
        five widths) plus about two crossings of the cell at the speed of
        light in the chip; the rates are the measured constants above.
        """
        run_time = 10.0 / self.fwidth + 2 * chip_index * (self.cell_x / 2 + self.cell_y)
        steps = int(run_time * self.resolution / COURANT)
        updates = steps * self.grid_points
        return {
            "time_steps": steps,
            "seconds": updates / UPDATES_PER_SECOND,
            "memory_bytes": EXTRA_BYTES + BYTES_PER_POINT * self.grid_points,
        }


def snap(value, resolution):
    """Nearest grid line to ``value``."""
    return round(value * resolution) / resolution


def snap_up(value, resolution):
    return math.ceil(value * resolution - 1e-9) / resolution


def snap_down(value, resolution):
    return math.floor(value * resolution + 1e-9) / resolution


def whole_cells(count, resolution):
    """(cells, length): ``count`` grid cells, or two or four more, whose length times ``resolution`` is exact.

    Meep 1.25 warns ("grid volume is not an integer number of pixels") on standard error, once per
    run, whenever a cell size times the resolution is not an exact integer in floating point, which
    count / resolution often is not (4.539325842696629 * 89 = 403.99999999999994); one of its
    neighbouring floats usually is, and where none is (404 cells at 89 per µm) 406 cells may be. The
    extra cells widen the domain by one cell per side (the absorbing layers keep their thickness).
    """
    for cells in range(count, count + 64, 2):
        below = above = cells / resolution
        for _ in range(8):
            for length in (below, above):
                if length * resolution == cells:
                    return cells, float(length)
            below, above = np.nextafter(below, 0.0), np.nextafter(above, np.inf)
    return count, count / resolution


def _resolution(case, wavelengths, source, warnings):
    grid = case.grid
    n_max = max(material_indices(case).values())
    lam_min = wavelengths.min()
    if grid.resolution is not None:
        resolution, key = grid.resolution, "grid.resolution"
    else:
        resolution, key = math.ceil(grid.points_per_wavelength * n_max / lam_min), "grid.points_per_wavelength"
    ppw = {name: lam_min * resolution / n for name, n in material_indices(case).items()}
    worst = min(ppw.values())
    if worst < MIN_PPW_ERROR:
        raise CaseError(source, key, f"gives {worst:.1f} points per wavelength in the densest material at "
                        f"{lam_min:g} µm; at least {MIN_PPW_ERROR} are needed (16 or more for about 1% accuracy)")
    if worst < MIN_PPW_WARN:
        warnings.append((key, f"gives only {worst:.1f} points per wavelength in the densest material; "
                              f"below {MIN_PPW_WARN} expect errors of several percent"))
    return resolution, ppw


def material_indices(case):
    """Real index of every material of the FDTD domain, by name."""
    found = {"chip": case.chip.index, "ambient": case.ambient.index}
    for i, film in enumerate(case.film):
        found[f"film[{i}]"] = film.index
    if case.chip.back == "substrate":
        found["substrate"] = case.chip.back_index
    return found


def _films(case, source, resolution, warnings, fdtd=True):
    """Film layers above y = 0 (the FDTD models them on flat surfaces only), bottom to top."""
    if not case.film:
        return ()
    if case.surface.pattern != "flat" and fdtd:
        raise CaseError(source, "film", "films on a patterned surface are not modelled by the FDTD yet; "
                        "'outcouple reference' gives the flat-surface baseline with them")
    layers, y = [], 0.0
    for i, film in enumerate(case.film):
        if film.thickness * resolution < 2:
            warnings.append((f"film[{i}].thickness", f"is {film.thickness:g} µm, fewer than two grid cells "
                                                     f"({2 / resolution:.3g} µm); refine the grid"))
        layers.append((y, y + film.thickness, film.index, film.alpha_per_um))
        y += film.thickness
    return tuple(layers)


def _period(surface):
    return getattr(surface, "period", None) or getattr(surface, "correlation", 0.0)


ESCAPE_ANGLE_CAP = math.radians(75.0)
"""The steepest angle :func:`back_return_reach` follows when the ambient is as dense as the chip."""


def back_return_reach(case):
    """How far from the emitter (µm) light of the escape cone comes back to the top after one
    reflection at the back side; 0 for a chip without a reflecting back.

    A finite chip on a mirror, a substrate or a metal back (the last for the ray tracer, which uses
    the same domain) sends part of the light inside the escape cone
    (sin theta_c = n_ambient / n_chip) back up, after a path of 2 t - d down and up again (t the
    thickness, d the emitter's depth), so it reaches the top up to (2 t - d) tan theta_c away. A
    window narrower than that loses it, and with it the interference it makes with the direct
    light. Measured on a 4 µm GaN layer on sapphire under silicone at 450 nm (reach 5.1 µm, README
    "A real LED, step by step"), the line-source efficiency against the exact solver at window
    widths 3.7, 8, 10.2, 12 and 16 µm: -2.27%, -0.71%, -0.18%, -0.04%, -0.02%. The default width
    takes twice this reach plus one wavelength a side.
    """
    if case.chip.back not in ("mirror", "substrate", "metal") or not math.isfinite(case.chip.thickness):
        return 0.0
    angle = min(math.asin(min(case.ambient.index / case.chip.index, 1.0)), ESCAPE_ANGLE_CAP)
    return (2 * case.chip.thickness - case.emitter.depth) * math.tan(angle)


OPAQUE = 5.0
"""alpha x thickness above which a layer warns: exp(-5) = 0.7% of the light survives one pass."""


def _warn_opaque(case, warnings):
    """Warn where almost nothing survives one pass through the chip or a film (a unit slip, usually)."""
    layers = [("chip", case.chip)] + [(f"film[{i}]", film) for i, film in enumerate(case.film)]
    for name, layer in layers:
        if not math.isfinite(layer.thickness):
            continue
        optical = layer.alpha_per_um * layer.thickness
        if optical > OPAQUE:
            warnings.append((f"{name}.alpha", f"is {layer.alpha:g} /cm over {name}.thickness = {layer.thickness:g} "
                                              f"µm: alpha x thickness = {optical:.3g}, so exp(-{optical:.3g}) = "
                                              f"{math.exp(-optical):.2g} of the light survives one pass; alpha "
                                              "is in 1/cm (a value per metre is 100 times too large)"))


SECOND_GRID = 0.75
"""The second grid of a two-grid run, as a fraction of the resolution (12 of 16 points per wavelength).

Measured with bench/validate_point_two_grids.py: point dipoles under flat surfaces at 12 and 16 points
per wavelength extrapolate to within 1% of the exact 3-D dipole (16 alone: up to 2%), at 1.42 times
the cost of the finer run alone (a 2-D run costs about resolution^3)."""


def at_resolution(case, resolution):
    """The case on one grid of ``resolution`` points per µm (a convergence level, a run's second grid)."""
    grid = case.grid.model_copy(update={"resolution": float(resolution), "extrapolate": False})
    return case.model_copy(update={"grid": grid})


def _second_grid(case, layout, source):
    """The second grid's layout when the case asks for one (``grid.extrapolate``), and any warning.

    Left out with a warning when the default asked for it and the coarser grid would not be valid
    (fewer than MIN_PPW_ERROR points per wavelength, a film thinner than two cells, ...); refused
    when the case file asked for it.
    """
    wanted = case.grid.extrapolate
    if wanted is None:
        wanted = case.emitter.source == "point"
    if not wanted:
        return None, None
    coarse = float(round(layout.resolution * SECOND_GRID))
    try:
        second = make_layout(at_resolution(case, coarse), source=f"{source} (second grid, {coarse:g} points/µm)")
    except CaseError as error:
        if case.grid.extrapolate:
            raise CaseError(source, "grid.extrapolate", f"needs a second grid at {coarse:g} points/µm "
                            f"({SECOND_GRID:g} of the resolution), where {error.key} {error.message}; or "
                            "set grid.extrapolate = false") from None
        return None, ("grid.extrapolate", f"off (one grid): the second grid at {coarse:g} points/µm would not "
                      f"be valid ({error.key} {error.message}); expect the single grid's error")
    return second, None


def make_layout(case, source="case", fdtd=True):
    """Derive the grid-aligned domain of ``case`` and check what needs the grid.

    With ``fdtd=False`` (the ray tracer's use of the same domain) the cases
    only the FDTD cannot model yet (metal backs, films on a pattern) pass.
    A two-grid run (``grid.extrapolate``) carries its second grid's layout as ``second``.

    Raises
    ------
    CaseError
        For an emitter above or too close to the pattern or the back side,
        too few points per wavelength, too thin absorbing layers, or emitter
        positions outside the domain.
    """
    warnings = []
    wavelengths = case.light.wavelengths()
    lam_max = float(wavelengths.max())
    resolution, ppw = _resolution(case, wavelengths, source, warnings)
    cell = 1.0 / resolution
    n_chip = case.chip.index

    pml = case.grid.pml if case.grid.pml is not None else lam_max
    if pml < 0.5 * lam_max:
        raise CaseError(source, "grid.pml", f"is {pml:g} µm; absorbing layers must be at least half the "
                        f"longest wavelength ({0.5 * lam_max:g} µm) thick")
    pml = snap_up(pml, resolution)

    xs = case.emitter.x
    if case.grid.width is not None:
        width = case.grid.width
    else:
        width = (max(8 * lam_max, 4 * _period(case.surface), 2 * (back_return_reach(case) + lam_max))
                 + 2 * max(abs(x) for x in xs))
    half = snap_up(width / 2, resolution)
    width = 2 * half
    _, cell_x = whole_cells(round((width + 2 * pml) * resolution), resolution)

    polyline = geometry.surface_polyline(case.surface, -cell_x / 2 - cell, cell_x / 2 + cell)
    pattern_bottom = geometry.deepest_point(polyline)
    depth = case.emitter.depth
    if -depth >= pattern_bottom:
        raise CaseError(source, "emitter.depth", f"is {depth:g} µm, but the emitter must lie below the deepest "
                        f"point of the pattern ({-pattern_bottom:g} µm below y = 0)")
    clearance = depth + pattern_bottom
    if math.isfinite(case.chip.thickness):
        clearance = min(clearance, case.chip.thickness - depth)

    # The contour must sit in homogeneous chip material with two cells to spare.
    if case.emitter.contour is not None:
        contour, key = case.emitter.contour, "emitter.contour"
    else:
        contour = max(3 * cell, min(lam_max / (2 * n_chip), clearance / 2))
        key = "emitter.depth"
    if contour < 2 * cell:
        raise CaseError(source, "emitter.contour", f"is {contour:g} µm; it must span at least two grid cells "
                        f"({2 * cell:.4g} µm at this resolution)")
    if contour + 2 * cell > clearance:
        raise CaseError(source, key, f"leaves the emitter {clearance:.4g} µm from the nearest interface, too "
                        f"close for its flux contour of half-width {contour:.4g} µm plus two grid cells "
                        f"({contour + 2 * cell:.4g} µm); move the emitter deeper or refine the grid")
    for i, x in enumerate(xs):
        if abs(x) + contour + 2 * cell > half:
            raise CaseError(source, f"emitter.x[{i}]", f"is {x:g} µm, outside the domain: |x| must be at most "
                            f"{half - contour - 2 * cell:.4g} µm (grid.width = {width:g} µm)")

    if case.chip.back == "metal" and fdtd:
        raise CaseError(source, "chip.back", 'is "metal": the FDTD runner does not model metal back sides yet; '
                        "'outcouple reference' gives the exact planar result")
    if case.chip.back == "mirror" and case.emitter.source == "point" and fdtd:
        # Measured with Meep 1.25 on a 0.35 um chip: at kz = 0.935 k0 the fields grew to 1e17; with
        # absorbers instead of PML they stayed finite but power still crossed the mirror.
        raise CaseError(source, "chip.back", 'is "mirror" with emitter.source = "point": the kz runs of a point '
                        "source diverge against the perfect mirror in this Meep version; use a line source, or "
                        "'outcouple reference' and 'outcouple rays' for the point dipole")
    _warn_opaque(case, warnings)
    films = _films(case, source, resolution, warnings, fdtd)
    film_top = films[-1][1] if films else 0.0
    y_top = snap_up(film_top + max(TOP_GAP * lam_max, 2 * cell), resolution)
    y_cell_top = snap_up(film_top + AMBIENT_GAP * lam_max, resolution) + pml
    substrate_y = None
    if case.chip.back == "mirror":
        mirror_y = snap(-case.chip.thickness, resolution)
        if abs(mirror_y + case.chip.thickness) > 1e-6:
            warnings.append(("chip.thickness", f"is not a whole number of grid cells; the mirror sits on the "
                                               f"nearest grid line, {-mirror_y:.4f} µm below y = 0 (a thin chip "
                                               "on a mirror is sensitive to this: choose grid.resolution to fit)"))
        y_bottom = mirror_y + cell
        y_cell_bottom = mirror_y - 2 * cell
        bottom_pml = False
    else:
        mirror_y = None
        if case.chip.back == "substrate":
            substrate_y = -case.chip.thickness
            y_bottom = snap_down(substrate_y - 2 * cell, resolution)
        elif math.isfinite(case.chip.thickness):
            y_bottom = snap(-case.chip.thickness, resolution)
        else:
            below = max(lam_max / (4 * n_chip), 3 * cell)
            y_bottom = snap_down(-depth - contour - below, resolution)
        y_cell_bottom = y_bottom - 2 * cell - pml
        bottom_pml = True
    # An odd number of cells in y would put the cell centre between grid lines.
    if round((y_cell_top - y_cell_bottom) * resolution) % 2:
        y_cell_bottom -= cell
    cells_y = round((y_cell_top - y_cell_bottom) * resolution)
    more, cell_y = whole_cells(cells_y, resolution)
    y_cell_bottom -= (more - cells_y) / resolution  # any extra cells go below, under the monitors
    y_center = snap((y_cell_top + y_cell_bottom) / 2, resolution)
    # Mirror symmetry only where every interface is parallel to an axis. Meep 1.25's averaged epsilon
    # of a sloped polygon is not mirror-symmetric (an off-diagonal term on the plane above an apex,
    # where the two faces tie; differences where grid points lie on a face), so symmetric and full
    # runs of V-grooves differ by 0.15-0.55% (once an x current under an apex even blew up).
    symmetric = case.surface.pattern in ("flat", "grating") and geometry.is_mirror_symmetric(case.surface, polyline)

    feature = _smallest_feature(case.surface)
    if feature is not None and feature < 2 * cell:
        warnings.append(("surface", f"its smallest feature ({feature:.3g} µm) spans fewer than two grid cells "
                                    f"({2 * cell:.3g} µm); refine the grid"))

    f = 1.0 / wavelengths
    fcen = float((f.max() + f.min()) / 2)
    fwidth = float(max(2 * (f.max() - f.min()), 0.5 * fcen))
    layout = Layout(
        resolution=resolution, wavelengths=wavelengths, width=width, pml=pml, cell_x=cell_x,
        cell_y=cell_y, y_center=y_center, y_top=y_top, y_bottom=y_bottom, x_side=half,
        contour=contour, depth=depth, pattern_bottom=pattern_bottom, polyline=polyline,
        chip_polygon=geometry.chip_polygon(polyline, mirror_y if mirror_y is not None else
                                           substrate_y if substrate_y is not None else y_cell_bottom - 1.0),
        mirror_y=mirror_y, bottom_pml=bottom_pml, films=films, substrate_y=substrate_y, symmetric=symmetric, points_per_wavelength=ppw,
        fcen=fcen, fwidth=fwidth, warnings=tuple(warnings),
    )
    if not fdtd:
        return layout
    second, warning = _second_grid(case, layout, source)
    return replace(layout, second=second, warnings=layout.warnings + ((warning,) if warning else ()))


def _smallest_feature(surface):
    if surface.pattern == "grating":
        return min(surface.fill, 1 - surface.fill) * surface.period
    if surface.pattern in ("triangle", "sine"):
        return surface.period / 2
    if surface.pattern == "random":
        return surface.correlation
    return None
