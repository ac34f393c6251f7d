"""Repair layout: sounded delaminations grown into saw-cut outlines a contractor can price.

:mod:`~geo_corrosion.repair.layout` holds the layout (margin, merge, minimum size, clip at
joints and exclusions) and the depth classes.  Plain library functions on shapely
geometries in one level's local grid.
"""

from geo_corrosion.repair.layout import (
    DEPTH_CLASSES,
    REPAIR_COLUMNS,
    LayoutParams,
    clean_outlines,
    depth_class,
    layout_repairs,
    n_reentrant_corners,
    polygon_parts,
    undercut_clearance_mm,
)

__all__ = [
    "DEPTH_CLASSES",
    "REPAIR_COLUMNS",
    "LayoutParams",
    "clean_outlines",
    "depth_class",
    "layout_repairs",
    "n_reentrant_corners",
    "polygon_parts",
    "undercut_clearance_mm",
]
