"""The ten shunt fault types, declared once for every layer.

Codes as the trade writes them: the faulted phases, then ``G`` when ground is
involved (common practice, no source).  ``"none"`` is not a fault type; the
signal chain reports it for a record that holds no fault.
"""

from __future__ import annotations

from typing import Literal, get_args

FaultType = Literal["AG", "BG", "CG", "AB", "BC", "CA", "ABG", "BCG", "CAG", "ABC"]
FAULT_TYPES: tuple[str, ...] = get_args(FaultType)
NO_FAULT = "none"

_PHASE_INDEX = {"A": 0, "B": 1, "C": 2}


def check_fault_type(code: str) -> str:
    """Return ``code`` in canonical form or raise ``ValueError`` naming the choices.

    Accepts any case and any order of phase letters ("ga", "CBG" -> "BCG",
    "ABCG" -> "ABC"; a three-phase fault is one type whether or not ground is
    involved).
    """
    s = str(code).strip().upper()
    ground = s.endswith("G") and len(s) > 1 or s.startswith("G")
    letters = {c for c in s if c in _PHASE_INDEX}
    extra = {c for c in s if c not in _PHASE_INDEX and c != "G"}
    if extra or not letters:
        raise ValueError(f"unknown fault type {code!r}; expected one of {', '.join(FAULT_TYPES)}")
    if len(letters) == 3:
        return "ABC"
    if len(letters) == 2:
        pair = {"AB": "AB", "BC": "BC", "AC": "CA"}["".join(sorted(letters))]
        return pair + ("G" if ground else "")
    if not ground:
        raise ValueError(f"unknown fault type {code!r}; a single-phase fault must be to "
                         f"ground (AG, BG or CG)")
    return next(iter(letters)) + "G"


def faulted_phases(code: str) -> tuple[int, ...]:
    """Indices (0=A, 1=B, 2=C) of the phases a fault type involves."""
    return tuple(sorted(_PHASE_INDEX[c] for c in check_fault_type(code) if c in _PHASE_INDEX))


def involves_ground(code: str) -> bool:
    """True for AG BG CG ABG BCG CAG (ABC is treated as ungrounded unless an Rg is given)."""
    c = check_fault_type(code)
    return c.endswith("G")
