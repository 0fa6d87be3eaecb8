"""Bad input: one message naming the file and the key, exit code 2, no traceback, no result file."""

import pytest

from conftest import CONFIGS, run_cli

GOOD = """
[light]
wavelength = 0.9
[chip]
index = 2.4
[surface]
pattern = "grating"
period = 0.6
height = 0.15
fill = 0.5
[emitter]
depth = 0.5
orientation = "out-of-plane"
"""

BAD = {
    "unknown key": (GOOD.replace("fill = 0.5", "fil = 0.5"), "surface.fil", "allowed here"),
    "wrong type": (GOOD.replace("index = 2.4", 'index = "high"'), "chip.index", "valid number"),
    "negative length": (GOOD.replace("period = 0.6", "period = -0.6"), "surface.period", "greater than 0"),
    "zero length": (GOOD.replace("depth = 0.5", "depth = 0"), "emitter.depth", "greater than 0"),
    "emitter above pattern": (GOOD.replace("depth = 0.5", "depth = 0.1"), "emitter.depth", "deepest point"),
    "emitter too close": (GOOD.replace("depth = 0.5", "depth = 0.17"), "emitter.depth", "too close"),
    "too few points": (GOOD + "[grid]\npoints_per_wavelength = 6\n", "grid.points_per_wavelength", "at least 8"),
    "absorbing layer too thin": (GOOD + "[grid]\npml = 0.3\n", "grid.pml", "at least half"),
    "unknown pattern": (GOOD.replace('"grating"', '"zigzag"'), "surface.pattern", '"flat"'),
    "mirror without thickness": (GOOD.replace("index = 2.4", 'index = 2.4\nback = "mirror"'), "chip",
                                 "finite thickness"),
    "toml syntax": (GOOD.replace("index = 2.4", "index = = 2.4"), "", "not valid TOML"),
    "unknown film key": (GOOD + "[[film]]\nindex = 1.5\nthickness = 0.1\ncolour = 1\n", "film[0].colour",
                         "allowed here: index, thickness, alpha"),
    "film without thickness": (GOOD + "[[film]]\nindex = 1.5\n", "film[0].thickness", "missing"),
    "metal without extinction": (GOOD.replace("index = 2.4", 'index = 2.4\nthickness = 2.0\nback = "metal"\n'
                                              "back_index = 0.2"), "chip", "back_extinction"),
    "index for a mirror": (GOOD.replace("index = 2.4", 'index = 2.4\nthickness = 2.0\nback = "mirror"\n'
                                        "back_index = 1.5"), "chip", "back_index applies only"),
    "emitter below the chip": (GOOD.replace("index = 2.4", "index = 2.4\nthickness = 0.4"), "emitter.depth",
                               "not inside the chip"),
    "collection with both keys": (GOOD + "[collection]\nna = 0.5\nhalf_angle = 30\n", "collection",
                                  "exactly one of na and half_angle"),
    "collection beyond the ambient": (GOOD + "[collection]\nna = 1.2\n", "collection.na",
                                      "more than the ambient index"),
    "collection past grazing": (GOOD + "[collection]\nhalf_angle = 95\n", "collection.half_angle",
                                "less than or equal to 90"),
}

# Valid cases the FDTD cannot run yet: check and run refuse them, 'reference' accepts them.
FDTD_ONLY = {
    "films on a pattern": (GOOD + "[[film]]\nindex = 1.5\nthickness = 0.1\n", "film", "patterned surface"),
    "metal back": (GOOD.replace("index = 2.4", 'index = 2.4\nthickness = 2.0\nback = "metal"\n'
                                "back_index = 0.2\nback_extinction = 5.0"), "chip.back", "reference"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_case_is_refused_clearly(tmp_path, name):
    text, key, words = BAD[name]
    case = tmp_path / "bad_case.toml"
    case.write_text(text)
    for command in (["check", case], ["run", case, "-o", tmp_path / "out.h5", "--quiet"]):
        result = run_cli(*command, cwd=tmp_path)
        assert result.returncode == 2, result.stderr
        assert "Traceback" not in result.stderr
        assert "bad_case.toml" in result.stderr and key in result.stderr and words in result.stderr, result.stderr
        assert not list(tmp_path.glob("*.h5*")), "no result file may be written for bad input"


@pytest.mark.parametrize("name", ["unknown key", "wrong type", "unknown film key", "metal without extinction",
                                  "index for a mirror", "emitter below the chip", "toml syntax"])
def test_reference_refuses_bad_cases(tmp_path, name):
    """The case-file checks (not the grid checks: the reference needs no grid) guard 'reference' too."""
    text, key, words = BAD[name]
    case = tmp_path / "bad_case.toml"
    case.write_text(text)
    result = run_cli("reference", case, "--json")
    assert result.returncode == 2 and "Traceback" not in result.stderr and result.stdout == ""
    assert "bad_case.toml" in result.stderr and key in result.stderr and words in result.stderr, result.stderr


@pytest.mark.parametrize("name", sorted(FDTD_ONLY))
def test_cases_beyond_the_fdtd(tmp_path, name):
    text, key, words = FDTD_ONLY[name]
    case = tmp_path / "case.toml"
    case.write_text(text)
    for command in (["check", case], ["run", case, "-o", tmp_path / "out.h5", "--quiet"]):
        result = run_cli(*command, cwd=tmp_path)
        assert result.returncode == 2 and key in result.stderr and words in result.stderr, result.stderr
        assert not list(tmp_path.glob("*.h5*"))
    assert run_cli("reference", case).returncode == 0


def test_missing_file(tmp_path):
    result = run_cli("check", tmp_path / "nowhere.toml")
    assert result.returncode == 2 and "nowhere.toml" in result.stderr and "no such file" in result.stderr
    assert "Traceback" not in result.stderr


def test_coarse_grid_warns(tmp_path):
    """Between 8 and 12 points per wavelength: a warning, not an error (common practice: FAQ's >= 8)."""
    case = tmp_path / "coarse.toml"
    case.write_text(GOOD + "[grid]\npoints_per_wavelength = 10\n")
    result = run_cli("check", case)
    assert result.returncode == 0, result.stderr
    assert "warning" in result.stderr and "grid.points_per_wavelength" in result.stderr


def test_bad_command_line(tmp_path):
    result = run_cli("run", CONFIGS / "flat_check.toml", "--workers", "0")
    assert result.returncode == 2 and "--workers" in result.stderr and "Traceback" not in result.stderr


def test_show_refuses_a_non_result_file(tmp_path):
    other = tmp_path / "other.h5"
    other.write_bytes(b"not hdf5")
    result = run_cli("show", other)
    assert result.returncode == 2 and "other.h5" in result.stderr and "Traceback" not in result.stderr


@pytest.mark.parametrize("config", sorted(p.name for p in CONFIGS.glob("*.toml")))
def test_shipped_configs_are_valid(config):
    if 'back = "metal"' in (CONFIGS / config).read_text():
        result = run_cli("reference", CONFIGS / config)
        assert result.returncode == 0 and "point dipole" in result.stdout, result.stderr
        return
    result = run_cli("check", CONFIGS / config)
    assert result.returncode == 0, result.stderr
    assert "points/wavelength" in result.stdout and "estimate" in result.stdout


def test_numerical_aperture_beyond_the_ambient(tmp_path):
    result = run_cli("run", CONFIGS / "flat_check.toml", "--na", "1.5", "-o", tmp_path / "out.h5", "--quiet")
    assert result.returncode == 2 and "--na" in result.stderr and "ambient index" in result.stderr, result.stderr
    assert "Traceback" not in result.stderr and not list(tmp_path.glob("*.h5*"))


def test_report_and_converge_refuse_bad_input(tmp_path):
    other = tmp_path / "other.h5"
    other.write_bytes(b"not hdf5")
    result = run_cli("report", other)
    assert result.returncode == 2 and "other.h5" in result.stderr and "not an HDF5 file" in result.stderr
    assert not list(tmp_path.glob("*.html*"))
    result = run_cli("report", tmp_path)
    assert result.returncode == 2 and "not a sweep folder" in result.stderr
    for bad in ("24", "24,24", "24,x", "0,24"):
        result = run_cli("converge", CONFIGS / "flat_check.toml", "--resolutions", bad)
        assert result.returncode == 2 and "--resolutions" in result.stderr and "Traceback" not in result.stderr
    result = run_cli("converge", CONFIGS / "flat_check.toml", "--resolutions", "10,20")
    assert result.returncode == 2 and "--resolutions" in result.stderr and "fewer than 8" in result.stderr
