"""The command line end to end on a small flat case: JSON fields, HDF5 contents, show = run."""

import json

import h5py
import pytest

from conftest import case_toml, make_case, requires_meep, run_cli
from references import planar

pytestmark = [requires_meep, pytest.mark.fdtd]

CASE = case_toml(make_case(light={"band": 0.1, "samples": 2}, chip={"index": 2.5},
                           emitter={"depth": 0.4, "orientation": "out-of-plane"}))


def test_run_json_hdf5_and_show(tmp_path):
    case = tmp_path / "small.toml"
    case.write_text(CASE)
    out = tmp_path / "small.h5"
    result = run_cli("run", case, "-o", out, "--json", "--quiet", "--workers", "1", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    summary = json.loads(result.stdout)  # stdout must be pure JSON
    for key in ("efficiency", "efficiency_spectrum", "wavelengths", "by_orientation", "budget", "balance_error",
                "reference"):
        assert key in summary, key
    assert set(summary["budget"]) == {"top", "bottom", "sides", "absorbed"}
    assert list(summary["by_orientation"]) == ["out-of-plane"]
    # The printed reference is the exact solver's own answer, combined by the power-weighting rule.
    exact = [planar.half_space(2.5, 1.0, 0.4, lam, "out-of-plane") for lam in (0.95, 1.05)]
    expected = sum(r["top"] for r in exact) / sum(r["emission"] for r in exact)
    assert summary["reference"]["efficiency"] == pytest.approx(expected, rel=1e-12)
    assert summary["efficiency"] == pytest.approx(expected, rel=0.03)
    assert summary["balance_error"] < 0.02
    # The printed grid error (measured on other flat chips, fdtd_cases.accuracy.GRID_ERROR) covers this one's.
    assert summary["grid_error"]["estimate"] >= abs(summary["efficiency"] / expected - 1)

    with h5py.File(out) as f:
        assert "index = 2.5" in f["case/source"].asstr()[()]
        assert "points_per_wavelength" in f["case/resolved"].asstr()[()]
        assert f.attrs["meep_version"] and f.attrs["package_version"]
        assert f["grid"].attrs["grid_points"] > 0
        job = f["jobs/000"]
        assert job.attrs["time_steps"] > 0 and job.attrs["wall_time"] > 0
        assert job["lines/top/ez"].shape[0] == 2
    shown = run_cli("show", out, "--json")
    assert shown.returncode == 0, shown.stderr
    again = json.loads(shown.stdout)
    assert again["efficiency"] == pytest.approx(summary["efficiency"], rel=1e-12)
    text = run_cli("show", out)
    assert "exact" in text.stdout and "power budget" in text.stdout
    # Lossless: absorbed is exactly 0 and the residual is the balance error (Poynting's theorem).
    assert summary["budget"]["absorbed"] == 0.0
    # The open half-space sends light down through the lateral monitors: the table says why the
    # FDTD's bottom + sides is the exact bottom, and the two sums agree (energy conservation).
    assert "FDTD sides vs exact bottom" in text.stdout
    assert "-0.0000" not in text.stdout  # a rounding residue of an exact 0 (guided power of a half-space)
    b, e = summary["budget"], summary["reference"]["budget"]
    assert b["bottom"] + b["sides"] == pytest.approx(e["bottom"] + e["sides"], abs=0.02)
    assert not list(tmp_path.glob("*partial*"))
