"""An invented scenario: four walkers crossing the park, each with their own taste for shade.

Same park as :mod:`bayesirl.scenarios.park`. The walkers agree on mud, slope and the
fountain and differ on shade, from avoiding it to seeking it out. Nothing here is measured.
"""

from __future__ import annotations

import numpy as np

from bayesirl.scenarios.park import PARK_WEIGHTS

# One row per walker: (mud, slope, shade, water). Only shade differs.
WALKER_WEIGHTS = {
    "ada": np.array([-1.0, -0.5, -0.6, 2.0]),
    "bo": np.array([-1.0, -0.5, 0.2, 2.0]),
    "cy": np.array([-1.0, -0.5, 0.8, 2.0]),
    "dee": np.array([-1.0, -0.5, 1.6, 2.0]),
}
assert all(np.array_equal(w[[0, 1, 3]], PARK_WEIGHTS[[0, 1, 3]])
           for w in WALKER_WEIGHTS.values())
EPISODES_EACH, LENGTH = 10, 15

POOLING_TABLE = '''[pooling]
kind = "partial"
spread_scale = 1.0
'''
