"""outcouple: light extraction from emitting chips by 2-D FDTD (Meep), with exact and ray references."""

__version__ = "0.1.0"
