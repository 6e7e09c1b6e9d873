"""The rating screen of the discrete search's joined combinations: the stress at a few corners
of the exact rating check (``analysis.operating.rating_corners``) against the best-rated part of
each class and value at each position, a chunk of a block at a time as the merge reaches it,
and the *lift* of a combination whose cheapest parts do not bear it (``solve.frontier``, step
3 of its module docstring).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..analysis.checks import resistor_stress
from ..analysis.operating import rating_corners
from ..spec import Spec
from .halves import ClassParts

__all__ = [
    "RatingBlock",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

#: Resistor ends of the block-level rating screen (``analysis.operating.rating_corners``): R1 low
#: and R2 high (the largest current through both), R3 and R4 at every end.
_SCREEN_ENDS = ((0, 1, 0, 0), (0, 1, 0, 1), (0, 1, 1, 0), (0, 1, 1, 1))


#: Designs whose rating stress is computed at once (bounds the screen's memory).
_STRESS_CHUNK = 8192


class RatingBlock:
    """The combinations of one group pair, sorted by their bound ``lbs``, screened against the
    ratings (:func:`_rated_combinations`) a chunk at a time as the merge reaches them (most
    blocks are left after their first few entries)."""

    def __init__(self, keys: IntArray, lbs: Array, parts: ClassParts, spec: Spec) -> None:
        self.keys, self.lbs, self.parts, self.spec = keys, lbs, parts, spec
        self.screened = parts.exact_spread
        n = keys.shape[0]
        self.ok = np.ones(n, dtype=bool)
        self.power = np.zeros((n, 4))
        self.peak = np.zeros((n, 4))
        self.lift = np.zeros(n)
        self.done = 0  # entries screened so far (a prefix)
        # Screened entries that pass only with a dearer part somewhere (lift > 0): taken out of
        # the block's order, to enter the merge at their bound plus lift (see ``frontier._Merge``).
        self.lifted: list[int] = []

    def usable(self, at: int) -> int | None:
        """The first entry from ``at`` on that passes the screen with its cheapest parts, or
        None (entries that pass only with dearer parts are listed in ``lifted``)."""
        n = self.keys.shape[0]
        if not self.screened:  # (every entry passes)
            return at if at < n else None
        while at < n:
            while self.screened and at >= self.done:
                # Chunks double from 64 up to _STRESS_CHUNK: most blocks need only a few.
                step = min(_STRESS_CHUNK, max(64, self.done))
                part = slice(self.done, min(self.done + step, n))
                ok, power, peak, lift = _rated_combinations(self.keys[part], self.parts, self.spec)
                lifted = ok & (lift > 0.0)
                self.ok[part], self.power[part], self.peak[part] = ok & ~lifted, power, peak
                self.lift[part] = lift
                self.lifted.extend((np.flatnonzero(lifted) + part.start).tolist())
                self.done = part.stop
            ahead = np.flatnonzero(self.ok[at : self.done if self.screened else n])
            if ahead.size:
                return at + int(ahead[0])
            at = self.done if self.screened else n
        return None


def _rated_combinations(
    keys: IntArray, parts: ClassParts, spec: Spec
) -> tuple[NDArray[np.bool_], Array, Array, Array]:
    """For combinations ``keys`` (columns: class, value for R1..R4): the mask of those whose
    best-rated part at every position (``ClassParts.top_w``, ``top_v``) bears its stress at the
    corners :data:`_SCREEN_ENDS` of ``analysis.operating.rating_corners``, that stress
    ``(power, peak)`` (N, 4), and the *lift* of each: the sum over the positions where the
    cheapest part does not bear its stress of ``up_cost − cost`` (a part that bears it is rated
    above the cheapest one, so it costs at least ``ClassParts.up_cost``). Those corners are points
    of the exact rating check (every part of a class has the class's δ when
    ``parts.exact_spread``), so a combination left out fails it with every part of its classes
    and values, and every design of a combination costs at least its bound plus its lift
    (relative slack 1e-9)."""
    n = keys.shape[0]
    power = np.empty((n, 4))
    peak = np.empty((n, 4))
    cls, val = keys[:, 0::2], keys[:, 1::2]
    for start in range(0, n, _STRESS_CHUNK):
        part = slice(start, start + _STRESS_CHUNK)
        corners = rating_corners(
            parts.values[val[part]], parts.spread[cls[part]], spec, _SCREEN_ENDS
        )
        power[part], peak[part] = resistor_stress(corners, spec)
    ok = np.ones(n, dtype=bool)
    lift = np.zeros(n)
    for i in range(4):
        c, v = cls[:, i], val[:, i]
        ok &= power[:, i] * (1.0 - 1e-9) <= parts.top_w[i][c, v]
        ok &= peak[:, i] * (1.0 - 1e-9) <= parts.top_v[i][c, v]
        head = parts.best[i][c, v]
        head_bears = (parts.power_w[head] >= power[:, i] * (1.0 - 1e-9)) & (
            parts.volts[head] >= peak[:, i] * (1.0 - 1e-9)
        )
        lift += np.where(head_bears, 0.0, parts.up_cost[i][c, v] - parts.best_cost[i][c, v])
    return ok, power, peak, lift
