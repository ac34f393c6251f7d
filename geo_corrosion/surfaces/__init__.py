"""Surfaces: variogram fitting, local ordinary kriging, grids, masks and contours."""

from geo_corrosion.surfaces.contours import (
    check_contour_interval,
    contour_bands,
    contour_levels,
    contour_lines,
)
from geo_corrosion.surfaces.fitting import CandidateFit, VariogramFit, fit_variogram
from geo_corrosion.surfaces.grid import GridSpec, grid_for_polygon, krige_grid, surface_mask
from geo_corrosion.surfaces.kriging import CrossValidation, KrigingEngine, cross_validate, krige
from geo_corrosion.surfaces.regions import (
    contours_by_region,
    dangling_lines,
    krige_regions,
    region_labels,
    split_at_lines,
)
from geo_corrosion.surfaces.variogram import (
    MODEL_NAMES,
    ExperimentalVariogram,
    VariogramModel,
    experimental_variogram,
    experimental_variograms,
)

__all__ = [
    "MODEL_NAMES",
    "VariogramModel",
    "ExperimentalVariogram",
    "experimental_variogram",
    "experimental_variograms",
    "VariogramFit",
    "CandidateFit",
    "fit_variogram",
    "krige",
    "KrigingEngine",
    "cross_validate",
    "CrossValidation",
    "GridSpec",
    "grid_for_polygon",
    "surface_mask",
    "krige_grid",
    "contour_levels",
    "contour_lines",
    "contour_bands",
    "check_contour_interval",
    "split_at_lines",
    "region_labels",
    "dangling_lines",
    "krige_regions",
    "contours_by_region",
]
