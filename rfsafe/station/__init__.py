"""Station description files: schema, loading and the starter template."""

from rfsafe.station.load import LoadedStation, load_station
from rfsafe.station.schema import Station

__all__ = ["LoadedStation", "Station", "load_station"]
