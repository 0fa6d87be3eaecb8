"""The public Python API and the command line give the same answers (the CLI is a thin layer).

The numbers themselves are checked against outside references elsewhere (test_fdtd_flat.py,
test_multilayer.py, test_raytrace.py); here the same case goes through both doors.
"""

import json

import pytest

import outcouple
from conftest import SMALL_FLAT_CASE, requires_meep, run_cli

TIMING = ("wall_time", "meep_time", "setup_time", "step_time", "elapsed", "events_per_second")


def _without(data, keys):
    if isinstance(data, dict):
        return {k: _without(v, keys) for k, v in data.items() if k not in keys}
    if isinstance(data, list):
        return [_without(v, keys) for v in data]
    return data


@pytest.fixture()
def case_file(tmp_path):
    path = tmp_path / "chip.toml"
    path.write_text(SMALL_FLAT_CASE)
    return path


@requires_meep
@pytest.mark.fdtd
def test_run_through_the_api_and_the_command_line(case_file, tmp_path):
    result = outcouple.run(case_file, workers=1, progress=False, output=tmp_path / "api.h5", na=0.5)
    assert result.path == tmp_path / "api.h5" and result.path.is_file()
    assert result.efficiency == result.to_dict()["efficiency"] and result.budget == result.to_dict()["budget"]
    assert result.reference["efficiency"] > 0 and result.collected == result.to_dict()["collected"]
    cli = run_cli("run", case_file, "-o", tmp_path / "cli.h5", "--json", "--quiet", "--workers", "1", "--na", "0.5")
    assert cli.returncode == 0, cli.stderr
    printed = json.loads(cli.stdout)
    assert printed.pop("result_file") == str(tmp_path / "cli.h5")
    ours = result.to_dict()
    ours.pop("result_file")
    assert _without(ours, TIMING) == _without(printed, TIMING)
    # show reads the file back: the same summary as the run that wrote it
    shown = outcouple.show(tmp_path / "api.h5", na=0.5).to_dict()
    assert _without(shown, TIMING) == _without(result.to_dict(), TIMING)


def test_reference_and_rays_through_both_doors(case_file):
    ref = outcouple.reference(case_file)
    cli = run_cli("reference", case_file, "--json")
    assert cli.returncode == 0, cli.stderr
    assert json.loads(cli.stdout) == ref
    rays = outcouple.rays(str(case_file), rays=2000, seed=3)
    cli = run_cli("rays", case_file, "--rays", "2000", "--seed", "3", "--json", "--quiet")
    assert cli.returncode == 0, cli.stderr
    assert _without(json.loads(cli.stdout), TIMING) == _without(rays, TIMING)


def test_cases_from_a_dict_and_bad_input():
    import tomllib

    data = tomllib.loads(SMALL_FLAT_CASE)
    facts = outcouple.check(data)
    assert facts["jobs"] == 1 and facts["orientations"] == ["out-of-plane"]
    assert facts["points_per_wavelength"]["chip"] == pytest.approx(12, rel=0.05)
    with pytest.raises(outcouple.CaseError) as refused:
        outcouple.check({**data, "chip": {"index": -2.0}})
    assert refused.value.key == "chip.index"
    with pytest.raises(outcouple.ResultFileError):
        outcouple.show("no/such/file.h5")
