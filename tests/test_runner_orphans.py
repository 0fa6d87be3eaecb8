"""A killed `run` leaves no worker behind (fdtd_cases.runner: each worker watches its parent).

Found by hand: after `kill` of an `outcouple run` (SIGTERM to it alone) its pool's two workers
went on stepping Meep for minutes and then idled forever.
"""

import os
import signal
import subprocess
import sys
import time

import pytest

from conftest import ROOT, case_toml, make_case, requires_meep

pytestmark = requires_meep


def workers_of(parent):
    """Pids of the live pool workers whose parent is ``parent`` (read from /proc)."""
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat") as f:
                fields = f.read().rsplit(")", 1)[1].split()
            with open(f"/proc/{entry}/cmdline", "rb") as f:
                command = f.read()
        except OSError:
            continue
        if int(fields[1]) == parent and fields[0] != "Z" and b"spawn_main" in command:
            found.append(int(entry))
    return found


def alive(pid):
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


@pytest.mark.parametrize("how", [signal.SIGKILL, signal.SIGTERM])
def test_workers_leave_when_the_run_is_killed(tmp_path, how):
    case = tmp_path / "slow.toml"
    # Two jobs of a few tens of seconds each: long enough to be killed mid-way.
    case.write_text(case_toml(make_case(emitter={"orientation": "in-plane"}, grid={"points_per_wavelength": 40})))
    run = subprocess.Popen([sys.executable, "-m", "outcouple.cli", "run", str(case), "--quiet", "--workers", "2"],
                           cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.time() + 60
        workers = []
        while time.time() < deadline and len(workers) < 2:
            time.sleep(0.5)
            workers = workers_of(run.pid)
        assert len(workers) == 2, "the run never started its two workers"
        time.sleep(2)  # let them get into Meep
        run.send_signal(how)
        run.wait(timeout=30)
        deadline = time.time() + 20
        while time.time() < deadline and any(alive(pid) for pid in workers):
            time.sleep(0.5)
        left = [pid for pid in workers if alive(pid)]
        for pid in left:
            os.kill(pid, signal.SIGKILL)
        assert not left, f"workers {left} outlived the killed run"
    finally:
        if run.poll() is None:
            run.kill()


def test_one_job_runs_without_a_worker_process(tmp_path, monkeypatch):
    """A run of one job starts no pool (a second Python and Meep import saved), keeps standard output
    clean while Meep runs in this process, and gives the numbers a worker gives (the same job run
    through a pool of one, here forced by a second, identical item)."""
    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from fdtd_cases.runner import plan_jobs, run_many

    case = parse_case(make_case(emitter={"orientation": "out-of-plane"}, grid={"points_per_wavelength": 12}))
    layout = make_layout(case)
    (job,) = plan_jobs(case, layout)
    pooled = run_many([(case, layout, job), (case, layout, job)], workers=1, progress=False)[0]

    class NoPool:
        def __init__(self, *args, **kwargs):
            raise AssertionError("a worker pool was started for one job")

    monkeypatch.setattr("fdtd_cases.runner.ProcessPoolExecutor", NoPool)
    captured = tmp_path / "stdout.txt"
    saved = os.dup(1)
    with open(captured, "wb") as sink:
        os.dup2(sink.fileno(), 1)
        try:
            (alone,) = run_many([(case, layout, job)], workers=1, progress=False)
            os.write(1, b"after\n")
        finally:
            os.dup2(saved, 1)
            os.close(saved)
    printed = captured.read_text()
    assert printed == "after\n", f"Meep's output reached standard output: {printed[:200]!r}"
    for name, line in alone["lines"].items():
        for component, values in line["fields"].items():
            assert values == pytest.approx(pooled["lines"][name]["fields"][component], rel=1e-12, abs=1e-12), name
