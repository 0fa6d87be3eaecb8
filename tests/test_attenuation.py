"""The alpha (1/cm) -> Meep D_conductivity conversion against Beer-Lambert."""

import numpy as np
import pytest

from conftest import requires_meep
from fdtd_cases.attenuation import d_conductivity, per_um


def test_conversion_formula():
    """alpha = n sigma_D (Meep Materials.md: eps (1 + i sigma_D / omega)); 1/cm = 1e-4 / um."""
    assert per_um(250.0) == pytest.approx(0.025)
    assert d_conductivity(0.5, 2.5) == pytest.approx(0.2)


@requires_meep
@pytest.mark.fdtd
def test_plane_wave_decays_as_beer_lambert():
    """A plane wave in the absorbing chip material: flux ratio over 1.5 um is exp(-alpha L) within 2%."""
    import meep as mp
    mp.verbosity(0)
    n, alpha = 2.5, 0.4  # 1/um, i.e. 4000 /cm
    medium = mp.Medium(index=n, D_conductivity=d_conductivity(alpha, n))
    res, f = 40, 1 / 0.9
    # A 1-D cell along z: a current sheet launches plane waves both ways.
    sim = mp.Simulation(cell_size=mp.Vector3(0, 0, 6), dimensions=1, resolution=res,
                        boundary_layers=[mp.PML(1.0)], default_material=medium,
                        sources=[mp.Source(mp.GaussianSource(f, fwidth=0.2 * f), component=mp.Ex,
                                           center=mp.Vector3(0, 0, -1.5))])
    low = sim.add_flux([f], mp.FluxRegion(center=mp.Vector3(0, 0, -1.0)))
    high = sim.add_flux([f], mp.FluxRegion(center=mp.Vector3(0, 0, 0.5)))
    sim.run(until_after_sources=mp.stop_when_dft_decayed(1e-8, 0, 400))
    ratio = mp.get_fluxes(high)[0] / mp.get_fluxes(low)[0]
    assert ratio == pytest.approx(np.exp(-alpha * 1.5), rel=0.02), f"FDTD {ratio:.5f} vs {np.exp(-alpha * 1.5):.5f}"
