"""Feedlines: cable catalogue, transmission-line physics, and line/connector/tuner stress.

The tuner networks (``matching``) and baluns (``balun``) are imported on first use (PEP 562): a
station without a tuner or a balun does not load them.
"""

from rfsafe.feedline.catalogue import (
    CUSTOM_CABLE_ID, CableClass, ConnectorSeries, cable_class, cable_ids, connector_ids,
    connector_series, custom_cable, matched_loss_db, matched_loss_db_per_100m, power_rating_w,
)
from rfsafe.feedline.line import mismatch_total_loss_db
from rfsafe.feedline.stress import LineResult, PartStress, evaluate_line

__all__ = [
    "CUSTOM_CABLE_ID", "CableClass", "ConnectorSeries", "cable_class", "cable_ids", "connector_ids",
    "connector_series", "custom_cable", "matched_loss_db", "matched_loss_db_per_100m",
    "mismatch_total_loss_db", "power_rating_w", "LineResult", "PartStress", "evaluate_line",
    "TunerSpec", "TunerResult",
]

_LAZY = {"TunerSpec": "rfsafe.feedline.matching", "TunerResult": "rfsafe.feedline.matching"}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
