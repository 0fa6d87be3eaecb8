"""Sweeps with the local engine: plan, job files, resume, collect, plot, bad input."""

import csv
import json

import h5py
import pytest

from conftest import assert_refused, case_toml, make_case, requires_meep, run_cli, small_flat_case

SWEEP = case_toml(small_flat_case(sweep={"emitter.depth": [0.4, 0.6],
                                         "chip.index": {"start": 2.0, "stop": 2.4, "count": 2}}))


@requires_meep
@pytest.mark.fdtd
def test_local_sweep_resume_collect_and_plot(tmp_path):
    """A 2 x 2 grid sweep: each collected point equals `outcouple run` of the same case (the same
    jobs, the same integration); deleting one job file and sweeping again runs exactly that job;
    a failed job is reported by status with its reason; collect and plot write their files."""
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    out = tmp_path / "sw"
    first = run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path)
    assert first.returncode == 0, first.stderr
    assert "4 of 4 job(s) done (4 run now)" in first.stdout
    again = run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path)
    assert "(0 run now)" in again.stdout, "an unchanged sweep must not recompute anything"

    job_files = sorted((out / "jobs").glob("*.h5"))
    assert len(job_files) == 4
    job_files[1].unlink()
    (out / "jobs" / (job_files[2].stem + ".failed")).write_text("Traceback ...\nRuntimeError: node lost\n")
    job_files[2].unlink()
    status = run_cli("status", out)
    assert "done 2" in status.stdout and "failed 1" in status.stdout and "missing 1" in status.stdout
    assert "node lost" in status.stdout
    refused = run_cli("collect", out)
    assert_refused(refused, "not done", folder=out, pattern="sweep.h5")
    resumed = run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path)
    assert "(2 run now)" in resumed.stdout and "0 failed" in resumed.stdout

    assert run_cli("collect", out).returncode == 0
    with open(out / "sweep.csv") as f:
        rows = list(csv.DictReader(f))
    assert list(rows[0])[:3] == ["emitter.depth", "chip.index", "efficiency"]
    with h5py.File(out / "sweep.h5") as f:
        assert f["efficiency"].shape == (2, 2) and list(f["axes"]) == ["chip.index", "emitter.depth"]
    for row in rows:
        single = tmp_path / f"single_{row['emitter.depth']}_{row['chip.index']}.toml"
        single.write_text(case_toml(small_flat_case(emitter={"depth": float(row["emitter.depth"])},
                                                    chip={"index": float(row["chip.index"])})))
        ran = run_cli("run", single, "-o", tmp_path / "single.h5", "--json", "--quiet", "--workers", "1")
        assert ran.returncode == 0, ran.stderr
        assert float(row["efficiency"]) == pytest.approx(json.loads(ran.stdout)["efficiency"], rel=1e-5)
    assert run_cli("plot", out).returncode == 0 and (out / "sweep.png").stat().st_size > 10000


@pytest.mark.parametrize("table,key,words", [
    ({"surface.period": [0.3, 0.4]}, "surface.period", "not set in the case file"),
    ({"emitter.depth": []}, "emitter.depth", "empty list"),
    ({"emitter.depth": [0.4, -0.1]}, "emitter.depth = -0.1", "greater than 0"),
    ({"emitter.depth": {"start": 0.4, "stop": 0.6}}, "emitter.depth", "start, stop and count"),
    ({"mode": "zip", "emitter.depth": [0.4, 0.5], "chip.index": [2.0]}, "sweep.mode", "equal length"),
])
def test_bad_sweeps_are_refused_before_anything_runs(tmp_path, table, key, words):
    case = tmp_path / "bad.toml"
    case.write_text(case_toml(small_flat_case(sweep=table)))
    result = run_cli("sweep", case, "--out", tmp_path / "sw")
    assert_refused(result, key, words, folder=tmp_path, pattern="sw")


# 11 points per wavelength: the coarsest grid whose second grid (0.75 of it, 8.75) is valid, so that the
# sweep runs two grids, as point sources do by default.
POINT = {"chip": {"index": 1.6}, "emitter": {"depth": 0.4, "orientation": "out-of-plane", "source": "point"},
         "grid": {"points_per_wavelength": 11, "width": 3.0, "pml": 1.0}}


@requires_meep
@pytest.mark.fdtd
def test_point_source_sweep_equals_single_runs(tmp_path):
    """A point source's sweep runs every kz node of both grids as a job of its own (ids differ by
    wavelength, kz and grid), and each collected point, cone included, equals `outcouple run` of the same case: the same nodes,
    the same integration (to the CSV's six decimals). The flat baseline is the point dipole's (the
    exact 3-D solver)."""
    from outcouple.summary import flat_baseline
    from fdtd_cases.case_file import parse_case

    case = tmp_path / "point.toml"
    case.write_text(case_toml(make_case(**POINT, collection={"na": 0.5}, sweep={"chip.index": [1.6, 1.8]})))
    out = tmp_path / "sw"
    done = run_cli("sweep", case, "--out", out, "--quiet", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    plan = json.loads((out / "plan.json").read_text())
    ids = [job["id"] for point in plan["points"] for job in point["jobs"]]
    assert len(ids) == len(set(ids)) > 2 * 8 and all("kz" in job for job in plan["points"][0]["jobs"])
    assert len({job.get("resolution") for job in plan["points"][0]["jobs"]}) == 2  # the second grid's carry theirs
    assert run_cli("collect", out).returncode == 0
    with open(out / "sweep.csv") as f:
        rows = list(csv.DictReader(f))
    with h5py.File(out / "sweep.h5") as f:
        assert f.attrs["source"] == "point" and f["farfield/angle"][-1] == 90.0
    for row in rows:
        data = make_case(**{**POINT, "chip": {"index": float(row["chip.index"])}}, collection={"na": 0.5})
        single = tmp_path / "single.toml"
        single.write_text(case_toml(data))
        ran = run_cli("run", single, "-o", tmp_path / "single.h5", "--json", "--quiet")
        assert ran.returncode == 0, ran.stderr
        summary = json.loads(ran.stdout)
        assert "grids" in summary
        assert float(row["efficiency"]) == pytest.approx(summary["efficiency"], abs=1e-6)
        assert float(row["collected"]) == pytest.approx(summary["collected"], abs=1e-6)
        assert float(row["flat_baseline"]) == pytest.approx(flat_baseline(parse_case(data), dim=3), abs=1e-6)
