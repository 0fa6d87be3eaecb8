"""Post-processing of saved DFT fields: Poynting flux, budget, efficiency, results.

Plain numpy/scipy/h5py: reads result files and never needs the solver.
"""
