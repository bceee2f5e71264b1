"""Constants shared by the site modules."""

import math

__all__ = ["ENVIRONMENTS", "AREA_KINDS", "ROPE_STEP_M"]


#: Environments, in the order of the first axis of every ratio array.
ENVIRONMENTS = ("controlled", "uncontrolled")
#: Kinds of area on a site: who may be there while the stations transmit.
AREA_KINDS = ("public", "operators", "no-access")
#: Rope-off radii are rounded up to a multiple of this [m].
ROPE_STEP_M = 0.5

_FOUR_PI = 4.0 * math.pi

