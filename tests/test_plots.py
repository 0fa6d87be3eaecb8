"""Every picture renders headless, labels its axes with units and uses the package's own colour scales.

Common practice for engineering figures (units on every axis) rather than an outside reference;
the numbers drawn are checked elsewhere. Each figure is caught as it is saved.
"""

import io

import matplotlib.figure
import numpy as np
import pytest

from conftest import make_case
from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from postprocess import farfield, plots

UNITS = ("(µm)", "(degrees)", "fraction of the emitted power", "(dB below peak)", "(top / emitted)",
         "% of the emitted power per degree", "(no unit)", "(1/cm)", "(fraction of the period)")

CASE = make_case(light={"band": 0.2, "samples": 3}, chip={"index": 2.4},
                 surface={"pattern": "grating", "period": 0.8, "fill": 0.5, "height": 0.2},
                 emitter={"depth": 0.6, "orientation": "out-of-plane"})


@pytest.fixture
def saved(monkeypatch):
    figures = []
    original = matplotlib.figure.Figure.savefig

    def catch(self, *args, **kwargs):
        figures.append(self)
        return original(self, *args, **kwargs)

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", catch)
    return figures


def _summary():
    eff = 0.2
    return {"wavelengths": [0.9, 1.0, 1.1], "efficiency_spectrum": [0.18, 0.2, 0.21], "efficiency": eff,
            "budget": {"top": eff, "bottom": 0.5, "sides": 0.3, "absorbed": -0.001},
            "farfield": {"angle": farfield.ANGLES.tolist(), "intensity": farfield.lambertian(eff).tolist(),
                         "lambertian": farfield.lambertian(eff).tolist()}}


def _check_axes(figure):
    for ax in figure.axes:
        labels = [ax.get_xlabel(), ax.get_ylabel()]
        if ax.get_label() == "<colorbar>":
            labels = [ax.get_ylabel() or ax.get_xlabel()]
        for label in labels:
            if label:
                assert any(unit in label for unit in UNITS), f"axis label without a unit: {label!r}"
        for image in ax.images + [c for c in ax.collections if hasattr(c, "get_cmap") and c.get_array() is not None]:
            assert image.get_cmap().name.startswith("outcouple_"), image.get_cmap().name


def test_every_picture(saved, tmp_path):
    case = parse_case(CASE)
    layout = make_layout(case)
    s = _summary()
    x0, x1, y0, y1 = -2.0, 2.0, -1.0, 1.0
    yy, xx = np.mgrid[y0:y1:40j, x0:x1:80j]
    field_map = {"magnitude": np.exp(-(xx ** 2 + (yy + 0.6) ** 2)), "extent": (x0, x1, y0, y1), "component": "ez",
                 "wavelength": 1.0}
    calls = [
        (plots.plot_structure, (layout, case.emitter.x), {}),
        (plots.plot_field_map, (field_map, layout.chip_polygon, (0.0, -0.6)), {}),
        (plots.plot_farfield, (s["farfield"],), {"reference": s["farfield"], "collection": 30.0}),
        (plots.plot_budget, ([("FDTD", s["budget"]), ("exact", s["budget"])],), {}),
        (plots.plot_spectra, ([("FDTD", s)],), {}),
        (plots.plot_sweep, ({"keys": ["surface.period", "surface.height"], "mode": "grid",
                             "axes": {"surface.period": np.array([0.6, 0.8]), "surface.height": np.array([0.1, 0.2, 0.3])},
                             "efficiency": np.full((2, 3), 0.2), "flat_baseline": np.full((2, 3), 0.1)},), {}),
        (plots.plot_thinning, ({"thickness": [1.0, 10.0, 100.0], "flat": [0.2, 0.2, 0.15], "texture": [0.8, 0.7, 0.4],
                                "randomising": [0.9, 0.8, 0.5], "rays_thickness": [1.0, 100.0], "rays": [0.5, 0.3],
                                "rays_error": [0.01, 0.01]},), {"title": "thinning"}),
    ]
    for draw, args, kwargs in calls:
        buffer = io.BytesIO()
        draw(*args, buffer, **kwargs)
        assert buffer.getvalue()[:8] == b"\x89PNG\r\n\x1a\n" and len(buffer.getvalue()) > 10000, draw.__name__
        _check_axes(saved[-1])
    assert len(saved) == len(calls)
    # A file name works as well as a file object.
    plots.plot_budget([("FDTD", s["budget"])], tmp_path / "budget.png")
    assert (tmp_path / "budget.png").stat().st_size > 5000


def test_key_labels_carry_units():
    assert plots.key_label("surface.period") == "surface.period (µm)"
    assert plots.key_label("chip.alpha") == "chip.alpha (1/cm)"
    assert plots.key_label("chip.index") == "chip.index (no unit)"


def test_structure_picture_has_its_own_look(saved, tmp_path):
    """The package's own scheme, not an FDTD engine's plotting defaults: absorbing layers shaded (no
    hatching), flux lines dashed, emitters as diamonds; one legend entry each."""
    case = parse_case(CASE)
    plots.plot_structure(make_layout(case), case.emitter.x, tmp_path / "s.png")
    ax = saved[-1].axes[0]
    assert not any(patch.get_hatch() for patch in ax.patches)
    lines = {line.get_label(): line for line in ax.lines}
    assert lines["emitter"].get_marker() == "D" and lines["flux lines"].get_linestyle() == "--"
    labels = ax.get_legend_handles_labels()[1]
    assert sorted(labels) == sorted(set(labels)) and "absorbing layers" in labels
