"""Shared helpers: run small cases in-process, and call the command line."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
CONFIGS = ROOT / "configs"

SMALL_FLAT_CASE = """
[light]
wavelength = 1.0
[chip]
index = 2.0
[emitter]
depth = 0.5
orientation = "out-of-plane"
[grid]
points_per_wavelength = 12
"""
"""A flat chip whose one FDTD job runs in about a second (commands end to end)."""


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


def run_in_process(data, orientation, x=0.0, symmetric=True):
    """Validate a case dict, run one job in this process and return (case, layout, raw result, fluxes)."""
    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from fdtd_cases.meep_job import run_job
    from postprocess.budget import job_fluxes

    case = parse_case(data)
    layout = make_layout(case)
    raw = run_job(case, layout, orientation, x, symmetric and layout.symmetric)
    return case, layout, raw, job_fluxes(raw["lines"], layout.resolution)
