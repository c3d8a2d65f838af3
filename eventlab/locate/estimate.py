"""The result one locator returns."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class LocatorEstimate:
    """A distance estimate from one method.

    Parameters
    ----------
    method : str
        Method name (``reactance``, ``takagi``, ``modified_takagi``,
        ``eriksson``, ``radial_stage``, ``two_ended_sync``, ``two_ended_unsync``,
        ``model_fit``).
    distance_km : float
        Distance from ``terminal`` along the route [km].
    length_km : float
        Route length of the line [km].
    terminal : str or None
        The terminal the distance is measured from.
    fault_resistance_ohm : float or None
        Fault resistance where the method gives it [ohm].
    notes : tuple of str
        Assumptions made and anything the reader should know.
    extra : dict
        Method-specific numbers (offsets, angles, residuals) for the JSON.
    """

    method: str
    distance_km: float
    length_km: float
    terminal: str | None = None
    fault_resistance_ohm: float | None = None
    notes: tuple[str, ...] = ()
    extra: dict = field(default_factory=dict, compare=False)

    @property
    def fraction(self) -> float:
        """Distance as a fraction of the route length [-]."""
        return self.distance_km / self.length_km

    def to_dict(self) -> dict:
        out = {"method": self.method, "distance_km": float(self.distance_km),
               "fraction": float(self.fraction)}
        if self.terminal is not None:
            out["terminal"] = self.terminal
        if self.fault_resistance_ohm is not None:
            out["fault_resistance_ohm"] = float(self.fault_resistance_ohm)
        if self.notes:
            out["notes"] = list(self.notes)
        for k, v in self.extra.items():
            out[k] = v
        return out
