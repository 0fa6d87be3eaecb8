"""Entry point of one SLURM array task: ``python -m outcouple.sweep_task DIR BATCH INDEX``."""

import sys
import warnings

from .sweep import run_task

if __name__ == "__main__":
    # Debian's numpy 1.24 warns about subnormals when Meep's module loads; not ours to fix.
    warnings.filterwarnings("ignore", message="The value of the smallest subnormal")
    run_task(sys.argv[1], sys.argv[2], int(sys.argv[3]))
