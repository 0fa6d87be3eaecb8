"""A texture's redistribution of light arriving from inside the chip, from periodic-cell runs.

Each run of :mod:`fdtd_cases.meep_periodic` saves the tangential fields along one period on lines
below the source (in the chip) and above the top (in the ambient); a bare run (chip everywhere)
saves the source's own downward wave and the incident wave. Along a line the Bloch fields are a sum
of diffraction orders, f(x) = sum_m f_m exp(i 2 pi (kx + m / period) x); the discrete Fourier
transform of the samples (after removing exp(i 2 pi kx x)) gives each order's amplitude, and the
Poynting flux of the whole line is the sum of the orders' fluxes (Parseval: the cross terms of two
orders integrate to zero over a period), in the sign convention of :mod:`postprocess.flux`:

    P_m = period * Re[conj(Ez_m) Hx_m - conj(Ex_m) Hz_m]      (+y)

The light reflected by the texture is the texture run's field below the source minus the bare run's
(same grid, same source); its orders travel down. The incident power is the bare run's flux through
its incident line. Order m leaves at u_m = (kx + m / period) / (n f) in the chip, or at
sin(angle) = (kx + m / period) / (n_ambient f) in the ambient; only orders with |u| < 1 carry power.

Binning (:mod:`fdtd_cases.angle_bins`): a run stands for its whole incident bin; order m of that bin
covers the bin's u interval shifted by m lambda / (n period), and its power is spread over the
reflected bins (or ambient degrees) in proportion to the overlap, uniformly in u (or in the ambient
sin(angle)).
"""

import numpy as np

from fdtd_cases.angle_bins import bin_edges, far_edges, spread
from fdtd_cases.periodic_cell import SAVED_FIELDS

FLUX_SIGN = {"s": 1.0, "p": -1.0}
"""Sign of conj(E) H in the +y flux of each polarisation's pair (SAVED_FIELDS), as in postprocess.flux."""


def orders(fields, pol, kx, period, cells):
    """(order numbers m, kx of each order in cycles per µm, +y flux of each order) of one line."""
    (e, h), sign = SAVED_FIELDS[pol], FLUX_SIGN[pol]
    x = np.arange(cells) * (period / cells)
    unbloch = np.exp(-2j * np.pi * kx * x)
    E = np.fft.fft(np.asarray(fields[e])[:cells] * unbloch) / cells
    H = np.fft.fft(np.asarray(fields[h])[:cells] * unbloch) / cells
    m = np.fft.fftfreq(cells, d=1.0 / cells).round().astype(int)
    return m, kx + m / period, sign * period * np.real(np.conj(E) * H)


def incidence(bare, texture, pol, period, wavelength, n_chip, n_ambient):
    """The orders of one incident plane wave, as fractions of its power.

    Returns
    -------
    dict
        ``incident`` (the bare run's flux), ``reflected``: list of (m, u in the chip, fraction),
        ``transmitted``: list of (m, sin(angle) in the ambient, fraction), propagating orders only;
        ``absorbed``: 1 minus both sums (numerical error for lossless textures).
    """
    f = 1.0 / wavelength
    kx, cells = bare["kx"], bare["cells"]
    _, _, inc = orders(bare["lines"]["incident"], pol, kx, period, cells)
    power = float(inc.sum())
    diff = {c: np.asarray(texture["lines"]["below"][c]) - np.asarray(bare["lines"]["below"][c])
            for c in SAVED_FIELDS[pol]}
    m, k, down = orders(diff, pol, kx, period, cells)
    reflected = [(int(a), float(b / (n_chip * f)), float(-c / power)) for a, b, c in zip(m, k, down)
                 if abs(b) < n_chip * f]
    m, k, up = orders(texture["lines"]["above"], pol, kx, period, cells)
    transmitted = [(int(a), float(b / (n_ambient * f)), float(c / power)) for a, b, c in zip(m, k, up)
                   if abs(b) < n_ambient * f]
    total = sum(r[2] for r in reflected) + sum(t[2] for t in transmitted)
    return {"incident": power, "reflected": sorted(reflected), "transmitted": sorted(transmitted),
            "absorbed": 1.0 - total}


def mirrored(column):
    """The orders of the mirror image (x -> -x) of an incidence: u, sin(angle) and m change sign."""
    flip = lambda orders: sorted((-m, -u, p) for m, u, p in orders)  # noqa: E731
    return {**column, "reflected": flip(column["reflected"]), "transmitted": flip(column["transmitted"])}


def top_arrays(columns, count, n_chip, n_ambient, wavelength, period):
    """The top's ``reflect``, ``transmit``, ``farfield`` (:mod:`references.multipass`) from the orders
    of one run per incident bin (``columns[i]``: :func:`incidence` of bin i)."""
    edges = bin_edges(count)
    far = np.sin(np.radians(far_edges()))
    shift = wavelength / (n_chip * period)
    reflect = np.zeros((count, count))
    transmit = np.zeros(count)
    farfield = np.zeros((len(far) - 1, count))
    for i, col in enumerate(columns):
        lo, hi = edges[i], edges[i + 1]
        for m, _, power in col["reflected"]:
            reflect[:, i] += power * spread(lo + m * shift, hi + m * shift, edges)
        for m, _, power in col["transmitted"]:
            scale = n_chip / n_ambient
            farfield[:, i] += power * spread((lo + m * shift) * scale, (hi + m * shift) * scale, far)
            transmit[i] += power
    return {"reflect": reflect, "transmit": transmit, "farfield": farfield}


RESPONSE_FORMAT = 1
"""Version of the response file's layout (part of its key: a new layout never reads an old file)."""


def write_response(path, key, tops, facts):
    """Write the texture response file (HDF5, atomically).

    Layout: / attrs ``format`` = "outcouple texture response", ``format_version``, ``key`` (JSON of
    what the response depends on), ``facts`` (JSON: runs, wall time, Meep version); one group per
    wavelength and polarisation, ``/w{index}_{pol}``, attrs ``wavelength``, ``pol``, datasets
    ``reflect`` (bins x bins), ``transmit`` (bins), ``farfield`` (180 degree bins x bins).
    """
    import json

    import h5py

    from .files import atomic_write

    with atomic_write(path) as partial:
        with h5py.File(partial, "w") as f:
            f.attrs["format"] = "outcouple texture response"
            f.attrs["format_version"] = RESPONSE_FORMAT
            f.attrs["key"] = json.dumps(key, sort_keys=True)
            f.attrs["facts"] = json.dumps(facts, sort_keys=True)
            for (i, wavelength, pol), arrays in tops.items():
                g = f.create_group(f"w{i}_{pol}")
                g.attrs["wavelength"], g.attrs["pol"] = wavelength, pol
                for name, values in arrays.items():
                    g.create_dataset(name, data=values)


def read_response(path, key):
    """(tops, facts) of a response file whose key equals ``key``, or None (absent, other key, unreadable)."""
    import json

    import h5py

    try:
        with h5py.File(path, "r") as f:
            if f.attrs.get("format_version") != RESPONSE_FORMAT or json.loads(f.attrs["key"]) != json.loads(
                    json.dumps(key, sort_keys=True)):
                return None
            tops = {}
            for name, g in f.items():
                i = int(name[1:].split("_")[0])
                tops[(i, float(g.attrs["wavelength"]), str(g.attrs["pol"]))] = {n: g[n][()] for n in g}
            return tops, json.loads(f.attrs["facts"])
    except (OSError, KeyError, ValueError):
        return None
