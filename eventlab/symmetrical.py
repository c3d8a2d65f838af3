"""Symmetrical components (Fortescue, 1918), shared by signals and network.

Sequence order is (0, 1, 2); phase order A, B, C; ``a = exp(j 2 pi / 3)``.

Notes
-----
With ``A = [[1, 1, 1], [1, a^2, a], [1, a, a^2]]`` the phase quantities are
``x_abc = A @ x_012`` and ``x_012 = A^-1 @ x_abc`` with ``A^-1 = (1/3) conj(A).T``,
i.e. ``x_1 = (x_a + a x_b + a^2 x_c) / 3`` (power-invariant scaling is *not*
used: sequence phasors are phase-A referred, as in the protection literature).
"""

from __future__ import annotations

import numpy as np

A_OP = np.exp(2j * np.pi / 3)  # the operator a = 1 at 120 degrees

#: x_abc = FORTESCUE @ x_012
FORTESCUE = np.array(
    [[1, 1, 1],
     [1, A_OP**2, A_OP],
     [1, A_OP, A_OP**2]],
    dtype=complex,
)
#: x_012 = FORTESCUE_INV @ x_abc
FORTESCUE_INV = np.conj(FORTESCUE).T / 3.0


def abc_to_012(x_abc: np.ndarray) -> np.ndarray:
    """Phase phasors -> sequence phasors (0, 1, 2).

    Parameters
    ----------
    x_abc : complex array, shape (3,) or (3, n)
        Phase A, B, C phasors (any unit) along the first axis.
    """
    return np.tensordot(FORTESCUE_INV, np.asarray(x_abc, dtype=complex), axes=(1, 0))


def seq012_to_abc(x_012: np.ndarray) -> np.ndarray:
    """Sequence phasors (0, 1, 2) -> phase phasors A, B, C (first axis)."""
    return np.tensordot(FORTESCUE, np.asarray(x_012, dtype=complex), axes=(1, 0))


def phase_matrix_from_sequence(z0: complex, z1: complex, z2: complex | None = None) -> np.ndarray:
    """3x3 phase-domain matrix of a balanced element from its sequence values.

    ``Z_abc = A diag(z0, z1, z2) A^-1``; for a transposed line or a source,
    self ``(z0 + 2 z1) / 3`` and mutual ``(z0 - z1) / 3``.
    """
    z2 = z1 if z2 is None else z2
    return FORTESCUE @ np.diag([z0, z1, z2]).astype(complex) @ FORTESCUE_INV
