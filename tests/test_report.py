"""`outcouple report`: one self-contained HTML file, looked at in a real headless browser.

Chromium comes from the OS packages (scripts/chromium_local.sh, run by `make test`); the
rendering tests skip, saying so, only where it is missing. "Looked at" means: the page renders
to a screenshot that is not blank, the sections are in the rendered DOM, and the embedded
figures are drawn (the darkest colour of the package's field scale appears on the page, and
disappears when the figures are removed from the same HTML).
"""

import base64
import json
import re

import numpy as np
import pytest

import browser
from conftest import assert_refused, case_toml, requires_meep, run_cli, small_flat_case

RESULT_SECTIONS = ("case", "grid", "structure", "efficiency", "budget", "farfield", "spectrum", "fields", "cautions")
SWEEP_SECTIONS = ("case", "grid", "sweep", "budget", "farfield", "cautions")
FIELD_DARKEST = (0x0D, 0x1B, 0x2A)
"""First colour of postprocess.plots.FIELD_SCALE: only the field pictures use it."""

requires_chromium = pytest.mark.usefixtures("chromium")
"""conftest's session-scoped fixture: checked before the module's FDTD run is set up."""
pytestmark = [requires_meep, pytest.mark.fdtd]

CASE = case_toml(small_flat_case(emitter={"orientation": "isotropic"}))
SWEEP_CASE = case_toml(small_flat_case(sweep={"emitter.depth": [0.4, 0.6]}))


@pytest.fixture(scope="module")
def result_report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    (folder / "chip.toml").write_text(CASE)
    ran = run_cli("run", "chip.toml", "--fields", "--na", "0.5", "--json", "--quiet", cwd=folder)
    assert ran.returncode == 0, ran.stderr
    made = run_cli("report", "chip.h5", "--na", "0.5", cwd=folder)
    assert made.returncode == 0, made.stderr
    html = folder / "chip.html"
    assert made.stdout.strip() == "chip.html" and html.is_file()
    return html, json.loads(ran.stdout)


def _images(text):
    return re.findall(r'<img alt="[^"]*" src="data:image/png;base64,([A-Za-z0-9+/=]+)">', text)


def test_report_is_self_contained_with_the_numbers(result_report):
    html, summary = result_report
    text = html.read_text(encoding="utf-8")
    assert not re.search(r'(src|href)="(https?:|file:|//)', text), "the report must not load anything"
    images = _images(text)
    # structure, budget, far field, one field picture per orientation (one wavelength: no spectrum plot)
    assert len(images) == 3 + 3
    for data in images:
        assert base64.b64decode(data)[:8] == b"\x89PNG\r\n\x1a\n"
    # The numbers are those of `outcouple run` on the same file (the same analysis, re-run).
    for value in (summary["efficiency"], summary["reference"]["efficiency"], summary["collected"],
                  summary["collection"]["exact"], summary["point_dipole_baseline"], *summary["by_orientation"].values()):
        assert f"{value:.4f}" in text
    for words in ("IEC 62471", "points per wavelength", "far-field closure", "collected within NA 0.500"):
        assert words in text


@requires_chromium
def test_result_report_renders_in_chromium(result_report, tmp_path):
    html, _ = result_report
    dom = browser.rendered_dom(html)
    for section in RESULT_SECTIONS:
        assert f'<section id="{section}">' in dom, f"section {section} missing from the rendered page"
    shot = browser.screenshot(html, tmp_path / "report.png", width=1200, height=9000)
    assert browser.ink_fraction(shot) > 0.05, "the rendered report is (nearly) blank"
    assert _pixels_near(shot, FIELD_DARKEST) > 200, "the field pictures were not drawn"

    stripped = tmp_path / "no_figures.html"
    stripped.write_text(re.sub(r'<img [^>]*>', "", html.read_text(encoding="utf-8")), encoding="utf-8")
    bare = browser.screenshot(stripped, tmp_path / "bare.png", width=1200, height=9000)
    assert _pixels_near(bare, FIELD_DARKEST) == 0
    assert browser.ink_fraction(bare) < browser.ink_fraction(shot) / 2


def _pixels_near(png, colour, tol=6):
    from matplotlib.image import imread

    rgb = np.round(imread(png)[..., :3] * 255)
    return int(np.sum(np.all(np.abs(rgb - np.array(colour)) <= tol, axis=-1)))


@requires_chromium
def test_sweep_report_renders_in_chromium(tmp_path):
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP_CASE)
    out = tmp_path / "sw"
    assert run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path).returncode == 0
    made = run_cli("report", out, "--na", "0.4")
    assert made.returncode == 0, made.stderr
    html = out / "report.html"
    text = html.read_text(encoding="utf-8")
    assert len(_images(text)) == 3  # sweep plot, budget, far field
    assert (out / "sweep.h5").is_file() and "collected" in (out / "sweep.csv").read_text().splitlines()[0]
    dom = browser.rendered_dom(html)
    for section in SWEEP_SECTIONS:
        assert f'<section id="{section}">' in dom, f"section {section} missing from the rendered sweep page"
    shot = browser.screenshot(html, tmp_path / "sweep.png", width=1200, height=5000)
    assert browser.ink_fraction(shot) > 0.05


def test_report_of_an_unfinished_sweep_is_refused(tmp_path):
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP_CASE)
    out = tmp_path / "sw"
    assert run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path).returncode == 0
    next((out / "jobs").glob("*.h5")).unlink()
    refused = run_cli("report", out)
    assert_refused(refused, "not done", folder=out, pattern="report.html")
