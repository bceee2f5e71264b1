"""rfsafe: RF exposure, feedline stress and event-site evaluation.

The public API is small and explicit; the heavy parts are imported on first use, so that
``import rfsafe`` (and ``rfsafe --help``) stays fast.

>>> import rfsafe
>>> sorted(rfsafe.__all__)
['InputError', '__version__', 'assess', 'assess_site', 'load_site', 'load_station']
"""

__version__ = "0.1.0"

import os as _os

#: Environment variables that set the BLAS/OpenMP thread pools. rfsafe's matrices are small: extra
#: threads buy nothing and cost a lot on a busy machine, so one thread is the default. A value the
#: user set (or ``RFSAFE_THREADS=N``) wins. It takes effect only when numpy is imported after rfsafe.
THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS",
                    "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")
for _var in THREAD_VARIABLES:
    _os.environ.setdefault(_var, _os.environ.get("RFSAFE_THREADS", "1"))
del _var

from rfsafe.errors import InputError  # noqa: E402

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
