"""Single-ended impedance methods on one terminal's phasors.

Every method here solves the same loop equation along the route

    V_loop = dV_loop(d) + R_loop I_f,loop                                   (1)

(``dV_loop(d) = Z1(d) i_z1 + Z0(d) i_z0``, see :mod:`eventlab.locate.loops`)
for the distance ``d``; they differ in the current assumed in phase with the
unknown fault current ``I_f,loop``.  Multiplying (1) by the conjugate of that
reference current ``I_ref`` and keeping the imaginary part removes the
resistive term:

    Im[(V_loop - dV_loop(d)) conj(I_ref)] = 0                               (2)

which is linear in ``d`` within each homogeneous section, so sectioned lines
are solved section by section along the route.  Shunt capacitance is
neglected.  Zero-sequence mutual coupling to a parallel circuit is
compensated in the drop (``+ Z0m(d) I0,par``, see :mod:`eventlab.locate.loops`)
when the end's ``i_parallel_residual`` is recorded; without it the methods
say so in their notes.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy.optimize import brentq

from eventlab.errors import SignalError
from eventlab.symmetrical import abc_to_012

from .estimate import LocatorEstimate
from .inputs import TerminalPhasors
from .line import LineData, LineSection
from .loops import (
    LoopSpec,
    fault_resistance_from_loop,
    loop_current,
    loop_drop,
    loop_drop_currents,
    loop_voltage,
    mutual_drop_current,
    select_loop,
    superimposed_fault_factor,
)

_TINY_A = 1e-9


def _solve_along_route(line: LineData, v_loop: complex, i_z1: complex, i_z0: complex,
                       reference: Callable[[LineSection], complex],
                       i_zm: complex = 0j) -> float:
    """Solve (2) section by section; extrapolate beyond the ends if needed [km]."""
    bounds = line.boundaries_km()
    candidates: list[tuple[float, float, float]] = []
    zm = complex(line.z0m_ohm_per_km)
    for k, sec in enumerate(line.sections):
        z1a, z0a = line.z_to(bounds[k])
        a = z1a * i_z1 + z0a * i_z0 + zm * bounds[k] * i_zm
        b = sec.z1_ohm_per_km * i_z1 + sec.z0_ohm_per_km * i_z0 + zm * i_zm
        r = np.conj(reference(sec))
        den = (b * r).imag
        if abs(den) < 1e-300:
            continue
        x = float(((v_loop - a) * r).imag / den)
        candidates.append((bounds[k] + x, x, sec.length_km))
        tol = 1e-9 * sec.length_km
        if -tol <= x <= sec.length_km + tol and (x >= 0 or k == 0):
            return bounds[k] + x
    if not candidates:
        raise SignalError("single-ended location: the loop current is zero; "
                          "expected fault-window currents")
    first = candidates[0]
    return first[0] if first[1] < 0 else candidates[-1][0]


def _mutual(end: TerminalPhasors, line: LineData, loop: LoopSpec
            ) -> tuple[complex, tuple[str, ...]]:
    """``i_zm`` of the end's loop and a note on the mutual coupling compensation."""
    if loop.kind != "ground" or line.z0m_ohm_per_km == 0:
        return 0j, ()
    if end.i_parallel_residual is None:
        return 0j, (f"mutual coupling with {line.parallel_line or 'the parallel circuit'} not "
                    f"compensated: its residual current is not in the record",)
    return (mutual_drop_current(end.i_parallel_residual, loop),
            (f"mutual coupling with {line.parallel_line or 'the parallel circuit'} "
             f"compensated (k0m 3 I0,par)",))


def _estimate(method: str, end: TerminalPhasors, line: LineData, d_km: float,
              loop: LoopSpec, r_fault: float | None, notes: tuple[str, ...],
              extra: dict | None = None) -> LocatorEstimate:
    notes = notes + _mutual(end, line, loop)[1]
    return LocatorEstimate(method=method, distance_km=float(d_km), length_km=line.length_km,
                           terminal=end.terminal_id or line.from_terminal,
                           fault_resistance_ohm=r_fault,
                           notes=(f"loop {loop.name}",) + notes, extra=dict(extra or {}))


def reactance(end: TerminalPhasors, line: LineData) -> LocatorEstimate:
    """Simple reactance method: the reactance of the compensated loop impedance.

    Parameters
    ----------
    end : TerminalPhasors
        Phasors of the terminal at ``line``'s from-end [V], [A].
    line : LineData
        The line seen from that end.

    Returns
    -------
    LocatorEstimate
        Distance [km]; no fault resistance.

    Notes
    -----
    ``d = Im(V_loop / I_comp) / x1`` with ``I_comp = I_p + k0 3 I0`` (ground
    loops) or the loop current, i.e. (2) with ``I_ref = I_comp`` per section.
    Exact only when the fault current is in phase with the local loop current
    (no fault resistance, or no remote infeed and no load).  Source: IEEE Std
    C37.114-2014, simple reactance method (from memory); T. Takagi et al.,
    IEEE Trans. PAS-101(8), 1982, eq. for the reactance principle (from memory).
    """
    loop = select_loop(end.fault_type)
    v = loop_voltage(end.v_fault, loop)
    i_z1, i_z0 = loop_drop_currents(end.i_fault, loop)
    i_zm = _mutual(end, line, loop)[0]
    d = _solve_along_route(
        line, v, i_z1, i_z0,
        lambda s: i_z1 + (s.z0_ohm_per_km * i_z0 + line.z0m_ohm_per_km * i_zm) / s.z1_ohm_per_km,
        i_zm)
    return _estimate("reactance", end, line, d, loop, None,
                     ("fault current assumed in phase with the local loop current",))


def takagi(end: TerminalPhasors, line: LineData) -> LocatorEstimate:
    """Takagi method: the superimposed loop current as the fault-current reference.

    Notes
    -----
    ``d = Im(V_loop conj(dI)) / Im(z1 I_comp conj(dI))`` with
    ``dI = I_loop,fault - I_loop,pre`` (equation (2) with ``I_ref = dI``).
    Exact when the current distribution factor of the network is real (all
    impedances of the superimposed network with one angle), with any load and
    fault resistance.  Source: T. Takagi, Y. Yamakoshi, M. Yamaura,
    R. Kondow, T. Matsushima, "Development of a new type fault locator using
    the one-terminal voltage and current data", IEEE Trans. PAS-101(8),
    pp. 2892-2898, 1982 (from memory).
    """
    loop = select_loop(end.fault_type)
    v = loop_voltage(end.v_fault, loop)
    i_z1, i_z0 = loop_drop_currents(end.i_fault, loop)
    d_i = loop_current(end.i_superimposed, loop)
    if abs(d_i) < _TINY_A:
        raise SignalError("takagi: superimposed loop current is zero; expected pre-fault "
                          "phasors different from the fault-window phasors")
    d = _solve_along_route(line, v, i_z1, i_z0, lambda s: d_i, _mutual(end, line, loop)[0])
    return _estimate("takagi", end, line, d, loop, None,
                     ("superimposed current assumed in phase with the fault current",))


def modified_takagi_reference(end: TerminalPhasors, loop: LoopSpec) -> tuple[complex, float]:
    """The reference current of the modified Takagi method and its intrinsic angle.

    Returns ``(i_base, phi)`` with ``i_base`` the local reference quantity [A]
    and ``phi`` [rad] the angle of ``i_base / (D I_f,loop)`` for a real
    distribution factor ``D``:

    - ground loops: ``I0`` (``I0 = D0 I_f / 3``, ``phi = 0``);
    - phase-to-phase faults: ``I2`` referred to the sound phase ``u``
      (``I_f,p - I_f,q = j 2 sqrt(3) I_f2,u``, ``phi = -pi/2``);
    - two-phase-to-ground and three-phase faults: the superimposed loop
      current (``phi = 0``).
    """
    code = end.fault_type
    if loop.kind == "ground":
        return complex(abc_to_012(end.i_fault)[0]), 0.0
    if loop.kind == "phase" and not code.endswith("G"):
        u = ({0, 1, 2} - set(loop.phases)).pop()
        order = [u, (u + 1) % 3, (u + 2) % 3]
        return complex(abc_to_012(end.i_fault[order])[2]), -np.pi / 2
    return loop_current(end.i_superimposed, loop), 0.0


def modified_takagi(end: TerminalPhasors, line: LineData,
                    distribution_angle_rad: float = 0.0) -> LocatorEstimate:
    """Modified Takagi method: zero-sequence current reference with angle correction.

    Parameters
    ----------
    end, line
        As for :func:`takagi`.
    distribution_angle_rad : float
        Angle ``T`` [rad] of the current distribution factor of the reference
        quantity's sequence network (``D0`` for ground faults, ``D1 = D2``
        otherwise), from the network model; 0 for a homogeneous system.

    Notes
    -----
    Equation (2) with ``I_ref = i_base exp(-j (T + phi))``, see
    :func:`modified_takagi_reference`.  For ground faults ``i_base = I0``:
    load-independent, and exact when ``T`` is the true angle of ``D0``.
    Source: IEEE Std C37.114-2014, modified Takagi method (from memory);
    K. Zimmerman, D. Costello, "Impedance-based fault location experience",
    58th Annual Conference for Protective Relay Engineers, 2005 (from memory).
    """
    loop = select_loop(end.fault_type)
    v = loop_voltage(end.v_fault, loop)
    i_z1, i_z0 = loop_drop_currents(end.i_fault, loop)
    base, phi = modified_takagi_reference(end, loop)
    if abs(base) < _TINY_A:
        raise SignalError(f"modified_takagi: reference current of loop {loop.name} is zero")
    ref = base * np.exp(-1j * (distribution_angle_rad + phi))
    d = _solve_along_route(line, v, i_z1, i_z0, lambda s: ref, _mutual(end, line, loop)[0])
    return _estimate("modified_takagi", end, line, d, loop, None,
                     (f"angle correction {np.degrees(distribution_angle_rad):.2f} deg",),
                     {"angle_correction_deg": float(np.degrees(distribution_angle_rad))})


def distribution_factors(line: LineData, d_km: float, z_local: tuple[complex, complex],
                         z_remote: tuple[complex, complex]) -> tuple[complex, complex]:
    """Two-source current distribution factors ``(D1, D0)`` for a fault at ``d_km``.

    ``D = (Z_R + Z_L - Z(d)) / (Z_S + Z_L + Z_R)`` per sequence: the share of
    the fault current supplied from the from-end (current divider of the
    superimposed network), with ``z_local = (Z_S1, Z_S0)`` and
    ``z_remote = (Z_R1, Z_R0)`` [ohm].
    """
    z1d, z0d = line.z_to(d_km)
    zl1, zl0 = line.z1_ohm, line.z0_ohm
    d1 = (z_remote[0] + zl1 - z1d) / (z_local[0] + zl1 + z_remote[0])
    d0 = (z_remote[1] + zl0 - z0d) / (z_local[1] + zl0 + z_remote[1])
    return complex(d1), complex(d0)


def distribution_factors_network(line: LineData, d_km: float, z_ext1: np.ndarray,
                                 z_ext0: np.ndarray) -> tuple[complex, complex]:
    """Current distribution factors ``(D1, D0)`` with the rest of the network as a two-port.

    ``z_ext = [[Z11, Z12], [Z21, Z22]]`` [ohm] per sequence is the impedance
    matrix of the network outside the faulted line seen at its from-bus (1)
    and to-bus (2), the line removed (sources, parallel circuits, meshes):
    the driving-point impedances ``Z11``, ``Z22`` and the transfer impedance
    ``Z12`` of any path between the buses.  With the fault drawing ``I_f`` at
    ``d`` and the external voltages ``V = -Z_ext [i_1, i_2]`` (``i_k`` the
    currents the line draws from bus k), ``V_1 - Z(d) i_1 = V_2 - (Z_L - Z(d)) i_2``
    and ``i_1 + i_2 = I_f`` give

        D = i_1 / I_f = (Z22 - Z12 + Z_L - Z(d)) / (Z11 + Z22 - Z12 - Z21 + Z_L)

    which is :func:`distribution_factors` for ``Z_ext = diag(Z_S, Z_R)``
    (circuit analysis, common practice, no source).
    """
    z1d, z0d = line.z_to(d_km)
    out = []
    for z, zl, zd in ((np.asarray(z_ext1), line.z1_ohm, z1d), (np.asarray(z_ext0), line.z0_ohm, z0d)):
        num = z[1, 1] - z[0, 1] + zl - zd
        den = z[0, 0] + z[1, 1] - z[0, 1] - z[1, 0] + zl
        out.append(complex(num / den))
    return out[0], out[1]


def eriksson(end: TerminalPhasors, line: LineData,
             z_local: tuple[complex, complex] | None = None,
             z_remote: tuple[complex, complex] | None = None, *,
             external: tuple[np.ndarray, np.ndarray] | None = None,
             distribution: Callable[[float], tuple[complex, complex]] | None = None
             ) -> LocatorEstimate:
    """Eriksson-type method: both source impedances give the fault current.

    Parameters
    ----------
    end, line
        As for :func:`takagi`.
    z_local, z_remote : (complex, complex)
        Positive- and zero-sequence source impedances behind the from-end and
        behind the to-end [ohm] (the published two-source system).
    external : (ndarray, ndarray), optional
        Instead of them, the impedance matrices ``(Z_ext1, Z_ext0)`` (2 x 2,
        [ohm]) of the whole network outside the line seen at its two buses
        (:func:`distribution_factors_network`): a parallel circuit or a mesh
        between the ends then shares the fault current as it does.
    distribution : callable, optional
        Instead of both, ``d_km -> (D1, D0)`` itself (e.g.
        :func:`eventlab.locate.model_link.sampled_distribution`, which holds
        the zero-sequence coupling of a parallel circuit too).

    Returns
    -------
    LocatorEstimate
        Distance [km] and fault resistance [ohm].

    Notes
    -----
    With the distribution factor ``D(d)`` of the two-source system
    (:func:`distribution_factors`, :func:`~eventlab.locate.loops.superimposed_fault_factor`)
    the fault current is ``I_f,loop = dI_loop / D(d)`` and (1) becomes

        V_loop - dV_loop(d) = R_loop dI_loop / D(d),

    a quadratic in ``d`` for a homogeneous line; its imaginary part after
    multiplying by ``D(d) conj(dI_loop)`` gives ``d``, the real part ``R``.
    Source: L. Eriksson, M. M. Saha, G. D. Rockefeller, "An accurate fault
    locator with compensation for apparent reactance in the fault resistance
    resulting from remote-end infeed", IEEE Trans. PAS-104(2), pp. 424-436,
    1985 (from memory).
    """
    if distribution is None and external is None and (z_local is None or z_remote is None):
        raise SignalError("eriksson: give the source impedances behind both ends, or the "
                          "external network's two-port")
    loop = select_loop(end.fault_type)
    v = loop_voltage(end.v_fault, loop)
    d_i = loop_current(end.i_superimposed, loop)
    if abs(d_i) < _TINY_A:
        raise SignalError("eriksson: superimposed loop current is zero")
    length = line.length_km
    i_zm = _mutual(end, line, loop)[0]

    def dist(d):
        if distribution is not None:
            d1, d0 = distribution(d)
        elif external is not None:
            d1, d0 = distribution_factors_network(line, d, external[0], external[1])
        else:
            d1, d0 = distribution_factors(line, d, z_local, z_remote)
        return superimposed_fault_factor(loop, d1, d0)

    def f(d):
        return ((v - loop_drop(line, d, end.i_fault, loop, i_zm)) * dist(d) * np.conj(d_i)).imag

    grid = np.linspace(-0.25 * length, 1.25 * length, 301)
    vals = np.array([f(d) for d in grid])
    roots = [brentq(f, grid[k], grid[k + 1], xtol=1e-12 * length)
             for k in range(len(grid) - 1) if vals[k] == 0 or vals[k] * vals[k + 1] < 0]
    if not roots:
        # fall back to the Takagi answer: no physical root in reach
        return _estimate("eriksson", end, line, takagi(end, line).distance_km, loop, None,
                         ("no root of the Eriksson equation near the line; Takagi value",))
    inside = [r for r in roots if 0.0 <= r <= length]
    if inside:
        d_t = takagi(end, line).distance_km
        d = min(inside, key=lambda r: abs(r - d_t))
    else:
        d = min(roots, key=lambda r: min(abs(r), abs(r - length)))
    r_loop = float(((v - loop_drop(line, d, end.i_fault, loop, i_zm)) * dist(d) / d_i).real)
    return _estimate("eriksson", end, line, d, loop,
                     fault_resistance_from_loop(end.fault_type, r_loop),
                     ("the model's own current distribution along the line"
                      if distribution is not None else
                      "the rest of the network as the model's two-port at the line's buses"
                      if external is not None else
                      "two-source network with the model's source impedances",))
