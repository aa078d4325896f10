"""The defaults of a certified map: the smallest cell and the cell budget (plain numbers, no numpy).

The project file's certified-layer settings start from these, so core.project reads them here without
loading the refinement machinery (numpy, sympy derivatives: about 20 ms of every project load).
"""

__all__ = ["DEFAULT_MAX_CELLS", "DEFAULT_MIN_CELL_FRACTION"]

DEFAULT_MIN_CELL_FRACTION = 1e-4     # of the domain's shorter side
DEFAULT_MAX_CELLS = 4_000_000        # cells examined in all
