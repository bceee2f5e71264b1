"""JSON Schema of station files, generated from the pydantic models."""

from __future__ import annotations

from rfsafe.station.schema import Station


def station_json_schema() -> dict:
    """The JSON Schema (draft 2020-12) of a station file."""
    schema = Station.model_json_schema()
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "rfsafe station file"
    return schema
