"""outcouple: light extraction from emitting chips by 2-D FDTD (Meep), with exact and ray references.

The public Python API; the ``outcouple`` command line is a thin layer over it::

    import outcouple
    case = outcouple.load_case("configs/demo_flat.toml")
    outcouple.check(case)["points_per_wavelength"]
    result = outcouple.run(case, workers=2, output="flat.h5")
    result.efficiency, result.budget, result.reference["efficiency"]
    outcouple.show("flat.h5").to_dict()          # what 'outcouple show --json' prints

Packages, top to bottom (nothing imports upwards): ``outcouple`` (this API,
the command line, the workflows), ``postprocess`` (saved fields to numbers,
files, tables, pictures, report) and ``references`` (models that need no
FDTD), both over ``fdtd_cases`` (case model, geometry, layout, the Meep job,
the runner).
"""

from fdtd_cases.errors import CaseError
from postprocess.results import ResultFileError

from .version import __version__

# The API's functions are imported when first used: a SLURM array task (``python -m
# outcouple.sweep_task``) imports this package too, and needs none of them (half a second a task).
_PUBLIC = {"Result": ".api", "check": ".api", "load_case": ".api", "multipass": ".api", "plot": ".api",
           "rays": ".api", "reference": ".api", "report": ".api", "run": ".api", "show": ".api",
           "compare": ".comparison", "converge": ".grid_convergence", "collect": ".sweeps",
           "status": (".sweeps", "report_status"), "sweep": (".sweeps", "start")}

__all__ = ["CaseError", "Result", "ResultFileError", "__version__", "check", "collect", "compare", "converge",
           "load_case", "multipass", "plot", "rays", "reference", "report", "run", "show", "status", "sweep"]


def __getattr__(name):
    import importlib

    if name not in _PUBLIC:
        raise AttributeError(f"module 'outcouple' has no attribute {name!r}")
    module, attribute = _PUBLIC[name] if isinstance(_PUBLIC[name], tuple) else (_PUBLIC[name], name)
    value = getattr(importlib.import_module(module, __name__), attribute)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(_PUBLIC))
