"""Bad input: one message naming the file and the key, exit code 2, no traceback, no result file."""

import pytest

from conftest import CONFIGS, assert_refused, case_toml, make_case, run_cli
from fdtd_cases.case_file import parse_case
from fdtd_cases.errors import CaseError
from fdtd_cases.layout import make_layout
from postprocess.tables import duration

GOOD = case_toml(make_case(light={"wavelength": 0.9}, chip={"index": 2.4},
                           surface={"pattern": "grating", "period": 0.6, "height": 0.15, "fill": 0.5},
                           emitter={"orientation": "out-of-plane"}))
INDEX_LINE = GOOD.splitlines().index("index = 2.4") + 1
"""Where the TOML syntax error below is (tomllib reports it as '(at line N, column M)')."""

BAD = {
    "unknown key": (GOOD.replace("fill = 0.5", "fil = 0.5"), "surface.fil", "did you mean fill?"),
    "wavelength in nanometres": (GOOD.replace("wavelength = 0.9", "wavelength = 900"), "light.wavelength",
                                 "looks like nanometres"),
    "length in nanometres": (GOOD.replace("period = 0.6", "period = 6000"), "surface.period",
                             "looks like nanometres"),
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
    "toml syntax": (GOOD.replace("index = 2.4", "index = = 2.4"), "bad_case.toml: is not valid TOML",
                    f"at line {INDEX_LINE},"),
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
        assert_refused(result, "bad_case.toml", key, words, folder=tmp_path, pattern="*.h5*")


@pytest.mark.parametrize("name", ["unknown key", "wrong type", "unknown film key", "metal without extinction",
                                  "index for a mirror", "emitter below the chip", "toml syntax"])
def test_reference_refuses_bad_cases(tmp_path, name):
    """The case-file checks (not the grid checks: the reference needs no grid) guard 'reference' too."""
    text, key, words = BAD[name]
    case = tmp_path / "bad_case.toml"
    case.write_text(text)
    result = run_cli("reference", case, "--json")
    assert_refused(result, "bad_case.toml", key, words)
    assert result.stdout == ""


@pytest.mark.parametrize("name", sorted(FDTD_ONLY))
def test_cases_beyond_the_fdtd(tmp_path, name):
    text, key, words = FDTD_ONLY[name]
    case = tmp_path / "case.toml"
    case.write_text(text)
    for command in (["check", case], ["run", case, "-o", tmp_path / "out.h5", "--quiet"]):
        result = run_cli(*command, cwd=tmp_path)
        assert_refused(result, key, words, folder=tmp_path, pattern="*.h5*")
    assert run_cli("reference", case).returncode == 0


def test_missing_file(tmp_path):
    result = run_cli("check", tmp_path / "nowhere.toml")
    assert_refused(result, "nowhere.toml", "no such file")


def test_coarse_grid_warns(tmp_path):
    """Between 8 and 12 points per wavelength: a warning, not an error (common practice: FAQ's >= 8)."""
    case = tmp_path / "coarse.toml"
    case.write_text(GOOD + "[grid]\npoints_per_wavelength = 10\n")
    result = run_cli("check", case)
    assert result.returncode == 0, result.stderr
    assert "warning" in result.stderr and "grid.points_per_wavelength" in result.stderr


def test_bad_command_line(tmp_path):
    result = run_cli("run", CONFIGS / "flat_check.toml", "--workers", "0")
    assert_refused(result, "--workers")


def test_show_refuses_a_non_result_file(tmp_path):
    other = tmp_path / "other.h5"
    other.write_bytes(b"not hdf5")
    result = run_cli("show", other)
    assert_refused(result, "other.h5")


@pytest.mark.parametrize("config", sorted(p.name for p in CONFIGS.glob("*.toml")))
def test_shipped_configs_are_valid(config):
    if 'back = "metal"' in (CONFIGS / config).read_text():
        result = run_cli("reference", CONFIGS / config)
        assert result.returncode == 0 and "point dipole" in result.stdout, result.stderr
        return
    result = run_cli("check", CONFIGS / config)
    assert result.returncode == 0, result.stderr
    assert "points/wavelength" in result.stdout and "estimate" in result.stdout
    # The examples follow the README's own advice (a mirror on a whole number of cells, and so on).
    assert "warning" not in result.stderr, result.stderr


def test_numerical_aperture_beyond_the_ambient(tmp_path):
    result = run_cli("run", CONFIGS / "flat_check.toml", "--na", "1.5", "-o", tmp_path / "out.h5", "--quiet")
    assert_refused(result, "--na", "ambient index", folder=tmp_path, pattern="*.h5*")


def test_report_and_converge_refuse_bad_input(tmp_path):
    other = tmp_path / "other.h5"
    other.write_bytes(b"not hdf5")
    result = run_cli("report", other)
    assert_refused(result, "other.h5", "not an HDF5 file", folder=tmp_path, pattern="*.html*")
    result = run_cli("report", tmp_path)
    assert_refused(result, "not a sweep folder", folder=tmp_path, pattern="*.html*")
    for bad in ("24", "24,24", "24,x", "0,24"):
        result = run_cli("converge", CONFIGS / "flat_check.toml", "--resolutions", bad)
        assert_refused(result, "--resolutions")
    result = run_cli("converge", CONFIGS / "flat_check.toml", "--resolutions", "10,20")
    assert_refused(result, "--resolutions", "fewer than 8")


# Unit slips (issue: numbers a newcomer can trust). The case file is in µm and alpha in 1/cm;
# each rule below is the package's own (fdtd_cases.case_file, fdtd_cases.layout), not physics.
SLIPS = {
    "wavelength in metres": ({"light": {"wavelength": 9e-7}}, "light.wavelength", "metres"),
    "wavelength in nm, lengths in um": ({"light": {"wavelength": 450.0}, "emitter": {"depth": 0.5}},
                                        "light.wavelength", "nanometres"),
    "depth in nm": ({"light": {"wavelength": 0.45}, "emitter": {"depth": 5000.0}}, "emitter.depth", "nanometres"),
    "film in metres": ({"film": [{"index": 1.5, "thickness": 1e-7}]}, "film[0].thickness", "metres"),
}


@pytest.mark.parametrize("name", sorted(SLIPS))
def test_unit_slips_are_refused_with_the_unit(name):
    tables, key, words = SLIPS[name]
    with pytest.raises(CaseError) as caught:
        parse_case(make_case(**tables), source="slip.toml")
    assert caught.value.key == key and words in caught.value.message and "µm" in caught.value.message


def test_lengths_in_proportion_pass():
    """The thickest chips of the trade (500 µm at 450 nm, 1111 wavelengths) and thin films (5 nm) pass."""
    case = parse_case(make_case(light={"wavelength": 0.45}, chip={"thickness": 500.0},
                                film=[{"index": 1.5, "thickness": 0.005}]))
    assert case.chip.thickness == 500.0


def test_opaque_chip_warns_with_both_keys_and_the_unit():
    """alpha x thickness above 5: exp(-5) = 0.7% survives one pass (Beer-Lambert). 4e2 is a value per
    metre written where 1/cm is meant (4 /cm): on a 500 µm chip 4e2 /cm gives 20, 4 /cm gives 0.2."""
    def warnings(alpha):
        case = parse_case(make_case(light={"wavelength": 1.0}, chip={"thickness": 500.0, "alpha": alpha},
                                    emitter={"depth": 0.5}))
        return dict(make_layout(case, fdtd=False).warnings)
    message = warnings(4e2)["chip.alpha"]
    assert "chip.thickness" in message and "1/cm" in message and "= 20" in message
    assert "chip.alpha" not in warnings(4.0)


def test_time_estimates_read_as_people_read_them():
    assert [duration(s) for s in (4.2, 42, 150, 5400, 109449)] == ["4.2 s", "42 s", "2 min", "90 min", "30.4 h"]


def test_check_validates_the_sweep_table(tmp_path):
    """check reads [sweep] as 'outcouple sweep' does: a misspelled key is refused in the sweep's words,
    with the closest key the file gives; unquoted dotted keys (TOML nesting) mean the same axis."""
    case = tmp_path / "sweep_case.toml"
    case.write_text(GOOD + "[sweep]\nsurface.perod = [0.5, 0.6]\n")
    result = run_cli("check", case)
    assert_refused(result, "sweep_case.toml", 'sweep."surface.perod"', "a sweep varies", "did you mean surface.period?")
    case.write_text(GOOD + '[sweep]\nsurface.period = [0.5, 0.6]\n"emitter.depth" = [0.5, 0.6, 0.7]\n')
    result = run_cli("check", case)
    assert result.returncode == 0, result.stderr
    assert "6 point(s)" in result.stdout and "surface.period, emitter.depth" in result.stdout


def test_cell_sizes_are_whole_cells_to_the_last_bit():
    """Meep 1.25 warns on standard error for every run whose cell size times resolution is not an exact
    integer (measured: 4.539325842696629 x 89 = 403.99999999999994 warns, 4 x 89 does not); the layout
    picks cell sizes whose product is exact, adding two cells where no float of that length exists."""
    from fdtd_cases.layout import whole_cells

    assert whole_cells(356, 89) == (356, 4.0)
    cells, length = whole_cells(404, 89)  # no float x has x * 89 == 404 exactly
    assert cells == 406 and length * 89 == 406.0
    for chip in (2.0, 2.4869, 3.3):
        for wavelength in (0.45, 0.85, 1.0):
            layout = make_layout(parse_case(make_case(light={"wavelength": wavelength}, chip={"index": chip})))
            for size in (layout.cell_x, layout.cell_y):
                assert size * layout.resolution == round(size * layout.resolution), (chip, wavelength, size)


def test_a_second_grid_that_would_not_be_valid():
    """Point sources run a second grid at 0.75 of the resolution by default; where that grid could not
    hold the emitter's contour, the default drops it with a warning and an explicit request is refused
    naming the key (derived here: 0.25 um deep at 11 points per wavelength in n = 2 leaves 12 points
    per um on the second grid, too coarse for the contour)."""
    data = make_case(emitter={"depth": 0.25, "source": "point"}, grid={"points_per_wavelength": 11})
    layout = make_layout(parse_case(data))
    assert layout.second is None
    assert [key for key, _ in layout.warnings if key == "grid.extrapolate"] == ["grid.extrapolate"]
    with pytest.raises(CaseError) as refused:
        make_layout(parse_case({**data, "grid": {**data["grid"], "extrapolate": True}}))
    assert refused.value.key == "grid.extrapolate" and "grid.extrapolate = false" in refused.value.message
    deeper = make_layout(parse_case({**data, "emitter": {**data["emitter"], "depth": 0.6}}))
    assert deeper.second is not None and deeper.second.resolution == round(0.75 * deeper.resolution)
    line = make_layout(parse_case({**data, "emitter": {"depth": 0.6}}))
    assert line.second is None  # line sources: one grid unless asked
