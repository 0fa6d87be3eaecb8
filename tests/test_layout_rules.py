"""The layout rules of docs/conventions.md, read from the code itself (no module is imported).

outcouple (API, command line, workflows) on top; postprocess and references below it, neither
importing the other; fdtd_cases at the bottom. references takes only the case model and the
shared surface polyline from fdtd_cases. Only fdtd_cases/meep_job.py and meep_periodic.py import Meep.
"""

import ast

import pytest

from conftest import ROOT

MEEP_MODULES = (ROOT / "fdtd_cases" / "meep_job.py", ROOT / "fdtd_cases" / "meep_periodic.py")
"""The only modules that import Meep: the emitter's job and the texture's periodic cell."""
PACKAGES = ("outcouple", "fdtd_cases", "postprocess", "references")
MAY_IMPORT = {
    "outcouple": {"outcouple", "fdtd_cases", "postprocess", "references"},
    "postprocess": {"postprocess", "fdtd_cases"},
    "references": {"references", "fdtd_cases"},
    "fdtd_cases": {"fdtd_cases"},
}
REFERENCES_FROM_FDTD_CASES = {"fdtd_cases.case", "fdtd_cases.geometry", "fdtd_cases.angle_bins"}
MAX_LINES = 450


def modules():
    return sorted(p for package in PACKAGES for p in (ROOT / package).glob("*.py"))


def imported(path):
    """Absolute dotted names a module imports (relative imports resolved), with line numbers."""
    package = path.parent.name
    names = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names += [(alias.name, node.lineno) for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            target = ".".join(part for part in (package if node.level else "", node.module or "") if part)
            folder = ROOT / target.replace(".", "/")
            for alias in node.names:
                # "from pkg import mod" names the module pkg.mod; "from pkg.mod import x" names pkg.mod
                is_module = folder.is_dir() and (folder / f"{alias.name}.py").is_file()
                names.append((f"{target}.{alias.name}" if is_module else target, node.lineno))
    return names


def test_the_imports_are_read():
    """The reader finds what it must (so the rules below cannot pass by reading nothing)."""
    found = dict(imported(ROOT / "outcouple" / "api.py"))
    assert "outcouple.summary" in found and "postprocess.results" in found and "fdtd_cases.errors" in found
    assert "references.raytrace3d" in found  # imported inside a function: read all the same
    assert any(name == "meep" for name, _ in imported(ROOT / "fdtd_cases" / "meep_job.py"))
    assert len(modules()) > 30


@pytest.mark.parametrize("path", modules(), ids=lambda p: f"{p.parent.name}/{p.name}")
def test_no_import_runs_back_up(path):
    package = path.parent.name
    for name, line in imported(path):
        top = name.split(".")[0]
        if top in PACKAGES:
            assert top in MAY_IMPORT[package], f"{package}/{path.name}:{line} imports {name}: runs back up"
        if package == "references" and top == "fdtd_cases":
            assert name in REFERENCES_FROM_FDTD_CASES, (
                f"references/{path.name}:{line} imports {name}: only the case model, the surface polyline and the angle bins")
        if top == "meep":
            assert path in MEEP_MODULES, f"{package}/{path.name}:{line} imports meep"


@pytest.mark.parametrize("path", modules(), ids=lambda p: f"{p.parent.name}/{p.name}")
def test_no_mega_module(path):
    lines = len(path.read_text(encoding="utf-8").splitlines())
    assert lines <= MAX_LINES, f"{path.parent.name}/{path.name} has {lines} lines (at most {MAX_LINES})"


@pytest.mark.parametrize("name", ["ORIENTATIONS", "CATEGORIES", "FORMAT_VERSION", "__version__"])
def test_one_definition(name):
    """Each shared constant is assigned in exactly one module of the four packages."""
    places = []
    for path in modules():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.Assign, ast.AnnAssign)):
                targets = node.targets if isinstance(node, ast.Assign) else [node.target]
                if any(isinstance(t, ast.Name) and t.id == name for t in targets):
                    places.append(f"{path.parent.name}/{path.name}")
    assert len(places) == 1, f"{name} is defined in {places}"


def test_one_atomic_write():
    """Renaming a finished file into place is written once (postprocess/files.py)."""
    users = [f"{p.parent.name}/{p.name}" for p in modules() if "os.replace(" in p.read_text(encoding="utf-8")]
    assert users == ["postprocess/files.py"]


def test_the_console_script_is_the_api_command_line():
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    assert 'outcouple = "outcouple.cli:main"' in text
    assert (ROOT / "docs" / "conventions.md").is_file()
