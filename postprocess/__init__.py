"""From saved DFT fields to reported numbers: flux, budget, far field, result files, tables, pictures, report.

Plain numpy/scipy/h5py/matplotlib: reads result files and never needs the solver.
"""
