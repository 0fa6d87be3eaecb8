"""Case files, geometry, grid layout, jobs and the Meep runner for 2-D light-extraction studies.

Only :mod:`fdtd_cases.meep_job` imports Meep; everything else here is plain
numpy and can be used on a machine without it.
"""
