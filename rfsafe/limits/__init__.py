"""Exposure standards: reference levels by frequency and environment, and exposure ratios.

Tables are package data (``data/*.csv``, one per published table, described in
``data/sources.toml``); see ``standards_notes/`` for how each standard is applied.
The FCC exemption from routine evaluation is in :mod:`rfsafe.limits.exemption`.
"""

from rfsafe.limits.reference_levels import (
    ENVIRONMENTS,
    STANDARD_IDS,
    Limit,
    StandardInfo,
    exposure_ratio,
    limits_at,
    standard_info,
)

__all__ = ["STANDARD_IDS", "ENVIRONMENTS", "StandardInfo", "Limit",
           "standard_info", "limits_at", "exposure_ratio"]
