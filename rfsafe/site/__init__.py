"""Event sites: several stations on one site, grid exposure, areas, keep-out zones and violations.

Modules: ``schema`` (site file models), ``load`` (TOML -> validated site), ``grid`` (the
far-field ratio kernel over a grid), ``geometry`` (areas and polygons), ``analysis`` (regions,
keep-out zones, violations) and ``assess`` (a loaded site -> :class:`SiteResult`).
"""

from rfsafe.site.analysis import (
    CHECKED_ENVIRONMENT,
    MAX_GRID_POINTS,
    RegionSite,
    SiteAnalysis,
    SiteGrid,
    TransmitterSite,
    Violation,
    analyse_site,
    summed_reach_m,
)
from rfsafe.site.assess import (
    SITE_CAUTIONS,
    SiteResult,
    SiteStationResult,
    assess_site,
    limit_equivalent_w_m2,
    site_emitters,
)
from rfsafe.site.constants import AREA_KINDS, ENVIRONMENTS, ROPE_STEP_M
from rfsafe.site.geometry import (
    Area,
    points_in_polygon,
    polygon_edge_points,
    rope_off_radius_m,
    validate_polygon,
)
from rfsafe.site.grid import RatioGrid, SiteEmitter, ratio_grid, transmitter_ratios
from rfsafe.site.load import load_site
from rfsafe.site.schema import (
    DEFAULT_GRID_SPACING_M,
    DEFAULT_HEIGHTS_M,
    LoadedSite,
    Site,
    SiteArea,
    SiteStation,
)

__all__ = [
    "ENVIRONMENTS", "AREA_KINDS", "ROPE_STEP_M", "SiteEmitter", "RatioGrid", "ratio_grid",
    "transmitter_ratios", "Area", "points_in_polygon", "polygon_edge_points", "rope_off_radius_m",
    "validate_polygon", "summed_reach_m", "analyse_site", "SiteGrid", "TransmitterSite",
    "RegionSite", "Violation", "SiteAnalysis", "CHECKED_ENVIRONMENT", "MAX_GRID_POINTS",
    "SITE_CAUTIONS", "SiteStationResult", "SiteResult", "limit_equivalent_w_m2", "site_emitters",
    "assess_site", "SiteStation", "SiteArea", "Site", "LoadedSite", "DEFAULT_HEIGHTS_M",
    "DEFAULT_GRID_SPACING_M", "load_site",
]
