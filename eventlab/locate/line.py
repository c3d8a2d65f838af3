"""The line as the locators see it: sections of series impedance and structures.

A line is a chain of homogeneous sections measured along the route from one
terminal ("from" end).  Cumulative impedances ``Z1(d)``, ``Z0(d)`` are piecewise
linear in the distance ``d`` [km]; every locator below works on them, so
non-homogeneous lines (mixed overhead / cable, different conductors) are
handled along the route.  Shunt capacitance is neglected (short-line model).
Zero-sequence mutual coupling with one parallel circuit, uniform along the
route (``z0m_ohm_per_km``), adds ``Z0m(d) I0,parallel`` to a ground loop's drop.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from eventlab.errors import ModelError
from eventlab.network.model import Line, LineSection, SectionTotals, Structure


@dataclass(frozen=True)
class LineData(SectionTotals):
    """A line seen from one of its ends.

    ``sections`` (:class:`eventlab.network.model.LineSection`) run from
    ``from_terminal`` to ``to_terminal``; ``structures``
    (:class:`eventlab.network.model.Structure`) carry distances from
    ``from_terminal`` too.  ``z0m_ohm_per_km`` is the zero-sequence mutual
    impedance with a parallel circuit [ohm/km] over the whole route (0: none);
    ``parallel_line`` names that circuit.
    """

    line_id: str
    sections: tuple[LineSection, ...]
    from_terminal: str | None = None
    to_terminal: str | None = None
    structures: tuple[Structure, ...] = ()
    z0m_ohm_per_km: complex = 0j
    parallel_line: str | None = None

    def __post_init__(self) -> None:
        if not self.sections:
            raise ModelError(f"line {self.line_id}: no sections")
        for k, s in enumerate(self.sections):
            if not s.length_km > 0:
                raise ModelError(f"line {self.line_id} section {k}: length_km must be > 0, "
                                 f"got {s.length_km}")

    @property
    def is_homogeneous(self) -> bool:
        z1 = {complex(s.z1_ohm_per_km) for s in self.sections}
        z0 = {complex(s.z0_ohm_per_km) for s in self.sections}
        return len(z1) == 1 and len(z0) == 1

    def boundaries_km(self) -> np.ndarray:
        """Section boundaries [km] from the from-end, ``len(sections) + 1`` values."""
        return np.concatenate([[0.0], np.cumsum([s.length_km for s in self.sections])])

    def z_to(self, d_km: float) -> tuple[complex, complex]:
        """Cumulative ``(Z1(d), Z0(d))`` [ohm] from the from-end to ``d_km``.

        Beyond either end the first/last section is extended linearly.
        """
        d = float(d_km)
        z1 = z0 = 0j
        start = 0.0
        n = len(self.sections)
        for k, s in enumerate(self.sections):
            end = start + s.length_km
            if d <= end or k == n - 1:
                seg = d - start if (d >= start or k == 0) else 0.0
                z1 += s.z1_ohm_per_km * seg
                z0 += s.z0_ohm_per_km * seg
                return complex(z1), complex(z0)
            z1 += s.z1_ohm_per_km * s.length_km
            z0 += s.z0_ohm_per_km * s.length_km
            start = end
        return complex(z1), complex(z0)  # pragma: no cover

    def z0m_to(self, d_km: float) -> complex:
        """Zero-sequence mutual impedance [ohm] from the from-end to ``d_km``."""
        return complex(self.z0m_ohm_per_km) * float(d_km)

    def section_index(self, d_km: float) -> int:
        """Index of the section holding ``d_km`` (clamped to the ends)."""
        b = self.boundaries_km()
        return int(np.clip(np.searchsorted(b, d_km, side="right") - 1, 0, len(self.sections) - 1))

    def reversed(self) -> LineData:
        """The same line seen from the other end (distances from ``to_terminal``)."""
        length = self.length_km
        return LineData(
            line_id=self.line_id,
            sections=tuple(reversed(self.sections)),
            from_terminal=self.to_terminal,
            to_terminal=self.from_terminal,
            structures=tuple(sorted(
                (Structure(s.structure, length - s.distance_km, s.latitude, s.longitude)
                 for s in self.structures), key=lambda s: s.distance_km)),
            z0m_ohm_per_km=self.z0m_ohm_per_km,
            parallel_line=self.parallel_line,
        )

    def scaled(self, z1_scale: complex = 1.0, z0_scale: complex = 1.0) -> LineData:
        """Copy with every section's Z1 and Z0 multiplied (tolerance studies)."""
        return LineData(self.line_id, tuple(
            dataclasses.replace(s, z1_ohm_per_km=s.z1_ohm_per_km * z1_scale,
                                z0_ohm_per_km=s.z0_ohm_per_km * z0_scale)
            for s in self.sections), self.from_terminal, self.to_terminal, self.structures,
            self.z0m_ohm_per_km * z0_scale, self.parallel_line)


def homogeneous_line(line_id: str, length_km: float, z1_ohm_per_km: complex,
                     z0_ohm_per_km: complex, **kwargs) -> LineData:
    """A one-section line."""
    return LineData(line_id, (LineSection(float(length_km), complex(z1_ohm_per_km),
                                          complex(z0_ohm_per_km)),), **kwargs)


def line_data(line: Line, from_bus: str | None = None, *, from_terminal: str | None = None,
              to_terminal: str | None = None) -> LineData:
    """A model :class:`~eventlab.network.model.Line` seen from ``from_bus``.

    ``from_bus`` defaults to the line's own ``from`` bus; given the ``to`` bus,
    sections and structure distances are reversed.
    """
    if from_bus is not None and from_bus not in (line.from_bus, line.to_bus):
        raise ModelError(f"line {line.id}: bus {from_bus!r} is not one of its ends "
                         f"({line.from_bus}, {line.to_bus})")
    mutual = getattr(line, "mutual", None)
    ld = LineData(line.id, tuple(line.sections), structures=tuple(line.structures),
                  z0m_ohm_per_km=complex(mutual.z0m_ohm_per_km) if mutual is not None else 0j,
                  parallel_line=mutual.line if mutual is not None else None)
    if from_bus is not None and from_bus == line.to_bus:
        ld = ld.reversed()
    return dataclasses.replace(ld, from_terminal=from_terminal, to_terminal=to_terminal)
