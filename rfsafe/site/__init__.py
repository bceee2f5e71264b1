"""Event sites: several stations on one site, grid exposure, areas, keep-out zones and violations.

Modules: ``schema`` (site file models), ``load`` (TOML -> validated site), ``grid`` (the
far-field ratio kernel over a grid), ``geometry`` (areas and polygons), ``analysis`` (regions,
keep-out zones, violations) and ``assess`` (a loaded site -> :class:`SiteResult`).

The names below are imported from their module on first use (PEP 562), so that a caller that needs
one module (``evaluate`` draws a station's plan with the grid kernel alone) does not load the site
file models, the analysis and the loader.
"""

from __future__ import annotations

import importlib

#: Public name -> the module of this package that defines it.
_SOURCES = {
    "analysis": ("CHECKED_ENVIRONMENT", "MAX_GRID_POINTS", "RegionSite", "SiteAnalysis", "SiteGrid",
                 "TransmitterSite", "Violation", "analyse_site", "summed_reach_m"),
    "assess": ("SITE_CAUTIONS", "SiteResult", "SiteStationResult", "assess_site", "limit_equivalent_w_m2",
               "site_emitters"),
    "constants": ("AREA_KINDS", "ENVIRONMENTS", "ROPE_STEP_M"),
    "geometry": ("Area", "points_in_polygon", "polygon_edge_points", "rope_off_radius_m", "validate_polygon"),
    "grid": ("RatioGrid", "SiteEmitter", "ratio_grid", "transmitter_ratios"),
    "load": ("load_site",),
    "schema": ("DEFAULT_GRID_SPACING_M", "DEFAULT_HEIGHTS_M", "LoadedSite", "Site", "SiteArea", "SiteStation"),
}
_MODULE_OF = {name: module for module, names in _SOURCES.items() for name in names}
_SUBMODULES = frozenset(_SOURCES) | {"plan"}

__all__ = [
    "ENVIRONMENTS", "AREA_KINDS", "ROPE_STEP_M", "SiteEmitter", "RatioGrid", "ratio_grid",
    "transmitter_ratios", "Area", "points_in_polygon", "polygon_edge_points", "rope_off_radius_m",
    "validate_polygon", "summed_reach_m", "analyse_site", "SiteGrid", "TransmitterSite",
    "RegionSite", "Violation", "SiteAnalysis", "CHECKED_ENVIRONMENT", "MAX_GRID_POINTS",
    "SITE_CAUTIONS", "SiteStationResult", "SiteResult", "limit_equivalent_w_m2", "site_emitters",
    "assess_site", "SiteStation", "SiteArea", "Site", "LoadedSite", "DEFAULT_HEIGHTS_M",
    "DEFAULT_GRID_SPACING_M", "load_site",
]


def __getattr__(name: str):
    module = _MODULE_OF.get(name)
    if module is not None:
        value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
        globals()[name] = value          # later look-ups skip this function
        return value
    if name in _SUBMODULES:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__) | _SUBMODULES)
