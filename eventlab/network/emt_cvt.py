"""Capacitor voltage transformer (CVT) transients for simulated records.

A linear model of the textbook CVT circuit (common practice, no source),
referred to the intermediate voltage:

* the capacitor divider as its Thevenin equivalent, ``e = v_p C1 / (C1 + C2)``
  behind ``C_e = C1 + C2``;
* the series tuning reactor and the step-down transformer's leakage, ``L_c``
  tuned with ``C_e`` to the system frequency (``omega0^2 L_c C_e = 1``), and
  their resistance ``R_c``;
* the transformer's magnetising inductance ``L_m`` (linear);
* the burden, resistive;
* the ferroresonance suppression circuit: ``"active"``, a damping resistor
  ``R_f`` in series with an inductor and a capacitor in parallel, tuned to the
  system frequency (it draws no current in the steady state and loads the
  transient), or ``"passive"``, taken as drawing no current in the linear
  range (a gapped or saturable reactor that conducts only on over-voltage).

Tuned, the divider's capacitance and the reactor cancel at the system
frequency and the steady-state ratio is that of the divider and the
transformer; a collapse of the primary voltage leaves energy in ``C_e``,
``L_c`` and the suppression circuit that rings out over a few cycles (the
"subsidence transient").  The model's output is divided by the
magnitude of its own steady-state gain at the system frequency, so that the
record's ratio is exact in the steady state (a CVT is calibrated at its rated
burden) and only the transient, and a phase displacement of hundredths of a
degree, depart from the primary voltage.

Not a substitute for a manufacturer's model: no non-linear suppression
circuit, no stray capacitances, no core saturation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

FSC_KINDS = ("active", "passive")


@dataclass(frozen=True)
class Cvt:
    """Parameters of the CVT model (demo values: invented, of a plausible size).

    Parameters
    ----------
    capacitance_f : float
        ``C1 + C2``, the divider's capacitance seen from the intermediate
        voltage [F].
    intermediate_kv : float
        Intermediate voltage, phase to ground, at rated primary voltage [kV].
    r_series_ohm : float
        Resistance of the tuning reactor and the transformer windings,
        referred to the intermediate voltage [ohm].
    x_magnetising_ohm : float
        Magnetising reactance at the system frequency, referred to the
        intermediate voltage [ohm].
    burden_va : float
        Resistive burden at rated secondary voltage, per phase [VA].
    fsc : {"active", "passive"}
        Ferroresonance suppression circuit (module docstring).
    fsc_capacitance_f : float
        Capacitor of the active circuit, on the secondary side [F]; its
        inductor is tuned with it to the system frequency.
    fsc_resistance_ohm : float
        Damping resistor of the active circuit, on the secondary side [ohm].
    """

    capacitance_f: float = 100e-9
    intermediate_kv: float = 13.0
    r_series_ohm: float = 400.0
    x_magnetising_ohm: float = 1.0e7
    burden_va: float = 100.0
    fsc: str = "active"
    fsc_capacitance_f: float = 9.6e-6
    fsc_resistance_ohm: float = 37.5

    def __post_init__(self) -> None:
        for name in ("capacitance_f", "intermediate_kv", "r_series_ohm", "x_magnetising_ohm",
                     "burden_va", "fsc_capacitance_f", "fsc_resistance_ohm"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
                raise ValueError(f"Cvt.{name} must be a positive number, got {v!r}")
        if self.fsc not in FSC_KINDS:
            raise ValueError(f"Cvt.fsc must be one of {', '.join(FSC_KINDS)}, got {self.fsc!r}")


def cvt_state_space(params: Cvt, frequency_hz: float, secondary_v: float
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Continuous state space ``(A, B, C)`` from the divider's Thevenin EMF to the output.

    States: the voltage of ``C_e``, the series current, the magnetising
    current, and for the active suppression circuit the voltage of its
    capacitor and the current of its inductor (all referred to the
    intermediate voltage).  Input: ``e`` [V]; output: the voltage across the
    burden, referred to the intermediate voltage [V].  ``secondary_v`` is the
    rated secondary phase-to-ground voltage [V] (it refers the burden and the
    suppression circuit to the intermediate voltage).
    """
    w = 2.0 * math.pi * frequency_hz
    v_int = params.intermediate_kv * 1e3
    ce = params.capacitance_f
    lc = 1.0 / (w * w * ce)
    rc = params.r_series_ohm
    lm = params.x_magnetising_ohm / w
    g = params.burden_va / (v_int * v_int)            # burden conductance, referred
    n2 = (v_int / secondary_v) ** 2                   # impedance ratio secondary -> intermediate
    active = params.fsc == "active"
    if active:
        cf = params.fsc_capacitance_f / n2
        lf = 1.0 / (w * w * cf)
        rf = params.fsc_resistance_ohm * n2
        # output V from KCL: i = g V + i_m + (V - u) / R_f
        den = g + 1.0 / rf
        c_out = np.array([0.0, 1.0 / den, -1.0 / den, 1.0 / (rf * den), 0.0])
    else:
        c_out = np.array([0.0, 1.0 / g, -1.0 / g])
    n = c_out.size
    a = np.zeros((n, n))
    b = np.zeros((n, 1))
    a[0, 1] = 1.0 / ce                                # C_e dv/dt = i
    a[1] = -c_out / lc                                # L_c di/dt = e - v_Ce - R_c i - V
    a[1, 0] -= 1.0 / lc
    a[1, 1] -= rc / lc
    b[1, 0] = 1.0 / lc
    a[2] = c_out / lm                                 # L_m di_m/dt = V
    if active:
        a[3] = c_out / (rf * cf)                      # C_f du/dt = (V - u) / R_f - i_Lf
        a[3, 3] -= 1.0 / (rf * cf)
        a[3, 4] -= 1.0 / cf
        a[4, 3] = 1.0 / lf                            # L_f di_Lf/dt = u
    return a, b, c_out[None, :]


def cvt_output(v_primary: np.ndarray, dt_s: float, frequency_hz: float, params: Cvt,
               secondary_v: float) -> np.ndarray:
    """The CVT's output for primary voltages, on the primary scale [V].

    Parameters
    ----------
    v_primary : ndarray, shape (phases, n)
        Primary phase-to-ground voltages [V] every ``dt_s``; the first cycle
        is taken as the periodic steady state before the event (the model
        starts settled on its fundamental).
    dt_s : float
        Time step [s], small against the cycle.
    frequency_hz : float
        System frequency [Hz] the CVT is tuned to.
    params : Cvt
    secondary_v : float
        Rated secondary phase-to-ground voltage [V].

    Returns
    -------
    ndarray, same shape
        Output voltage divided by the magnitude of the model's steady-state
        gain at ``frequency_hz`` (the divider and transformer ratios), so that
        it equals the primary voltage in the steady state but for the
        circuit's own phase displacement (:func:`cvt_gain`) [V].

    Notes
    -----
    Discretised by the bilinear (trapezoidal) rule
    (:func:`scipy.signal.cont2discrete`), which delays no frequency; the
    initial state is the discrete system's periodic response to the first
    cycle's fundamental.
    """
    from scipy.signal import cont2discrete

    v = np.atleast_2d(np.asarray(v_primary, dtype=float))
    a, b, c = cvt_state_space(params, frequency_hz, secondary_v)
    ad, bd, cd, dd, _ = cont2discrete((a, b, c, np.zeros((1, 1))), dt_s, method="bilinear")
    bd, cd, d0 = bd[:, 0], cd[0], float(dd[0, 0])
    w_dt = 2.0 * math.pi * frequency_hz * dt_s
    z = np.exp(1j * w_dt)
    x_per_u = np.linalg.solve(z * np.eye(a.shape[0]) - ad, bd)     # state per unit input
    gain = complex(cd @ x_per_u + d0)
    n_cycle = max(1, int(round(2.0 * math.pi / w_dt)))
    k = np.arange(min(n_cycle, v.shape[1]))
    # peak phasor of each phase's first cycle; the state's periodic response to it
    ph = 2.0 / k.size * (v[:, :k.size] @ np.exp(-1j * w_dt * k))
    state = np.real(np.outer(x_per_u, ph))                           # (states, phases)
    out = np.empty_like(v)
    for i in range(v.shape[1]):
        u = v[:, i]
        out[:, i] = cd @ state + d0 * u
        state = ad @ state + np.outer(bd, u)
    # the steady-state magnitude divided out; the phase displacement left is the
    # circuit's own (R_c against the burden: hundredths of a degree, cvt_gain)
    return (out / abs(gain)).reshape(np.shape(v_primary))


def cvt_gain(params: Cvt, frequency_hz: float, secondary_v: float,
             at_hz: float | None = None) -> complex:
    """The continuous model's gain from the divider's EMF to the output at ``at_hz``.

    ``at_hz`` defaults to the system frequency, where a tuned CVT's gain is
    ``R_load / (R_load + R_c)`` with ``R_load`` the burden's resistance in
    parallel with the magnetising reactance.
    """
    a, b, c = cvt_state_space(params, frequency_hz, secondary_v)
    s = 2j * math.pi * (frequency_hz if at_hz is None else at_hz)
    return complex((c @ np.linalg.solve(s * np.eye(a.shape[0]) - a, b))[0, 0])
