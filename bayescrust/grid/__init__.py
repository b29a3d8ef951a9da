"""Probability maps of gridded velocity models (2D sections, 3D volumes, node lists).

Read a grid (:func:`read_grid`), give depth zones (:class:`Zone`) and map it
(:func:`map_grid`): every depth level shares one prior design, weighed against all its nodes
(tabulated where the level has one observable and one sigma, batched importance weighing
otherwise), with a per-node quality flag. Chunks run in-process or on dask.distributed and can
be checkpointed to zarr. See docs/grid.md.
"""

from .levels import Zone
from .output import column_summary, variable_name, write_netcdf
from .results import QUALITY_FLAGS
from .run import map_grid
from .source import (
    GridData,
    GridDataWarning,
    GridInputError,
    GridMapping,
    grid_from_csv,
    grid_from_dataset,
    read_grid,
)
from .validate import validate_nodes, validation_summary

__all__ = ["Zone", "GridData", "GridDataWarning", "GridInputError", "GridMapping",
           "QUALITY_FLAGS", "column_summary", "grid_from_csv", "grid_from_dataset", "map_grid",
           "read_grid", "validate_nodes", "validation_summary", "variable_name",
           "write_netcdf"]
