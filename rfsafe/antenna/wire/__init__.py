"""rfsafe's thin-wire moment-method solver for HF wire antennas (near-field E and H, impedance, gain).

Public API: the input models (:class:`WireAntennaSpec`, :class:`WireFile`), :func:`solve` and its
result :class:`WireSolution`. Method: Pocklington's equation with the reduced thin-wire kernel,
Galerkin testing with piecewise-sinusoidal functions and closed-form filament fields (Richmond's
reaction method); see :mod:`rfsafe.antenna.wire.solver`. Lumped loads (traps, loading coils,
chokes) are in :mod:`rfsafe.antenna.wire.loads`; the coax shield's outer surface as a conductor in
:mod:`rfsafe.antenna.wire.shield`.
"""

# The station schema embeds this package's model, whose base class lives in rfsafe.station.validation:
# load the station package first so that importing this package alone does not meet a half-built module.
import rfsafe.station  # noqa: F401,E402
from rfsafe.antenna.wire.model import (ChokeSpec, FeedSpec, LoadSpec, PointSpec, ShieldSpec, WireAntennaSpec,
                                       WireFile, WireSpec, check_wire_antenna, load_wire_file, validate_wire_antenna)

# The solver (and with it the kernels, loads and geometry) loads on first use: a station file without
# wire antennas, and ``rfsafe --help``, never pay for it.
_LAZY = {"WireSolution": "rfsafe.antenna.wire.solver", "solve": "rfsafe.antenna.wire.solver"}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

__all__ = ["WireAntennaSpec", "WireSpec", "FeedSpec", "LoadSpec", "ShieldSpec", "ChokeSpec", "PointSpec", "WireFile",
           "WireSolution", "solve",
           "check_wire_antenna", "validate_wire_antenna", "load_wire_file"]
