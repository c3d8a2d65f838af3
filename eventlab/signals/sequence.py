"""Symmetrical components of whole records (Fortescue, via eventlab.symmetrical).

The transform itself lives in :mod:`eventlab.symmetrical`; this module only
applies it to phasor series and forms the ratios the classifier and the
timeline use.
"""

from __future__ import annotations

import numpy as np

from eventlab.errors import SignalError
from eventlab.symmetrical import FORTESCUE_INV


def sequence_phasors(x_abc) -> np.ndarray:
    """Sequence phasors (0, 1, 2) of phase phasors for every sample.

    Parameters
    ----------
    x_abc : complex array, shape (3,) or (3, n)
        Phase A, B, C phasors [V] or [A] (NaN where not yet defined).

    Returns
    -------
    complex ndarray, same shape
        ``x_012`` phase-A referred: ``x_1 = (x_a + a x_b + a^2 x_c) / 3``.

    Notes
    -----
    C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
    solution of polyphase networks", AIEE Trans. 37, 1918.
    """
    x = np.asarray(x_abc, dtype=complex)
    if x.shape[:1] != (3,):
        raise SignalError(f"phase phasors of shape {x.shape}: expected (3,) or (3, n), phases A B C")
    # the shared matrix of eventlab.symmetrical applied row by row: on long records this
    # is several times faster than a (3, 3) x (3, n) complex matrix product
    out = np.empty_like(x)
    for r in range(3):
        out[r] = FORTESCUE_INV[r, 0] * x[0] + FORTESCUE_INV[r, 1] * x[1] + FORTESCUE_INV[r, 2] * x[2]
    return out


def unbalance_ratios(x_012) -> tuple[np.ndarray, np.ndarray]:
    """``|x0| / |x1|`` and ``|x2| / |x1|`` (NaN where ``x1`` is zero)."""
    x = np.asarray(x_012, dtype=complex)
    m1 = np.abs(x[1])
    with np.errstate(divide="ignore", invalid="ignore"):
        r0 = np.where(m1 > 0, np.abs(x[0]) / m1, np.nan)
        r2 = np.where(m1 > 0, np.abs(x[2]) / m1, np.nan)
    return r0, r2
