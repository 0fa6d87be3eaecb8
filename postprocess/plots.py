"""Pictures (matplotlib, headless): the structure with its monitors, efficiency against wavelength."""

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

CHIP_COLOUR = "#c9b27c"
AMBIENT_COLOUR = "#eef4f8"
MONITOR_COLOUR = "#1f5f8b"
EMITTER_COLOUR = "#b3261e"
FILM_COLOURS = ("#7fb3a6", "#a6c98f", "#d9a0b8")
SUBSTRATE_COLOUR = "#9fa8c7"


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
    for rect in ((x0, y0, p, y1 - y0), (x1 - p, y0, p, y1 - y0), (x0, y1 - p, x1 - x0, p)) + \
            (((x0, y0, x1 - x0, p),) if layout.bottom_pml else ()):
        ax.add_patch(plt.Rectangle(rect[:2], rect[2], rect[3], fill=False, hatch="///", edgecolor="#999999",
                                   linewidth=0, zorder=3))
    xs, yt, yb = layout.x_side, layout.y_top, layout.y_bottom
    ax.plot([-xs, xs, xs, -xs, -xs], [yt, yt, yb, yb, yt], color=MONITOR_COLOUR, lw=1.2, zorder=4,
            label="flux monitors")
    for x in emitter_x:
        xl, xr, yl, yh = layout.contour_box(x)
        ax.plot([xl, xr, xr, xl, xl], [yh, yh, yl, yl, yh], color=MONITOR_COLOUR, lw=0.8, zorder=4)
        ax.plot([x], [-layout.depth], marker="*", color=EMITTER_COLOUR, ms=9, zorder=5,
                label="emitter" if x == emitter_x[0] else None)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.set_xlabel("x (µm)")
    ax.set_ylabel("y (µm)")
    ax.set_title(title or "structure (hatched: absorbing layers)")
    ax.legend(loc="lower right", fontsize=7, framealpha=0.9)
    fig.tight_layout()
    fig.savefig(path)
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
    fig.savefig(path)
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
    ax.set_xlabel(f"{key} / wavelength in the chip")
    ax.set_ylabel("extraction efficiency")
    ax.set_title(title or f"ray optics against full wave: {key}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)


def plot_sweep(data, path, title=""):
    """Efficiency against one swept key (line, with the flat-surface baseline dashed) or two (map).

    ``data`` is :func:`postprocess.collect.read_sweep`'s output.
    """
    keys, eff, flat = data["keys"], np.asarray(data["efficiency"]), np.asarray(data["flat_baseline"])
    fig, ax = plt.subplots(figsize=(6.4, 4.2), dpi=120)
    if data["mode"] == "grid" and len(keys) == 2:
        x, y = data["axes"][keys[1]], data["axes"][keys[0]]
        mesh = ax.pcolormesh(x, y, eff, shading="nearest", cmap="magma")
        fig.colorbar(mesh, ax=ax, label="extraction efficiency")
        ax.set_xlabel(keys[1])
        ax.set_ylabel(keys[0])
        ax.set_title(title or f"extraction efficiency (flat baseline {flat.min():.3f} to {flat.max():.3f})")
    else:
        x = data["axes"][keys[0]]
        ax.plot(x, eff.reshape(len(x), -1), marker="o", color=MONITOR_COLOUR, label="FDTD")
        ax.plot(x, flat.reshape(len(x), -1), ls="--", color="k", lw=1, label="flat surface, exact")
        ax.set_xlabel(keys[0])
        ax.set_ylabel("extraction efficiency")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8)
        ax.set_title(title or f"extraction efficiency against {keys[0]}")
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
