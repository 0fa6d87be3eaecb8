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

from .api import Result, check, load_case, multipass, plot, rays, reference, report, run, show
from .comparison import compare
from .grid_convergence import converge
from .sweeps import collect
from .sweeps import report_status as status
from .sweeps import start as sweep
from .version import __version__

__all__ = ["CaseError", "Result", "ResultFileError", "__version__", "check", "collect", "compare", "converge",
           "load_case", "multipass", "plot", "rays", "reference", "report", "run", "show", "status", "sweep"]
