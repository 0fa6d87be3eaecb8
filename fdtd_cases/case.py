"""The case model: one pydantic class per table of the TOML case file.

Each table of a case file maps onto one class below with the same key names,
so the README's case reference, the file and the code say the same thing.
Lengths are micrometres, wavelengths are vacuum wavelengths, the chip's
attenuation coefficient ``alpha`` is in 1/cm (the unit of the trade).

Validation of each table on its own happens here (types, signs, allowed
values); reading a file and turning pydantic's errors into messages that
name the key happens in :mod:`fdtd_cases.case_file`; checks that need the derived grid (points per wavelength, the
emitter's clearance from the surface) happen in :mod:`fdtd_cases.layout`.
Nothing deeper in the numerics re-checks input.
"""

import math
from typing import Annotated, Any, Literal, Optional, Union

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, field_validator, model_validator

from .attenuation import per_um

ORIENTATIONS = ("parallel", "normal", "out-of-plane")
"""Directions of the emitting current: along x, along y, along z (docs/conventions.md)."""

ORIENTATION_SETS = {"isotropic": ORIENTATIONS, "in-plane": ("parallel", "out-of-plane")}
"""Orientation names that stand for several directions of equal intrinsic strength: all three, or
the two parallel to the surface (quantum-well emission is mostly in-plane)."""

CATEGORIES = ("top", "bottom", "sides", "absorbed")
"""The power budget's entries, fractions of the emitted power (docs/conventions.md)."""

Length = Annotated[float, Field(gt=0, allow_inf_nan=False)]


class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True)


class Light(_Table):
    """``[light]``: the emission spectrum, sampled in vacuum wavelength.

    Parameters
    ----------
    wavelength : float
        Centre vacuum wavelength, µm.
    band : float
        Full width of the sampled band, µm; 0 means one wavelength.
    samples : int
        Number of wavelengths sampled evenly across the band (1 when ``band``
        is 0; default 9 otherwise).
    """

    wavelength: Length
    band: float = Field(0.0, ge=0, allow_inf_nan=False)
    samples: Optional[Annotated[int, Field(ge=1, le=200)]] = None

    @model_validator(mode="after")
    def _band_fits(self):
        if self.band >= self.wavelength:
            raise ValueError("band must be smaller than the wavelength")
        if self.band == 0 and self.samples not in (None, 1):
            raise ValueError("samples must be 1 when band is 0 (one wavelength)")
        if self.band > 0 and self.samples == 1:
            raise ValueError("samples must be at least 2 when band is above 0")
        return self

    def wavelengths(self):
        """Sampled vacuum wavelengths, µm, ascending."""
        if self.band == 0:
            return np.array([self.wavelength])
        count = self.samples or 9
        half = self.band / 2
        return np.linspace(self.wavelength - half, self.wavelength + half, count)


class Ambient(_Table):
    """``[ambient]``: the lossless medium the light escapes into."""

    index: float = Field(1.0, ge=1.0, le=10.0, allow_inf_nan=False)


class Chip(_Table):
    """``[chip]``: the emitting material below y = 0.

    Parameters
    ----------
    index : float
        Real refractive index.
    alpha : float
        Intensity attenuation coefficient, 1/cm.
    thickness : float
        µm from y = 0 down to the back side; ``inf`` for a half-space.
    back : {"open", "mirror", "metal", "substrate"}
        ``open``: the chip material runs on below (into the absorbing
        boundary); ``thickness`` then only places the bottom monitor.
        ``mirror``: a perfect reflector at y = -thickness. ``metal``: a metal
        half-space of complex index ``back_index`` + i ``back_extinction``
        below y = -thickness. ``substrate``: a lossless half-space of index
        ``back_index`` below y = -thickness.
    back_index : float, optional
        Real part of the index of the metal, or the substrate's index.
    back_extinction : float, optional
        Imaginary part of the metal's index (the extinction coefficient k).
    """

    index: float = Field(ge=1.0, le=10.0, allow_inf_nan=False)
    alpha: float = Field(0.0, ge=0, allow_inf_nan=False)
    thickness: float = Field(math.inf, gt=0)
    back: Literal["open", "mirror", "metal", "substrate"] = "open"
    back_index: Optional[float] = Field(None, gt=0, le=10.0, allow_inf_nan=False)
    back_extinction: Optional[float] = Field(None, gt=0, le=100.0, allow_inf_nan=False)

    @field_validator("thickness")
    def _no_nan(cls, value):
        if math.isnan(value):
            raise ValueError("thickness must be a positive length in µm or inf")
        return value

    @model_validator(mode="after")
    def _back_side(self):
        if self.back != "open" and math.isinf(self.thickness):
            raise ValueError(f'back = "{self.back}" needs a finite thickness')
        if self.back in ("metal", "substrate") and self.back_index is None:
            raise ValueError(f'back = "{self.back}" needs back_index')
        if self.back == "metal" and self.back_extinction is None:
            raise ValueError('back = "metal" needs back_extinction (the k of n + ik)')
        if self.back == "substrate" and self.back_index is not None and self.back_index < 1:
            raise ValueError("back_index of a substrate must be at least 1")
        if self.back in ("open", "mirror") and self.back_index is not None:
            raise ValueError(f'back_index applies only to back = "metal" or "substrate", not "{self.back}"')
        if self.back != "metal" and self.back_extinction is not None:
            raise ValueError(f'back_extinction applies only to back = "metal", not "{self.back}"')
        return self

    @property
    def alpha_per_um(self):
        """Intensity attenuation coefficient in 1/µm (1/cm times 1e-4)."""
        return per_um(self.alpha)


class Film(_Table):
    """``[[film]]``: one thin film on the chip top; films are listed from the chip outward.

    Parameters
    ----------
    index : float
        Real refractive index.
    thickness : float
        µm.
    alpha : float
        Intensity attenuation coefficient, 1/cm.
    """

    index: float = Field(ge=1.0, le=10.0, allow_inf_nan=False)
    thickness: Length
    alpha: float = Field(0.0, ge=0, allow_inf_nan=False)

    @property
    def alpha_per_um(self):
        return per_um(self.alpha)


class Flat(_Table):
    """``pattern = "flat"``: no pattern; the surface is y = 0."""

    pattern: Literal["flat"]


class Grating(_Table):
    """``pattern = "grating"``: rectangular ridges of width ``fill * period``
    centred on x = 0 and every period, grooves ``height`` deep."""

    pattern: Literal["grating"]
    period: Length
    height: Length
    fill: float = Field(0.5, gt=0, lt=1)


class Triangle(_Table):
    """``pattern = "triangle"``: symmetric V-grooves, an apex at x = 0 and
    every period, valleys ``height`` deep."""

    pattern: Literal["triangle"]
    period: Length
    height: Length


class Sine(_Table):
    """``pattern = "sine"``: y = -height/2 (1 - cos(2 pi x / period))."""

    pattern: Literal["sine"]
    period: Length
    height: Length


class Random(_Table):
    """``pattern = "random"``: a Gaussian-correlated random profile.

    Parameters
    ----------
    rms : float
        Root-mean-square height, µm.
    correlation : float
        Correlation length, µm: the autocorrelation of the profile is
        exp(-(dx/correlation)^2).
    seed : int
        Seed of the random generator; the same seed gives the same profile.
    """

    pattern: Literal["random"]
    rms: Length
    correlation: Length
    seed: int = Field(0, ge=0)


class Profile(_Table):
    """``pattern = "profile"``: a user polyline ``points = [[x, y], ...]``
    with x increasing and y <= 0; flat beyond its ends."""

    pattern: Literal["profile"]
    points: list[Annotated[list[float], Field(min_length=2, max_length=2)]] = Field(min_length=2)

    @field_validator("points")
    def _polyline(cls, points):
        xs = [p[0] for p in points]
        ys = [p[1] for p in points]
        if not all(math.isfinite(v) for v in xs + ys):
            raise ValueError("points must be finite numbers")
        if any(b <= a for a, b in zip(xs, xs[1:])):
            raise ValueError("the x values of points must increase strictly")
        if max(ys) > 0:
            raise ValueError("the y values of points must be <= 0 (the chip top is y = 0)")
        return points


Surface = Annotated[Union[Flat, Grating, Triangle, Sine, Random, Profile], Field(discriminator="pattern")]


class Emitter(_Table):
    """``[emitter]``: the buried emitter(s).

    Parameters
    ----------
    depth : float
        µm below y = 0; must lie below the deepest point of the pattern.
    x : list of float
        Lateral positions, µm; one job each (a single number is accepted; a
        sampling table ``{ across = "period", count = N }`` or ``{ span = W,
        count = N }`` is expanded by :mod:`fdtd_cases.case_file`).
    orientation : {"parallel", "normal", "out-of-plane", "isotropic", "in-plane"}
        Direction of the emitting current; ``isotropic`` is all three,
        ``in-plane`` the two parallel to the surface (parallel, out-of-plane).
    contour : float, optional
        Half-width of the square flux contour around the emitter, µm.
    source : {"line", "point"}
        ``line``: a line current along z (the 2-D problem itself); ``point``:
        a 3-D point dipole at each position, integrated over the out-of-plane
        wavenumber (:mod:`fdtd_cases.kz`); the orientation is the dipole's direction.
    """

    depth: Length
    x: list[Annotated[float, Field(allow_inf_nan=False)]] = Field(default=[0.0], min_length=1)
    orientation: Literal["parallel", "normal", "out-of-plane", "isotropic", "in-plane"] = "isotropic"
    contour: Optional[Length] = None
    source: Literal["line", "point"] = "line"

    @field_validator("x", mode="before")
    def _single_number(cls, value):
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return [float(value)]
        return value

    def orientations(self):
        """The job orientations this emitter stands for."""
        return ORIENTATION_SETS.get(self.orientation, (self.orientation,))


class Grid(_Table):
    """``[grid]``: discretisation and the simulated domain.

    Parameters
    ----------
    resolution : float, optional
        Grid points per µm. When absent it is derived from
        ``points_per_wavelength`` in the highest-index material at the
        shortest sampled wavelength.
    points_per_wavelength : float
        Used only when ``resolution`` is absent (default 16).
    pml : float, optional
        Thickness of the absorbing layers (PML), µm; default: the longest
        sampled vacuum wavelength.
    width : float, optional
        Lateral size of the domain inside the absorbing layers, µm; default:
        8 longest wavelengths, at least 4 pattern periods, and for a finite chip on a
        mirror or substrate at least twice its back-side reach plus a wavelength each
        side (``fdtd_cases.layout.back_return_reach``); plus twice the largest abs(x).
    decay : float
        Stop rule: the run ends when the DFT fields change by less than this
        fraction over one period of the highest sampled frequency.
    kz_nodes : int
        Point sources: the least number of Gauss nodes per piece of the
        out-of-plane wavenumber integral (more where the emitter's depth
        makes fringes, :mod:`fdtd_cases.kz`); one 2-D run each, per
        orientation, position and wavelength.
    extrapolate : bool, optional
        Run every job again on a second, coarser grid (:data:`fdtd_cases.layout.SECOND_GRID`
        of the resolution) and report the Richardson extrapolation of the two
        (:mod:`postprocess.convergence`). Default: on for point sources (their
        grid error at 16 points per wavelength is 1 to 2%), off for line sources.
    """

    resolution: Optional[Length] = None
    points_per_wavelength: Length = 16.0
    pml: Optional[Length] = None
    width: Optional[Length] = None
    decay: float = Field(1e-8, gt=0, lt=0.1)
    kz_nodes: Annotated[int, Field(ge=2, le=32)] = 4
    extrapolate: Optional[bool] = None


class Cluster(_Table):
    """``[cluster]``: how ``outcouple sweep --engine slurm`` asks SLURM for resources.

    Parameters
    ----------
    partition : str, optional
    time : str, optional
        Time limit per array task, in SLURM's notation ("00:30:00").
    mem : str, optional
        Memory per task ("2G").
    cpus : int, optional
        CPUs per task (1 for serial Meep).
    extra : list of str
        Further ``#SBATCH`` lines, without the prefix ("--qos=short").
    jobs_per_task : int, optional
        Sweep jobs run one after the other by each array task. Default: one
        task per CPU slot of the partition when the sweep has more jobs than
        slots (``sinfo``), else one job per task; each task's start-up
        (queueing, Python and Meep loading, about 2 s) is then paid once per
        slot instead of once per job. ``time`` is per task.
    mpi_ranks : int
        Above 1: each task runs its jobs with the MPI build of Meep on this
        many processes (the Python that submits must import that build).
    mpi_launch : str
        The launcher, ``{ranks}`` replaced by ``mpi_ranks``.
    """

    partition: Optional[str] = None
    time: Optional[str] = None
    mem: Optional[str] = None
    cpus: Optional[Annotated[int, Field(ge=1, le=1024)]] = None
    extra: list[str] = []
    jobs_per_task: Optional[Annotated[int, Field(ge=1, le=10000)]] = None
    mpi_ranks: Annotated[int, Field(ge=1, le=4096)] = 1
    mpi_launch: str = "mpirun -np {ranks}"


class Collection(_Table):
    """``[collection]``: the cone (in 2-D, the fan) of directions a lens or detector accepts.

    Give one of the two keys; the cone is centred on the surface normal.

    Parameters
    ----------
    na : float, optional
        Numerical aperture in the ambient, n_ambient sin(half-angle); at most
        the ambient index.
    half_angle : float, optional
        Half-angle from the normal, degrees (0 to 90).
    """

    na: Optional[float] = Field(None, gt=0, allow_inf_nan=False)
    half_angle: Optional[float] = Field(None, gt=0, le=90, allow_inf_nan=False)

    @model_validator(mode="after")
    def _one_of(self):
        if (self.na is None) == (self.half_angle is None):
            raise ValueError("give exactly one of na and half_angle")
        return self

    def degrees(self, n_ambient):
        """Half-angle of the cone in degrees (from ``na`` = n_ambient sin(half-angle) when given so)."""
        if self.half_angle is not None:
            return self.half_angle
        return math.degrees(math.asin(self.na / n_ambient))


class Case(_Table):
    """A whole case file."""

    light: Light
    ambient: Ambient = Ambient()
    chip: Chip
    film: list[Film] = []
    surface: Surface = Flat(pattern="flat")
    emitter: Emitter
    grid: Grid = Grid()
    cluster: Cluster = Cluster()
    collection: Optional[Collection] = None
    """Read by the reports only: it does not change what the FDTD computes."""
    sweep: Optional[dict[str, Any]] = None
    """Read by ``outcouple sweep`` (outcouple.sweeps validates it); check and run use the base case."""
    _origin: tuple = PrivateAttr(default=("case", None))
    """(where the case came from, its text as given or None): kept with the results; not a key."""
