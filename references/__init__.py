"""Independent models that need no FDTD: exact flat stacks, closed forms, ray tracing.

Plain numpy/scipy. These modules import nothing from the other packages
except the case model (:mod:`fdtd_cases.case`) and the shared surface
polyline (:mod:`fdtd_cases.geometry`): what else they need is passed in.
"""
