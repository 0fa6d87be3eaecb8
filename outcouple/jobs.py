"""The jobs of a case, with what only the exact solver knows: the guided modes of the flat stack.

A point source's kz integral is cut at the effective indices of the stack's
guided modes (:mod:`fdtd_cases.kz`); they come from the exact planar solver,
which :mod:`fdtd_cases` cannot import, so they are found here and passed in.
"""

from fdtd_cases.runner import plan_jobs
from references import multilayer
from references.reference import stack_at


def can_guide(case):
    """Whether the flat stack may hold guided modes on the real axis: lossless, and a finite chip or a film."""
    lossless = case.chip.alpha == 0 and all(f.alpha == 0 for f in case.film) and case.chip.back != "metal"
    return lossless and (case.chip.back != "open" or bool(case.film))


def guided_indices(case, wavelengths):
    """{index of the wavelength: sorted effective indices of the flat stack's guided modes (s and p)}."""
    if case.emitter.source != "point" or not can_guide(case):
        return {}
    found = {}
    for i, wavelength in enumerate(wavelengths):
        modes = multilayer.emitter(stack_at(case, wavelength), case.emitter.depth, wavelength, "parallel", dim=3,
                                   modes=True)["guided_modes"]
        found[i] = sorted({round(float(n), 9) for values in modes.values() for n in values})
    return found


def jobs_of(case, layout):
    """The jobs of a case on its layout (:func:`fdtd_cases.runner.plan_jobs`), guided modes included."""
    return plan_jobs(case, layout, guided_indices(case, layout.wavelengths))
