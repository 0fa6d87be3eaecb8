"""Shared helpers: build cases, run small cases in-process, call the command line, judge refusals."""

import copy
import os
import subprocess
import sys
from pathlib import Path

import pytest
import tomli_w

ROOT = Path(__file__).resolve().parent.parent
CONFIGS = ROOT / "configs"

DEFAULT_CASE = {"light": {"wavelength": 1.0}, "chip": {"index": 2.0}, "emitter": {"depth": 0.5}}
"""The smallest valid case: a flat n = 2 half-space under air, emitter 0.5 µm deep, 1 µm light."""


def make_case(**tables):
    """A case dict: DEFAULT_CASE with each argument's table merged in, key by key.

    A dict argument overrides only the keys it names (``make_case(chip={"thickness": 2.0})`` keeps
    ``chip.index``); any other value (a list of films, say) replaces the table. Always a fresh,
    deep copy, so a test may change what it gets.
    """
    data = copy.deepcopy(DEFAULT_CASE)
    for name, table in tables.items():
        if isinstance(table, dict):
            data[name] = {**data.get(name, {}), **copy.deepcopy(table)}
        else:
            data[name] = copy.deepcopy(table)
    return data


def case_toml(data):
    """A case dict as case-file (TOML) text."""
    return tomli_w.dumps(data)


SMALL_FLAT = {"emitter": {"orientation": "out-of-plane"}, "grid": {"points_per_wavelength": 12}}
"""What the small flat case sets beyond DEFAULT_CASE."""


def small_flat_case(**tables):
    """The small flat case (SMALL_FLAT_CASE) as a dict, with tables or keys overridden as in make_case."""
    merged = {name: {**SMALL_FLAT[name], **table} if name in SMALL_FLAT and isinstance(table, dict) else table
              for name, table in tables.items()}
    return make_case(**{**SMALL_FLAT, **merged})


SMALL_FLAT_CASE = case_toml(small_flat_case())
"""A flat chip whose one FDTD job runs in about a second (commands end to end)."""


def service_missing(reason):
    """A service the tests need (SLURM, the MPI build of Meep, Chromium) is not there.

    On CI (the environment variable CI is "true") the setup was meant to provide it, so the test
    fails; elsewhere it is skipped, saying why.
    """
    if os.environ.get("CI") == "true":
        pytest.fail(reason + " (CI=true: a service the tests need could not be set up)", pytrace=False)
    pytest.skip(reason)


@pytest.fixture(scope="session")
def chromium():
    """Headless Chromium (tests/browser.py), or skip (fail on CI) saying how to install it.

    Session-scoped, so that it is checked before any module-scoped fixture (an FDTD run) is set up.
    """
    import browser

    if browser.find_chromium() is None:
        service_missing("chromium not found (scripts/chromium_local.sh installs it)")


def assert_refused(result, *words, folder=None, pattern="*"):
    """The command was refused: exit code 2, a message without a traceback naming every word,
    and, when ``folder`` is given, nothing matching ``pattern`` (a result or partial file) left in it."""
    assert result.returncode == 2, f"exit code {result.returncode}, expected 2 (refused); stderr:\n{result.stderr}"
    assert "Traceback" not in result.stderr, f"a traceback instead of a message:\n{result.stderr}"
    missing = [str(w) for w in words if str(w) not in result.stderr]
    assert not missing, f"stderr does not name {missing}:\n{result.stderr}"
    if folder is not None:
        left = sorted(str(p) for p in Path(folder).glob(pattern))
        assert not left, f"refused, yet left {left} in {folder}; stderr:\n{result.stderr}"


def meep_available():
    try:
        import meep  # noqa: F401
    except ImportError:
        return False
    return True


requires_meep = pytest.mark.skipif(not meep_available(), reason="Meep (python3-meep) is not installed")


def run_cli(*args, cwd=None):
    """Run ``outcouple`` as a subprocess; return the CompletedProcess."""
    env = dict(os.environ, MPLBACKEND="Agg")
    return subprocess.run([sys.executable, "-m", "outcouple.cli", *map(str, args)], capture_output=True,
                          text=True, cwd=cwd, env=env, timeout=600)


def run_case(data, workers=2):
    """Run every job of a case dict through the public API (as ``outcouple run`` does); its summary."""
    import outcouple

    return outcouple.run(data, workers=workers, progress=False).to_dict()


def run_in_process(data, orientation, x=0.0, symmetric=True, kz=None, wavelength=None, cross_check=False):
    """Validate a case dict, run one job in this process and return (case, layout, raw result, fluxes).

    ``kz`` (in units of k0 = 2 pi / ``wavelength``): one node of a point source, at that wavelength.
    ``cross_check``: also Meep's own flux monitors on the same lines (raw["meep_flux"]).
    """
    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from fdtd_cases.meep_job import run_job
    from postprocess.budget import job_fluxes

    case = parse_case(data)
    layout = make_layout(case)
    bloch = {} if kz is None else {"kz": kz / wavelength, "wavelength": wavelength}
    raw = run_job(case, layout, orientation, x, symmetric and layout.symmetric, cross_check=cross_check, **bloch)
    return case, layout, raw, job_fluxes(raw["lines"], layout.resolution)
