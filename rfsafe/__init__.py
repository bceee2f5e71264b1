"""rfsafe: RF exposure, feedline stress and event-site evaluation.

The public API is small and explicit; the heavy parts are imported on first use, so that
``import rfsafe`` (and ``rfsafe --help``) stays fast.

>>> import rfsafe
>>> sorted(rfsafe.__all__)
['InputError', '__version__', 'assess', 'assess_site', 'load_site', 'load_station']
"""

__version__ = "0.1.0"

from rfsafe.errors import InputError

__all__ = ["InputError", "__version__", "load_station", "assess", "load_site", "assess_site"]

_LAZY = {
    "load_station": ("rfsafe.station", "load_station"),
    "assess": ("rfsafe.assess", "assess"),
    "load_site": ("rfsafe.site", "load_site"),
    "assess_site": ("rfsafe.site", "assess_site"),
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'rfsafe' has no attribute {name!r}")
