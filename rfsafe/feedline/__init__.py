"""Feedlines: cable catalogue, transmission-line physics, and line/connector/tuner stress."""

from rfsafe.feedline.catalogue import (
    CUSTOM_CABLE_ID, CableClass, ConnectorSeries, cable_class, cable_ids, connector_ids,
    connector_series, custom_cable, matched_loss_db, matched_loss_db_per_100m, power_rating_w,
)
from rfsafe.feedline.line import mismatch_total_loss_db
from rfsafe.feedline.stress import LineResult, PartStress, evaluate_line
from rfsafe.feedline.matching import TunerResult, TunerSpec

__all__ = [
    "CUSTOM_CABLE_ID", "CableClass", "ConnectorSeries", "cable_class", "cable_ids", "connector_ids",
    "connector_series", "custom_cable", "matched_loss_db", "matched_loss_db_per_100m",
    "mismatch_total_loss_db", "power_rating_w", "LineResult", "PartStress", "evaluate_line",
    "TunerSpec", "TunerResult",
]
