"""Headless Chromium for tests that check an HTML report renders (not a test module itself).

``scripts/chromium_local.sh`` installs Chromium from the OS packages. Each call here starts one
browser with a throwaway profile, renders a local file and exits: about 1 s per page on 2 cores.
Chromium exits 0 even when the page fails to load or the PNG cannot be written, so the helpers
judge success by its stderr and by the file it should have written.
"""

import os
import re
import shutil
import signal
import subprocess
import tempfile
from pathlib import Path

import numpy as np

CHROMIUM_FLAGS = (
    # In Chromium 156 plain --headless is the "new" headless mode (the full browser, no window);
    # --headless=new and --headless=old are accepted and give the same PNG (the old mode now
    # lives only in the separate headless shell, Debian package chromium-headless-shell).
    "--headless",
    # Chromium will not start as root without it ("Running as root without --no-sandbox is not
    # supported"), and the sandbox needs user namespaces that containers often lack.
    "--no-sandbox",
    # No GPU acceleration (there is no GPU here): identical PNGs with and without, one part less.
    "--disable-gpu",
    # A page taller or wider than the window otherwise has grey scrollbars drawn into the
    # screenshot (0.5 % of a blank 800 x 600 page), which would make a blank page look inked.
    "--hide-scrollbars",
    # No component updates, safe-browsing lists or metrics on start.
    "--disable-background-networking",
    # Even with the flag above, each start looks up update.googleapis.com, accounts.google.com,
    # clients2.google.com ... (seen with strace). Every host now fails to resolve at once, so
    # nothing leaves the machine and a report that needs the network shows it instead of waiting.
    "--host-resolver-rules=MAP * ~NOTFOUND",
    # Shared memory in /tmp rather than /dev/shm (64 MB in a default Docker container). Not needed
    # here (a 4 KiB /dev/shm worked); the Debian launcher adds it below 3.8 GB (Debian bug
    # 1072299), and find_chromium() bypasses that launcher.
    "--disable-dev-shm-usage",
)
"""Flags for every run; a fresh ``--user-data-dir`` in a temporary directory is added per run."""

DEBIAN_BINARY = "/usr/lib/chromium/chromium"
"""Debian's browser binary, which ``/usr/bin/chromium`` (a shell launcher) executes."""

_DBUS_NOISE = re.compile(r"^\[[^\]]*:ERROR:dbus/.*$\n?", re.MULTILINE)


def find_chromium():
    """Return the Chromium executable to run, or None when there is none.

    Debian's binary is used directly: the launcher script in front of it adds desktop flags from
    /etc/chromium.d (extensions, GPU rasterization) and, where /dev/shm is mounted twice, prints
    a shell error (``[: ...: unexpected operator``). Elsewhere the first of ``chromium``,
    ``chromium-browser`` and ``google-chrome`` on PATH is used.

    Returns
    -------
    str or None
        Path of the executable.
    """
    if os.access(DEBIAN_BINARY, os.X_OK):
        return DEBIAN_BINARY
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


def _quiet(stderr):
    """Chromium's stderr without the lines about the missing D-Bus (always there without a desktop)."""
    return _DBUS_NOISE.sub("", stderr).strip() or "(nothing on stderr)"


def _run(html_path, args, timeout):
    """Run Chromium headless on one local HTML file; return (stdout, stderr).

    The profile and Chromium's ``Crash Reports`` directory (which goes to
    ``$XDG_CONFIG_HOME/chromium`` whatever ``--user-data-dir`` says) are kept in a temporary
    directory, so nothing is written to the home directory. On a timeout the whole process
    group (browser, zygote, renderers) is killed.
    """
    html = Path(html_path).resolve()
    if not html.is_file():
        raise FileNotFoundError(f"no HTML file {html}")
    exe = find_chromium()
    if exe is None:
        raise RuntimeError("chromium not found (scripts/chromium_local.sh installs it)")
    with tempfile.TemporaryDirectory(prefix="outcouple-chromium-", ignore_cleanup_errors=True) as tmp:
        cmd = [exe, *CHROMIUM_FLAGS, f"--user-data-dir={tmp}/profile", *args, html.as_uri()]
        env = dict(os.environ, XDG_CONFIG_HOME=f"{tmp}/config")
        proc = subprocess.Popen(cmd, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                env=env, start_new_session=True, text=True, encoding="utf-8", errors="replace")
        try:
            out, err = proc.communicate(timeout=timeout)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            out, err = proc.communicate()
            raise RuntimeError(f"chromium did not finish {html.name} in {timeout} s:\n{_quiet(err)}") from None
    if proc.returncode != 0 or "Page load failed" in err:
        raise RuntimeError(f"chromium failed on {html} (exit {proc.returncode}):\n{_quiet(err)}")
    return out, err


def screenshot(html_path, png_path, width=1200, height=3000, timeout=60):
    """Render a local HTML file to a PNG of the top ``width`` x ``height`` CSS pixels.

    Parameters
    ----------
    html_path : str or Path
        The HTML file (opened as a file:// URL, so relative links resolve next to it).
    png_path : str or Path
        The PNG to write; an old one is removed first.
    width, height : int
        Window size in CSS pixels (the PNG has this size).
    timeout : float
        Seconds before the browser is killed.

    Returns
    -------
    Path
        ``png_path``.

    Raises
    ------
    RuntimeError
        If Chromium fails, times out or writes no PNG; the message holds its stderr.
    """
    png = Path(png_path).resolve()
    png.unlink(missing_ok=True)
    _, err = _run(html_path, [f"--screenshot={png}", f"--window-size={int(width)},{int(height)}"], timeout)
    if not png.is_file() or png.stat().st_size == 0:
        raise RuntimeError(f"chromium wrote no screenshot {png}:\n{_quiet(err)}")
    return png


def rendered_dom(html_path, timeout=60):
    """Return the document after loading and running its scripts, serialized as HTML.

    Parameters
    ----------
    html_path : str or Path
        The HTML file.
    timeout : float
        Seconds before the browser is killed.

    Returns
    -------
    str
        The DOM (``--dump-dom``), e.g. to check that section headings and ids are present.

    Raises
    ------
    RuntimeError
        If Chromium fails, times out or prints no DOM.
    """
    out, err = _run(html_path, ["--dump-dom"], timeout)
    if "<html" not in out.lower():
        raise RuntimeError(f"chromium printed no DOM for {html_path}:\n{_quiet(err)}")
    return out


def _rgb255(png_path):
    """The image as an (H, W, 3) float array of 0..255 (alpha dropped, grey expanded)."""
    from matplotlib.image import imread

    img = np.asarray(imread(png_path))
    if img.dtype.kind == "f":  # PNGs come as floats 0..1
        img = img * 255.0
    if img.ndim == 2:
        img = np.repeat(img[:, :, None], 3, axis=2)
    return img[:, :, :3].astype(float)


def ink_fraction(png_path, background=(255, 255, 255), tol=8):
    """Fraction of pixels that differ from the background colour, to tell a blank page from a drawn one.

    Parameters
    ----------
    png_path : str or Path
        The image (a screenshot).
    background : tuple of int
        Background RGB, 0..255.
    tol : float
        A pixel is ink when some channel differs from the background by more than this (0..255).

    Returns
    -------
    float
        Between 0 (blank) and 1.
    """
    rgb = _rgb255(png_path)
    diff = np.abs(rgb - np.asarray(background, dtype=float)).max(axis=2)
    return float(np.mean(diff > tol))


def distinct_colours(png_path):
    """Number of distinct RGB colours in an image (1 for a blank page, many for a plot or photo).

    Parameters
    ----------
    png_path : str or Path
        The image.

    Returns
    -------
    int
    """
    rgb = np.rint(_rgb255(png_path)).astype(np.uint32)
    return int(np.unique((rgb[:, :, 0] << 16) | (rgb[:, :, 1] << 8) | rgb[:, :, 2]).size)
