"""Current-transformer core saturation for simulated records.

A deliberately simple CT model for demo records: the ideal secondary current
``i1 / N`` feeds the magnetising branch in parallel with the total secondary
resistance (winding, leads and burden).  The core flux linkage ``lam`` [V s]
obeys ``d lam / dt = R_b i2`` with ``i2 = i1 / N - i_m(lam)`` and a two-slope
(piecewise-linear) magnetising curve ``i_m(lam)``: slope ``1 / L_unsat`` up
to the knee flux, ``1 / L_sat`` beyond it.  No hysteresis; remanence is an
initial flux.  This is the textbook equivalent circuit of a CT with a
resistive burden (common practice, no source); it reproduces the shape of
saturated secondary currents (flat tops after the first cycles of an offset
fault current) but is not a substitute for a manufacturer's model.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class CtSaturation:
    """Parameters of the CT core model (secondary side).

    Parameters
    ----------
    knee_voltage_v : float
        RMS secondary voltage at the knee point [V] at the system frequency.
    burden_ohm : float
        Total secondary loop resistance: winding, leads, burden [ohm].
    magnetising_current_a : float
        RMS magnetising current at the knee voltage [A].
    saturated_ratio : float
        Saturated over unsaturated magnetising inductance [-].
    remanence_pu : float
        Initial core flux as a fraction of the knee flux [-] (signed).
    """

    knee_voltage_v: float = 60.0
    burden_ohm: float = 4.0
    magnetising_current_a: float = 0.05
    saturated_ratio: float = 0.002
    remanence_pu: float = 0.0

    def __post_init__(self) -> None:
        for name in ("knee_voltage_v", "burden_ohm", "magnetising_current_a", "saturated_ratio"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v > 0):
                raise ValueError(f"CtSaturation.{name} must be a positive number, got {v!r}")
        if not (np.isfinite(self.remanence_pu) and abs(self.remanence_pu) < 1.0):
            raise ValueError(f"CtSaturation.remanence_pu must lie in (-1, 1), "
                             f"got {self.remanence_pu!r}")


def ct_secondary(i_ideal_a: np.ndarray, dt_s: float, frequency_hz: float,
                 params: CtSaturation) -> np.ndarray:
    """Secondary current of a saturating CT.

    Parameters
    ----------
    i_ideal_a : ndarray, shape (..., n)
        Ideal secondary current ``i1 / N`` [A] sampled every ``dt_s``.
    dt_s : float
        Time step [s]; small against the cycle (hundreds of steps a cycle).
    frequency_hz : float
        System frequency [Hz] at which the knee voltage is stated.
    params : CtSaturation

    Returns
    -------
    ndarray, same shape
        Secondary current through the burden [A].

    Notes
    -----
    Trapezoidal integration of ``d lam/dt = R_b (i1/N - i_m(lam))``::

        lam_n + c i_m(lam_n) = lam_{n-1} + c (i1_n / N + i2_{n-1}),  c = dt R_b / 2

    The left side is increasing and piecewise linear in ``lam_n``, so each
    step is solved exactly.  Knee flux ``lam_k = sqrt(2) V_k / omega``;
    ``L_unsat = V_k / (omega I_mk)``.
    """
    i1 = np.asarray(i_ideal_a, dtype=float)
    omega = 2.0 * np.pi * frequency_hz
    lam_k = np.sqrt(2.0) * params.knee_voltage_v / omega
    l_u = params.knee_voltage_v / (omega * params.magnetising_current_a)
    l_s = l_u * params.saturated_ratio
    c = dt_s * params.burden_ohm / 2.0

    def i_mag(lam):
        a = np.abs(lam)
        return np.sign(lam) * np.where(a <= lam_k, a / l_u, lam_k / l_u + (a - lam_k) / l_s)

    out = np.empty_like(i1)
    lam = np.full(i1.shape[:-1], params.remanence_pu * lam_k)
    i2_prev = i1[..., 0] - i_mag(lam)
    out[..., 0] = i2_prev
    k_u = 1.0 + c / l_u
    k_s = 1.0 + c / l_s
    shift = c * lam_k / l_u - c * lam_k / l_s
    for n in range(1, i1.shape[-1]):
        rhs = lam + c * (i1[..., n] + i2_prev)
        lam_try = rhs / k_u
        sat = np.abs(lam_try) > lam_k
        lam_sat = np.sign(rhs) * (np.abs(rhs) - shift) / k_s
        lam = np.where(sat, lam_sat, lam_try)
        i2_prev = i1[..., n] - i_mag(lam)
        out[..., n] = i2_prev
    return out
