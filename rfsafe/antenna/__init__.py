"""Antennas: far-field radiation patterns (``patterns``); the thin-wire solver lives in ``wire``."""
