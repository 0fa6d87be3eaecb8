"""Result files written before the packages were rearranged still open, with the numbers they had.

The file and the JSON its run printed were written by outcouple 0.1.0 at commit 5d7f157
(tests/data/README.md): the reference here is the earlier program's own output.
"""

import json
from pathlib import Path

import pytest

import outcouple
from conftest import run_cli

DATA = Path(__file__).resolve().parent / "data"
OLD = DATA / "written_by_0.1.0.h5"


def _flatten(value, prefix=""):
    if isinstance(value, dict):
        return {k: v for key, item in value.items() for k, v in _flatten(item, f"{prefix}.{key}").items()}
    if isinstance(value, list):
        return {k: v for i, item in enumerate(value) for k, v in _flatten(item, f"{prefix}[{i}]").items()}
    return {prefix: value}


def _same(ours, then):
    """Every number ``then`` had, ``ours`` has (ours may carry more keys, added since).

    One deliberate change: in a lossless case the budget's ``absorbed`` is now exactly 0, its old value
    (the flux lines' residual) being the balance error, reported beside it then and now.
    """
    ours, then = _flatten(ours), _flatten(then)
    assert then.keys() <= ours.keys(), f"keys lost: {sorted(set(then) - set(ours))}"
    for key, value in then.items():
        if key.endswith("budget.absorbed") and then.get(".balance_error") is not None:
            assert ours[key] == 0.0 and abs(value) <= then[".balance_error"] * (1 + 1e-9) + 1e-15, key
        elif isinstance(value, float):
            assert ours[key] == pytest.approx(value, rel=1e-9, abs=1e-15), f"{key}: ours {ours[key]!r} vs then {value!r}"
        else:
            assert ours[key] == value, f"{key}: ours {ours[key]!r} vs then {value!r}"


def test_show_of_an_old_file_gives_its_numbers():
    then = json.loads((DATA / "written_by_0.1.0.json").read_text())
    result = outcouple.show(OLD)
    assert result.attrs["format_version"] == 1 and result.attrs["package_version"] == "0.1.0"
    ours = result.to_dict()
    assert ours.pop("result_file") == str(OLD) and then.pop("result_file") == "small_flat.h5"
    _same(ours, then)


def test_show_command_prints_what_the_api_returns():
    shown = run_cli("show", OLD, "--json")
    assert shown.returncode == 0, shown.stderr
    _same(json.loads(shown.stdout), outcouple.show(OLD).to_dict())
