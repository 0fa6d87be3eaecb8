"""The headless-Chromium helpers (tests/browser.py) on pages whose right answers are known."""

import base64
import io

import numpy as np
import pytest
from matplotlib.image import imsave

from browser import distinct_colours, ink_fraction, rendered_dom, screenshot

pytestmark = pytest.mark.usefixtures("chromium")  # conftest: skip, or fail on CI, without Chromium


def png_base64():
    """A 600 x 400 px image of a colour map, as base64 PNG text.

    Written with imsave rather than through a Figure: drawing axes asks numpy for float limits,
    which warns (an error under -W error) once conftest has imported Meep, whose library turns on
    flush-to-zero.
    """
    buf = io.BytesIO()
    imsave(buf, np.linspace(0, 1, 600)[None, :] * np.ones((400, 1)), cmap="viridis", format="png")
    return base64.b64encode(buf.getvalue()).decode("ascii")


def test_blank_page_has_no_ink(tmp_path):
    """An empty page taller and wider than the window: no scrollbars, nothing but white."""
    page = tmp_path / "blank.html"
    page.write_text('<!doctype html><html><body><div style="width:3000px;height:6000px"></div></body></html>')
    png = screenshot(page, tmp_path / "blank.png", width=800, height=600)
    assert ink_fraction(png) < 0.001
    assert distinct_colours(png) == 1


def test_page_with_image_is_drawn(tmp_path):
    """A heading, a paragraph and an embedded PNG: the image's colours reach the screenshot."""
    page = tmp_path / "report.html"
    page.write_text(f"""<!doctype html><html><head><meta charset="utf-8"><title>Report</title></head><body>
<h1 id="results">Extraction efficiency</h1>
<p>Fraction of the emitted power that leaves the chip.</p>
<img alt="map" src="data:image/png;base64,{png_base64()}">
</body></html>""")
    png = screenshot(page, tmp_path / "report.png", width=800, height=600)
    # 0.51 with the image; 0.012 for the heading, the paragraph and a broken-image icon.
    assert ink_fraction(png) > 0.05, "the 600 x 400 image alone covers half the window"


def test_rendered_dom_has_heading_and_script_output(tmp_path):
    """The DOM after loading: the heading's id, and an element that only a script adds."""
    page = tmp_path / "dom.html"
    page.write_text("""<!doctype html><html><body><h1 id="results">Extraction efficiency</h1>
<script>const s = document.createElement("section"); s.id = "added-by-script"; document.body.append(s);</script>
</body></html>""")
    dom = rendered_dom(page)
    assert '<h1 id="results">Extraction efficiency</h1>' in dom
    assert 'id="added-by-script"' in dom


def test_failures_are_errors(tmp_path):
    """Chromium exits 0 when it cannot write the PNG; the helper raises with its message."""
    page = tmp_path / "p.html"
    page.write_text("<p>x</p>")
    with pytest.raises(RuntimeError, match="Failed to write file"):
        screenshot(page, tmp_path / "no" / "such" / "dir.png", width=200, height=200)
    with pytest.raises(FileNotFoundError):
        rendered_dom(tmp_path / "missing.html")
