"""Pictures (matplotlib, headless): structure, field, far field, budget, spectra and sweeps.

Every function writes a PNG to ``path``: a file name or a binary file object
(the HTML report embeds them from memory). The colour scales are the
package's own: ``FIELD_SCALE`` for field magnitudes (dark slate through teal
to sand, read in decibels) and ``MAP_SCALE`` for efficiency maps.
"""

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.colors import LinearSegmentedColormap  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402
import numpy as np  # noqa: E402

from fdtd_cases.case import CATEGORIES  # noqa: E402

CHIP_COLOUR = "#c9b27c"
AMBIENT_COLOUR = "#eef4f8"
MONITOR_COLOUR = "#1f5f8b"
EMITTER_COLOUR = "#b3261e"
"""Curves of the other pictures (FDTD, rays, cuts)."""

# The structure picture has a look of its own: absorbing layers as a shaded violet band (no
# hatching), flux lines dashed amber, emitters green diamonds edged in black.
ABSORBER_COLOUR = "#6d5a9c"
FLUX_LINE_COLOUR = "#c8730a"
EMITTER_MARK = {"marker": "D", "color": "#0b7a5c", "mec": "black", "mew": 0.6, "ms": 6}
FILM_COLOURS = ("#7fb3a6", "#a6c98f", "#d9a0b8")
SUBSTRATE_COLOUR = "#9fa8c7"
REFERENCE_COLOUR = "#3b3b3b"
LAMBERT_COLOUR = "#8a8a8a"
BUDGET_COLOURS = {"top": "#2e8b57", "bottom": "#6b7fa8", "sides": "#d9a441", "absorbed": "#a04b4b"}

FIELD_SCALE = LinearSegmentedColormap.from_list(
    "outcouple_field", ["#0d1b2a", "#1b3a4b", "#14746f", "#52b69a", "#d9ed92", "#f4e3b2", "#fffaf0"])
MAP_SCALE = LinearSegmentedColormap.from_list(
    "outcouple_map", ["#1d2d44", "#3e5c76", "#748cab", "#c9b27c", "#f0ebd8"])


def plot_structure(layout, emitter_x, path, title=""):
    """The chip polygon, absorbing layers, monitor lines and emitters, to a PNG file."""
    fig, ax = plt.subplots(figsize=(8, 3.6), dpi=120)
    x0, x1 = -layout.cell_x / 2, layout.cell_x / 2
    y0, y1 = layout.y_cell_bottom, layout.y_cell_top
    ax.add_patch(plt.Rectangle((x0, y0), x1 - x0, y1 - y0, color=AMBIENT_COLOUR, zorder=0))
    poly = layout.chip_polygon.copy()
    poly[:, 1] = np.maximum(poly[:, 1], y0)
    ax.fill(poly[:, 0], poly[:, 1], color=CHIP_COLOUR, zorder=1, label="chip")
    for i, (y_low, y_high, _, _) in enumerate(layout.films):
        ax.fill_between([x0, x1], y_low, y_high, color=FILM_COLOURS[i % len(FILM_COLOURS)], zorder=2,
                        label=f"film {i + 1}")
    if layout.substrate_y is not None:
        ax.fill_between([x0, x1], y0, layout.substrate_y, color=SUBSTRATE_COLOUR, zorder=2, label="substrate")
    if layout.mirror_y is not None:
        ax.fill_between([x0, x1], y0, layout.mirror_y, color="#7a7a7a", zorder=2, label="mirror")
    p = layout.pml
    rects = ((x0, y0, p, y1 - y0), (x1 - p, y0, p, y1 - y0), (x0, y1 - p, x1 - x0, p)) + \
        (((x0, y0, x1 - x0, p),) if layout.bottom_pml else ())
    for i, rect in enumerate(rects):
        ax.add_patch(plt.Rectangle(rect[:2], rect[2], rect[3], color=ABSORBER_COLOUR, alpha=0.22, linewidth=0,
                                   zorder=3, label="absorbing layers" if i == 0 else None))
    xs, yt, yb = layout.x_side, layout.y_top, layout.y_bottom
    ax.plot([-xs, xs, xs, -xs, -xs], [yt, yt, yb, yb, yt], color=FLUX_LINE_COLOUR, lw=1.2, ls="--", zorder=4,
            label="flux lines")
    for x in emitter_x:
        xl, xr, yl, yh = layout.contour_box(x)
        ax.plot([xl, xr, xr, xl, xl], [yh, yh, yl, yl, yh], color=FLUX_LINE_COLOUR, lw=0.8, ls="--", zorder=4)
        ax.plot([x], [-layout.depth], zorder=5, ls="none", label="emitter" if x == emitter_x[0] else None,
                **EMITTER_MARK)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.set_xlabel("x (µm)")
    ax.set_ylabel("y (µm)")
    ax.set_title(title or "structure")
    ax.legend(loc="lower right", fontsize=7, framealpha=0.9)
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def plot_spectra(series, path, reference=None):
    """Efficiency against wavelength for several runs: ``series`` is [(label, summary), ...]."""
    fig, ax = plt.subplots(figsize=(6, 4), dpi=120)
    markers = ["o", "s", "^", "D"]
    for i, (label, summary) in enumerate(series):
        ax.plot(summary["wavelengths"], summary["efficiency_spectrum"], marker=markers[i % 4], label=label)
        ref = summary.get("reference")
        if ref:
            ax.plot(ref["wavelengths"], ref["efficiency_spectrum"], ls="--", color="k", lw=1,
                    label=f"{label}: exact planar")
    ax.set_xlabel("vacuum wavelength (µm)")
    ax.set_ylabel("extraction efficiency (top / emitted)")
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def plot_comparison(key, values, scale, fdtd, rays, errors, differs, path, title=""):
    """FDTD and ray-optics efficiency against a swept parameter, in units of the chip wavelength.

    ``scale`` is the wavelength in the chip (µm); points where the two
    differ by more than the tolerance are ringed.
    """
    x = np.asarray(values) / scale
    fig, ax = plt.subplots(figsize=(6.4, 4), dpi=120)
    ax.plot(x, fdtd, marker="o", color=MONITOR_COLOUR, label="full wave (FDTD)")
    ax.errorbar(x, rays, yerr=2 * np.asarray(errors), marker="s", color=EMITTER_COLOUR, capsize=3,
                label="ray optics (2 standard errors)")
    bad = np.asarray(differs, dtype=bool)
    if bad.any():
        ax.scatter(x[bad], np.asarray(fdtd)[bad], s=220, facecolors="none", edgecolors="#e0a100", linewidths=1.6,
                   label="differ by more than the tolerance", zorder=5)
    ax.set_xlabel(f"{key} / wavelength in the chip (no unit)")
    ax.set_ylabel("extraction efficiency (top / emitted)")
    ax.set_title(title or f"ray optics against full wave: {key}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


_KEY_UNITS = {"period": "µm", "height": "µm", "depth": "µm", "thickness": "µm", "width": "µm", "wavelength": "µm",
              "band": "µm", "x": "µm", "rms": "µm", "correlation": "µm", "alpha": "1/cm",
              "index": "no unit", "back_index": "no unit", "back_extinction": "no unit",
              "fill": "fraction of the period"}


def key_label(key):
    """An axis label for a case key: the dotted key and its unit, e.g. 'surface.period (µm)'."""
    unit = _KEY_UNITS.get(key.rsplit(".", 1)[-1], "as in the case file")
    return f"{key} ({unit})"


def plot_sweep(data, path, title=""):
    """Efficiency against one swept key (line, with the flat-surface baseline dashed) or two (map).

    ``data`` is :func:`postprocess.sweep_file.read_sweep`'s output.
    """
    keys, eff, flat = data["keys"], np.asarray(data["efficiency"]), np.asarray(data["flat_baseline"])
    fig, ax = plt.subplots(figsize=(6.4, 4.2), dpi=120)
    if data["mode"] == "grid" and len(keys) == 2:
        x, y = data["axes"][keys[1]], data["axes"][keys[0]]
        mesh = ax.pcolormesh(x, y, eff, shading="nearest", cmap=MAP_SCALE)
        fig.colorbar(mesh, ax=ax, label="extraction efficiency (top / emitted)")
        ax.set_xlabel(key_label(keys[1]))
        ax.set_ylabel(key_label(keys[0]))
        ax.set_title(title or f"extraction efficiency (flat baseline {flat.min():.3f} to {flat.max():.3f})")
    else:
        x = data["axes"][keys[0]]
        ax.plot(x, eff.reshape(len(x), -1), marker="o", color=MONITOR_COLOUR, label="FDTD")
        ax.plot(x, flat.reshape(len(x), -1), ls="--", color="k", lw=1, label="flat surface, exact")
        ax.set_xlabel(key_label(keys[0]))
        ax.set_ylabel("extraction efficiency (top / emitted)")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8)
        ax.set_title(title or f"extraction efficiency against {keys[0]}")
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def plot_field_map(field_map, chip_polygon, emitter, path, title="", span_db=40.0):
    """Magnitude of the field along z at one wavelength, in dB below its peak, with the chip outline.

    Parameters
    ----------
    field_map : dict
        ``magnitude`` (ny, nx), ``extent`` (x0, x1, y0, y1) µm, ``component``
        ("ez" or "hz") and ``wavelength`` µm, as saved by ``run --fields``.
    chip_polygon : (N, 2) array
        Outline of the chip, µm.
    emitter : (float, float)
        Emitter position, µm.
    span_db : float
        Range of the colour scale below the peak, dB.
    """
    magnitude = np.asarray(field_map["magnitude"], dtype=float)
    level = 20 * np.log10(np.maximum(magnitude, 1e-30) / magnitude.max())
    x0, x1, y0, y1 = field_map["extent"]
    fig, ax = plt.subplots(figsize=(8, 3.4), dpi=120)
    image = ax.imshow(level, origin="lower", extent=(x0, x1, y0, y1), cmap=FIELD_SCALE, vmin=-span_db, vmax=0,
                      interpolation="bilinear", aspect="equal")
    poly = np.vstack([chip_polygon, chip_polygon[:1]])
    ax.plot(poly[:, 0], poly[:, 1], color="#ffffff", lw=0.8, alpha=0.8)
    ax.plot([emitter[0]], [emitter[1]], ls="none", **{**EMITTER_MARK, "mec": "white"})
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_xlabel("x (µm)")
    ax.set_ylabel("y (µm)")
    name = {"ez": "|Ez|", "hz": "|Hz|"}.get(field_map["component"], field_map["component"])
    fig.colorbar(image, ax=ax, label=f"{name} (dB below peak)", shrink=0.85)
    ax.set_title(title or f"{name} at {field_map['wavelength']:.4g} µm (white line: chip surface)")
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def _half_polar():
    """A figure with a polar axis over -90..90 degrees, zero at the top (the surface normal)."""
    fig = plt.figure(figsize=(6.4, 4.2), dpi=120)
    ax = fig.add_subplot(projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    ax.set_thetamin(-90)
    ax.set_thetamax(90)
    return fig, ax


def _finish_half_polar(fig, ax, path, per, title):
    """Labels, legend and the PNG of a :func:`_half_polar` figure; ``per``: the radius's unit."""
    ax.tick_params(axis="y", labelsize=7)
    ax.set_xlabel(f"angle from the surface normal (degrees); radius: % of the emitted power per {per}",
                  fontsize=8, labelpad=-40)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, 0.02), fontsize=7, ncol=2, frameon=False)
    ax.set_title(title)
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def plot_farfield(farfield, path, reference=None, title="", collection=None):
    """Polar plot of the escaped intensity per degree, with a Lambertian pattern of the same power.

    Parameters
    ----------
    farfield : dict
        ``angle`` (degrees from the normal), ``intensity`` (fraction of the
        emitted power per degree) and ``lambertian`` (the same, for a
        Lambertian pattern of the same escaped power).
    reference : dict, optional
        An exact far field (``angle``, ``intensity``) drawn dashed.
    collection : float, optional
        Half-angle of a collection cone, degrees, drawn as a shaded fan.
    """
    theta = np.radians(np.asarray(farfield["angle"], dtype=float))
    scale = 100.0  # percent per degree reads better than 0.00x
    fig, ax = _half_polar()
    top = max(np.max(farfield["intensity"]), np.max(farfield["lambertian"]),
              np.max(reference["intensity"]) if reference else 0.0) * scale * 1.1
    if collection is not None:
        fan = np.radians(np.linspace(-collection, collection, 50))
        ax.fill_between(fan, 0, top, color="#e8f1e4", zorder=0, label=f"collection cone (+/-{collection:.1f} deg)")
    ax.plot(theta, scale * np.asarray(farfield["intensity"]), color=MONITOR_COLOUR, lw=1.8, label="FDTD")
    if reference:
        ax.plot(np.radians(reference["angle"]), scale * np.asarray(reference["intensity"]), ls="--",
                color=REFERENCE_COLOUR, lw=1.1, label="exact, flat stack")
    ax.plot(theta, scale * np.asarray(farfield["lambertian"]), ls=":", color=LAMBERT_COLOUR, lw=1.4,
            label="Lambertian, same escaped power")
    ax.set_ylim(0, top)
    ax.set_rlabel_position(-72)
    ticks = MaxNLocator(4).tick_values(0, top)
    ax.set_yticks(ticks[(ticks > 0) & (ticks <= top)])
    _finish_half_polar(fig, ax, path, "degree", title or "far field in the ambient")


def plot_hemisphere(farfield, path, collection=None, title=""):
    """The radiance of a point source over the hemisphere, seen from above (orthographic).

    Parameters
    ----------
    farfield : dict
        A point source's far field (:mod:`postprocess.hemisphere`): its ``map``
        (``theta_z``, ``alpha`` in degrees, ``intensity`` per steradian).
    collection : float, optional
        Half-angle of a collection cone, degrees, drawn as a circle.
    """
    m = farfield["map"]
    theta_z, alpha = np.meshgrid(np.radians(m["theta_z"]), np.radians(m["alpha"]), indexing="ij")
    s_x, s_z = np.cos(theta_z) * np.sin(alpha), np.sin(theta_z)
    values = np.clip(np.asarray(m["intensity"], dtype=float), 0, None) * 100.0
    fig, ax = plt.subplots(figsize=(5.6, 4.8), dpi=120)
    mesh = ax.pcolormesh(s_x, s_z, values, shading="gouraud", cmap=MAP_SCALE)
    fig.colorbar(mesh, ax=ax, label="% of the emitted power per steradian")
    ring = np.linspace(0, 2 * np.pi, 200)
    for degrees in (30, 60, 90):
        ax.plot(np.sin(np.radians(degrees)) * np.cos(ring), np.sin(np.radians(degrees)) * np.sin(ring),
                color=AMBIENT_COLOUR, lw=0.6)
        ax.annotate(f"{degrees}°", (np.sin(np.radians(degrees)) * 0.71, np.sin(np.radians(degrees)) * 0.71),
                    color=AMBIENT_COLOUR, fontsize=7)
    if collection is not None:
        r = np.sin(np.radians(collection))
        ax.plot(r * np.cos(ring), r * np.sin(ring), color=EMITTER_COLOUR, lw=1.2, ls="--",
                label=f"collection cone (+/-{collection:.1f}°)")
        ax.legend(loc="lower right", fontsize=7)
    ax.set_aspect("equal")
    ax.set_xlabel("direction cosine along x (across the pattern's lines)")
    ax.set_ylabel("direction cosine along z (along the lines)")
    ax.set_title(title or "far field over the hemisphere, seen from above")
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


def plot_cuts(farfield, path, title=""):
    """The two cuts of a point source's radiance (x-y and z-y planes) with a Lambertian of the same power."""
    cuts = farfield["cuts"]
    theta = np.radians(np.asarray(cuts["angle"], dtype=float))
    fig, ax = _half_polar()
    ax.plot(theta, 100 * np.asarray(cuts["xy"]), color=MONITOR_COLOUR, lw=1.8, label="x-y plane (across the lines)")
    ax.plot(theta, 100 * np.asarray(cuts["zy"]), color=EMITTER_COLOUR, lw=1.4, label="z-y plane (along the lines)")
    ax.plot(theta, 100 * np.asarray(cuts["lambertian"]), ls=":", color=LAMBERT_COLOUR, lw=1.4,
            label="Lambertian, same escaped power")
    _finish_half_polar(fig, ax, path, "steradian", title or "radiance in two planes through the normal")


def plot_budget(rows, path, title=""):
    """Power budget as stacked horizontal bars: ``rows`` is [(label, budget dict), ...]."""
    fig, ax = plt.subplots(figsize=(6.4, 0.9 + 0.55 * len(rows)), dpi=120)
    for i, (label, budget) in enumerate(rows):
        left = 0.0
        for key in CATEGORIES:
            value = max(float(budget[key]), 0.0)  # a tiny negative absorption is the balance error
            ax.barh(i, value, left=left, color=BUDGET_COLOURS[key], edgecolor="white",
                    label=key if i == 0 else None)
            if value > 0.06:
                ax.text(left + value / 2, i, f"{value:.1%}", ha="center", va="center", fontsize=7, color="white")
            left += value
    ax.set_yticks(range(len(rows)), [label for label, _ in rows])
    ax.invert_yaxis()
    ax.set_xlim(0, 1)
    ax.set_xlabel("fraction of the emitted power")
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=4, fontsize=7, frameon=False)
    ax.set_title(title or "where the emitted power goes", pad=18)
    fig.tight_layout()
    fig.savefig(path, format="png")
    plt.close(fig)


THINNING_STYLE = {"flat": ("flat top (exact)", REFERENCE_COLOUR, "-"),
                  "texture": ("texture, full-wave response", MONITOR_COLOUR, "-"),
                  "randomising": ("ideal randomising top", LAMBERT_COLOUR, ":")}


def plot_thinning(curves, path, title=""):
    """Extraction efficiency against chip thickness (log axis): flat top, texture (multi-pass with the
    full-wave response), the same texture in ray optics, and the randomising bound."""
    fig, ax = plt.subplots(figsize=(7, 4.2), dpi=120)
    for key, (label, colour, style) in THINNING_STYLE.items():
        ax.plot(curves["thickness"], curves[key], style, color=colour, lw=1.8, label=label)
    if curves.get("rays"):
        ax.errorbar(curves["rays_thickness"], curves["rays"], yerr=curves["rays_error"], fmt="o", ms=5,
                    color=FLUX_LINE_COLOUR, mfc="white", capsize=2, label="texture, ray optics")
    ax.set_xscale("log")
    ax.set_xlabel("chip thickness (µm)")
    ax.set_ylabel("extraction efficiency (top / emitted)")
    ax.set_ylim(bottom=0)
    ax.grid(True, which="both", alpha=0.25)
    ax.legend(fontsize=8, loc="best")
    if title:
        ax.set_title(title, fontsize=9)
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
