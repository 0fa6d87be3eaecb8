"""``outcouple compare``: FDTD and rays over one parameter, as a user calls it."""

import csv
import json

import pytest

from conftest import SMALL_FLAT_CASE, assert_refused, case_toml, make_case, requires_meep, run_cli

CASE = SMALL_FLAT_CASE


@requires_meep
@pytest.mark.fdtd
def test_compare_writes_table_csv_and_plot(tmp_path):
    """Two depths of a flat chip: both methods per value, the CSV's columns named after the key,
    and the FDTD value equal to the exact planar one within 3% (the FDTD column is what `run`
    would print; the exact solver is checked in test_multilayer.py)."""
    from fdtd_cases.case_file import parse_case
    from references.reference import planar

    case = tmp_path / "flat.toml"
    case.write_text(CASE)
    out = tmp_path / "cmp"
    result = run_cli("compare", case, "--vary", "emitter.depth=0.4:0.7:2", "--rays", "20000", "-o", out, "--json",
                     "--quiet", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert [r["emitter.depth"] for r in data["rows"]] == [0.4, 0.7]
    with open(out / "compare.csv") as f:
        rows = list(csv.DictReader(f))
    assert list(rows[0]) == ["emitter.depth", "emitter.depth_over_chip_wavelength", "fdtd", "rays", "rays_error",
                             "difference", "differs"]
    assert (out / "compare.png").stat().st_size > 10000
    for row in data["rows"]:
        exact = planar(parse_case(make_case(emitter={"depth": row["emitter.depth"], "orientation": "out-of-plane"})))
        assert row["fdtd"] == pytest.approx(exact["efficiency"], rel=0.03)
        assert row["differs"] == (abs(row["rays"] / row["fdtd"] - 1) > 0.05)
    assert not list(out.glob("*.partial*"))


@requires_meep
@pytest.mark.fdtd
def test_compare_point_dipoles_against_3d_rays(tmp_path):
    """A point source: the FDTD column is the kz-integrated dipole (the exact 3-D solver within 5% on
    this coarse grid; the default grid is tested in test_fdtd_point.py) and the rays column the 3-D tracer
    (references.raytrace3d, seeded: the same number as tracing the case alone)."""
    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from references.raytrace3d import run_case
    from references.reference import planar

    data = make_case(chip={"index": 1.6}, emitter={"depth": 0.4, "orientation": "out-of-plane", "source": "point"},
                     grid={"points_per_wavelength": 10, "width": 8.0, "pml": 1.0})
    case = tmp_path / "point.toml"
    case.write_text(case_toml(data))
    result = run_cli("compare", case, "--vary", "emitter.depth=0.4:0.6:2", "--rays", "20000", "-o", tmp_path / "cmp",
                     "--json", "--quiet", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    for row in json.loads(result.stdout)["rows"]:
        point = parse_case(make_case(**{**data, "emitter": {**data["emitter"], "depth": row["emitter.depth"]}}))
        assert row["fdtd"] == pytest.approx(planar(point, dim=3)["efficiency"], rel=0.05)
        assert row["rays"] == pytest.approx(run_case(point, make_layout(point, fdtd=False), rays=20000)["efficiency"],
                                            rel=1e-12)


@pytest.mark.parametrize("vary,key,words", [
    ("emitter.depth=0.4:0.7", "--vary", "KEY=START:STOP:COUNT"),
    ("emitter.depth=0.4:0.7:1", "--vary", "at least 2"),
    ("surface.period=0.4:0.7:3", "surface.period", "not set in the case file"),
    ("emitter.depth=-0.2:0.7:3", "emitter.depth", "greater than 0"),
])
def test_compare_refuses_bad_ranges(tmp_path, vary, key, words):
    """Every point is validated before anything runs: a clear message, exit 2, no output folder."""
    case = tmp_path / "flat.toml"
    case.write_text(CASE)
    result = run_cli("compare", case, "--vary", vary, "-o", tmp_path / "cmp", cwd=tmp_path)
    assert_refused(result, key, words, folder=tmp_path, pattern="cmp")
