"""rfsafe: RF exposure, feedline stress and event-site evaluation.

The public API is small and explicit; heavy dependencies are imported lazily.
"""

__version__ = "0.1.0"

from rfsafe.errors import InputError

__all__ = ["InputError", "__version__"]
