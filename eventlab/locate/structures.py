"""Distances for crews: km and miles from each terminal, structures covering the interval."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eventlab.units import km_to_miles

from .line import LineData


@dataclass(frozen=True)
class StructureSpan:
    """Where to send the patrol.

    Attributes
    ----------
    distance_from_km : dict
        Estimate's distance [km] from each terminal id (or end label).
    nearest : str or None
        Structure nearest to the estimate.
    first, last : str or None
        Structures bracketing the interval: the last at or before its low end
        and the first at or after its high end (both ends of the line when
        the list does not reach).
    names : tuple of str
        Every structure from ``first`` to ``last``.
    """

    distance_from_km: dict
    interval_km: tuple[float, float]
    nearest: str | None
    nearest_distance_km: float | None
    first: str | None
    last: str | None
    names: tuple[str, ...]

    def to_dict(self) -> dict:
        return {
            "distance_from_km": {k: float(v) for k, v in self.distance_from_km.items()},
            "distance_from_mi": {k: km_to_miles(float(v))
                                 for k, v in self.distance_from_km.items()},
            "interval_km": [float(self.interval_km[0]), float(self.interval_km[1])],
            "interval_mi": [km_to_miles(float(self.interval_km[0])),
                            km_to_miles(float(self.interval_km[1]))],
            "nearest": self.nearest,
            "nearest_distance_km": (None if self.nearest_distance_km is None
                                    else float(self.nearest_distance_km)),
            "first": self.first,
            "last": self.last,
            "count": len(self.names),
        }


def locate_structures(line: LineData, distance_km: float,
                      interval_km: tuple[float, float]) -> StructureSpan:
    """Distances from both ends and the structures covering ``interval_km``.

    Parameters
    ----------
    line : LineData
        The line seen from the end the distances are measured from; structure
        distances are along the route from that end, so sectioned lines need
        no special treatment.
    distance_km : float
        The estimate [km] from ``line.from_terminal``.
    interval_km : (float, float)
        Low and high ends of the interval [km] from the same end.
    """
    length = line.length_km
    d = float(np.clip(distance_km, 0.0, length))
    lo, hi = sorted(float(x) for x in interval_km)
    lo, hi = max(lo, 0.0), min(hi, length)
    dist = {line.from_terminal or "from": d, line.to_terminal or "to": length - d}
    st = sorted(line.structures, key=lambda s: s.distance_km)
    if not st:
        return StructureSpan(dist, (lo, hi), None, None, None, None, ())
    pos = np.array([s.distance_km for s in st])
    k = int(np.argmin(np.abs(pos - d)))
    i_first = int(np.searchsorted(pos, lo + 1e-9, side="right") - 1)
    i_first = max(i_first, 0)
    i_last = int(np.searchsorted(pos, hi - 1e-9, side="left"))
    i_last = min(i_last, len(st) - 1)
    names = tuple(s.structure for s in st[i_first:i_last + 1])
    return StructureSpan(dist, (lo, hi), st[k].structure, float(pos[k]),
                         st[i_first].structure, st[i_last].structure, names)
