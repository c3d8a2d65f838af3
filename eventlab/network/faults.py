"""Shunt fault calculation by symmetrical components, with pre-fault load.

:func:`solve_fault` puts a fault point on a line (or at a bus), finds the
Thevenin sequence impedances there, solves the fault's boundary conditions in
the phase domain, and returns phase and sequence currents and voltages at the
fault, at every bus, in every branch and at every model terminal, in primary
units (A, V line-to-ground) and per unit.  :func:`prefault` gives the load-flow
state of the linear network the sources drive.

Fault resistance conventions (common practice, no source):

* phase-to-ground (AG, BG, CG): ``Rf`` from the faulted phase to ground;
* phase-to-phase (AB, BC, CA): ``Rf`` is the total resistance between them;
* two-phase-to-ground (ABG, BCG, CAG): ``Rf`` in each faulted phase to a common
  point, ``Rg`` from that point to ground;
* three-phase (ABC): ``Rf`` in each phase to a star point, floating when
  ``Rg`` is 0 and grounded through ``Rg`` otherwise (in a balanced network
  the star point carries no current, so both give the same result).

Notes
-----
With ``Z_s`` the inverse of the sequence admittance matrix ``Y_s`` (the fault
point a node of it), ``Z_th = A diag(Z0_ff, Z1_ff, Z2_ff) A^-1`` is the phase
Thevenin impedance at the fault and ``V_pre`` the pre-fault phase voltage
there.  The fault type gives three linear conditions ``C_v V_f + C_i I_f = 0``
(currents ``I_f`` leaving the network into the fault); with
``V_f = V_pre - Z_th I_f``::

    (C_i - C_v Z_th) I_f = -C_v V_pre

exact also for bolted faults.  Then ``I_f012 = A^-1 I_f`` and every node's
sequence voltage is ``V_s = V_s,pre - Z_s[:, f] I_f,s`` (superposition);
branch currents follow from the primitive admittances.  This is the general
form of the classical interconnection of sequence networks (Anderson,
*Analysis of Faulted Power Systems*, 1973, ch. 3; Grainger & Stevenson 1994,
ch. 12), which :mod:`eventlab.network.showwork` writes out per fault type.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from eventlab.errors import ModelError
from eventlab.faulttypes import check_fault_type, faulted_phases
from eventlab.network.model import NetworkModel, without_line_capacitance
from eventlab.network.perunit import i_base_a, v_base_v, z_base_ohm
from eventlab.network.sequence import SequenceNetwork, build_sequence_networks
from eventlab.symmetrical import FORTESCUE, FORTESCUE_INV


@dataclass(frozen=True)
class FaultSpec:
    """A shunt fault.

    Parameters
    ----------
    line : str or None
        Faulted line id (None for a bus fault).
    fraction : float or None
        Position along the line's route from its ``from`` bus, 0..1.
    type : str
        Fault type code (AG ... ABC), any case/order; stored canonical.
    r_fault_ohm : float
        Fault resistance Rf [ohm] (conventions in the module docstring).
    r_ground_ohm : float
        Ground resistance Rg [ohm] for ABG/BCG/CAG and ABC.
    bus : str, optional (keyword)
        Fault at this bus instead of on a line.
    """

    line: str | None
    fraction: float | None
    type: str
    r_fault_ohm: float = 0.0
    r_ground_ohm: float = 0.0
    bus: str | None = field(default=None, kw_only=True)

    def __post_init__(self) -> None:
        try:
            code = check_fault_type(self.type)
        except ValueError as exc:
            raise ModelError(f"FaultSpec: type: {exc}") from None
        object.__setattr__(self, "type", code)
        for name in ("r_fault_ohm", "r_ground_ohm"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
                raise ModelError(f"FaultSpec: {name}: expected a resistance >= 0 [ohm], got {v!r}")
            object.__setattr__(self, name, float(v))
        if self.r_ground_ohm and code not in ("ABG", "BCG", "CAG", "ABC"):
            raise ModelError(f"FaultSpec: r_ground_ohm: applies to ABG, BCG, CAG and ABC only, "
                             f"not {code} (put the whole resistance in r_fault_ohm)")
        if (self.bus is None) == (self.line is None):
            raise ModelError("FaultSpec: give either line (with fraction) or bus")
        if self.line is not None:
            f = self.fraction
            if not (isinstance(f, (int, float)) and math.isfinite(f) and 0.0 <= f <= 1.0):
                raise ModelError(f"FaultSpec: fraction: expected a number within 0..1, got {f!r}")
            object.__setattr__(self, "fraction", float(f))

    @classmethod
    def at_bus(cls, bus: str, type: str, r_fault_ohm: float = 0.0,
               r_ground_ohm: float = 0.0) -> FaultSpec:
        """A fault at ``bus``."""
        return cls(None, None, type, r_fault_ohm, r_ground_ohm, bus=bus)


def _freeze_arrays(obj) -> None:
    """Make every ndarray field of a result read-only (results are immutable)."""
    for name, value in vars(obj).items():
        if isinstance(value, np.ndarray) and not name.startswith("_"):
            value.flags.writeable = False


class _ReadOnlyArrays:
    def __post_init__(self) -> None:
        _freeze_arrays(self)


@dataclass(frozen=True)
class FaultPoint(_ReadOnlyArrays):
    """Quantities at the fault point.

    ``i_abc`` flows from the network into the fault [A]; ``v_abc`` line-to-ground [V];
    ``*_012`` the sequence values (phase-A referred) in primary and ``*_pu`` per unit.
    ``z_thevenin_pu`` / ``z_thevenin_ohm``: Thevenin sequence impedances (0, 1, 2).
    """

    node: str
    kv: float
    i_abc: np.ndarray
    v_abc: np.ndarray
    i_012: np.ndarray
    v_012: np.ndarray
    i_012_pu: np.ndarray
    v_012_pu: np.ndarray
    v_pre_abc: np.ndarray
    v_pre_pu: complex
    z_thevenin_pu: np.ndarray
    z_thevenin_ohm: np.ndarray
    r_fault_pu: float
    r_ground_pu: float


@dataclass(frozen=True)
class TerminalState(_ReadOnlyArrays):
    """A model terminal during the fault and before it.

    Currents flow from the terminal's bus into the line [A] (negated when the
    terminal's ``ct_polarity`` is ``"reversed"``, as its recorder sees them);
    voltages line-to-ground [V].
    """

    id: str
    line: str
    bus: str
    v_abc: np.ndarray
    i_abc: np.ndarray
    v_abc_pre: np.ndarray
    i_abc_pre: np.ndarray
    v_012: np.ndarray
    i_012: np.ndarray
    v_012_pu: np.ndarray
    i_012_pu: np.ndarray


@dataclass(frozen=True)
class BusState(_ReadOnlyArrays):
    """Bus voltages during the fault and before it [V line-to-ground] and per unit."""

    id: str
    kv: float
    v_abc: np.ndarray
    v_abc_pre: np.ndarray
    v_012: np.ndarray
    v_012_pu: np.ndarray


@dataclass(frozen=True)
class BranchCurrent(_ReadOnlyArrays):
    """A branch's contribution at one of its buses.

    ``kind`` is ``"line"``, ``"transformer"`` or ``"source"``.  For lines and
    transformers the current flows from ``bus`` into the branch; for a source,
    from the source into ``bus``.  [A] and per unit.
    """

    element: str
    kind: str
    bus: str
    i_abc: np.ndarray
    i_abc_pre: np.ndarray
    i_012: np.ndarray
    i_012_pu: np.ndarray


@dataclass(frozen=True)
class FaultResult:
    """Result of :func:`solve_fault`.

    Attributes
    ----------
    spec : FaultSpec
    fault : FaultPoint
    terminals : dict
        terminal id -> :class:`TerminalState`.
    buses : dict
        bus id -> :class:`BusState` (built on first access).
    branches : tuple of BranchCurrent
        Every line, transformer and source contribution at each of its buses
        (built on first access).
    base_mva : float
    """

    spec: FaultSpec
    fault: FaultPoint
    terminals: dict[str, TerminalState]
    base_mva: float
    _model: NetworkModel = field(repr=False, compare=False)
    _net: SequenceNetwork = field(repr=False, compare=False)
    _v012: np.ndarray = field(repr=False, compare=False)
    _v_pre: np.ndarray = field(repr=False, compare=False)

    @cached_property
    def buses(self) -> dict[str, BusState]:
        out = {}
        for i, b in enumerate(self._model.buses):
            vb = v_base_v(b.kv)
            out[b.id] = BusState(id=b.id, kv=b.kv, v_abc=(FORTESCUE @ self._v012[:, i]) * vb,
                                 v_abc_pre=(FORTESCUE @ self._v_pre[:, i]) * vb,
                                 v_012=self._v012[:, i] * vb, v_012_pu=self._v012[:, i].copy())
        return out

    @cached_property
    def branches(self) -> tuple[BranchCurrent, ...]:
        net, model = self._net, self._model
        base = model.system.base_mva
        i_f_012 = self.fault.i_012_pu
        port_i, port_i_pre = [], []
        for el in net.elements:
            vi = self._v012[:, el.idx]
            port_i.append(np.stack([el.y[0] @ vi[0], el.y[1] @ vi[1], el.y[2] @ vi[2]]))
            port_i_pre.append(el.y[1] @ self._v_pre[1, el.idx])
        out: list[BranchCurrent] = []
        for (eid, bus), (e, p) in net.ports.items():
            el = net.elements[e]
            i012 = port_i[e][:, p]
            if net.fault_at_end == (eid, bus):
                i012 = i012 + i_f_012
            ib = i_base_a(float(net.node_kv[el.idx[p]]), base)
            out.append(BranchCurrent(
                element=eid, kind="transformer" if el.kind == "transformer" else "line", bus=bus,
                i_abc=(FORTESCUE @ i012) * ib,
                i_abc_pre=(FORTESCUE[:, 1] * port_i_pre[e][p]) * ib,
                i_012=i012 * ib, i_012_pu=i012))
        for src, (i, e, z0, z1, z2) in zip(model.sources, net.sources, strict=True):
            ib = i_base_a(float(net.node_kv[i]), base)
            v = self._v012[:, i]
            i012 = np.array([-v[0] / z0, (e - v[1]) / z1, -v[2] / z2])
            i1pre = (e - self._v_pre[1, i]) / z1
            out.append(BranchCurrent(
                element=f"source@{src.bus}", kind="source", bus=src.bus,
                i_abc=(FORTESCUE @ i012) * ib, i_abc_pre=(FORTESCUE[:, 1] * i1pre) * ib,
                i_012=i012 * ib, i_012_pu=i012))
        return tuple(out)


# ----------------------------------------------------------------------------- fault matrices

def boundary_matrices(code: str, r_fault_pu: float, r_ground_pu: float
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Boundary conditions ``C_v V + C_i I = 0`` of a fault type in the phase domain.

    Parameters
    ----------
    code : str
        Fault type.
    r_fault_pu, r_ground_pu : float
        Rf and Rg [pu].

    Returns
    -------
    c_v, c_i : ndarray, shape (3, 3)
    """
    code = check_fault_type(code)
    ph = faulted_phases(code)
    rf, rg = r_fault_pu, r_ground_pu
    cv = np.zeros((3, 3))
    ci = np.zeros((3, 3))
    others = [k for k in range(3) if k not in ph]
    row = 0
    for q in others:  # unfaulted phases carry no fault current
        ci[row, q] = 1.0
        row += 1
    if len(ph) == 1:
        p = ph[0]
        cv[row, p], ci[row, p] = 1.0, -rf
    elif len(ph) == 2 and not code.endswith("G"):
        p, q = ph
        ci[row, p] = ci[row, q] = 1.0
        row += 1
        cv[row, p], cv[row, q], ci[row, p] = 1.0, -1.0, -rf
    elif len(ph) == 2:
        for p in ph:
            cv[row, p] = 1.0
            ci[row, p] -= rf
            for q in ph:
                ci[row, q] -= rg
            row += 1
        row -= 1
    elif rg > 0.0:  # ABC grounded through Rg
        for p in range(3):
            cv[p, p] = 1.0
            ci[p, p] -= rf
            ci[p, :] -= rg
        row = 2
    else:  # ABC with a floating star point
        ci[0, :] = 1.0
        for r, (p, q) in enumerate(((0, 1), (1, 2)), 1):
            cv[r, p], cv[r, q] = 1.0, -1.0
            ci[r, p], ci[r, q] = -rf, rf
        row = 2
    assert row == 2
    return cv, ci


def fault_currents_pu(code: str, z_th_012: np.ndarray, v_pre_012: np.ndarray,
                      r_fault_pu: float, r_ground_pu: float) -> np.ndarray:
    """Phase currents into the fault [pu] from the Thevenin sequence impedances.

    Parameters
    ----------
    z_th_012 : complex ndarray, shape (3,)
        Driving-point impedances (0, 1, 2) at the fault point [pu].
    v_pre_012 : complex ndarray, shape (3,)
        Pre-fault sequence voltage there [pu].

    Notes
    -----
    ``(C_i - C_v Z_th) I_f = -C_v V_pre`` with ``Z_th = A diag(z_th_012) A^-1``.
    """
    zth = FORTESCUE @ np.diag(z_th_012) @ FORTESCUE_INV
    v_pre = FORTESCUE @ v_pre_012
    cv, ci = boundary_matrices(code, r_fault_pu, r_ground_pu)
    return np.linalg.solve(ci - cv @ zth, -cv @ v_pre)


def reference_phase(code: str) -> int:
    """The phase the classical interconnection is written for (0=A, 1=B, 2=C).

    The faulted phase of a phase-to-ground fault, the healthy phase of a
    phase-to-phase or two-phase-to-ground fault, A for a three-phase fault.
    """
    ph = faulted_phases(code)
    if len(ph) == 1:
        return ph[0]
    if len(ph) == 2:
        return next(k for k in range(3) if k not in ph)
    return 0


#: x_A-referred = _REF_ROT[r] * x_r-referred, per sequence (0, 1, 2)
_A = complex(np.exp(2j * np.pi / 3))
_REF_ROT = {0: np.array([1, 1, 1], dtype=complex),
            1: np.array([1, _A, _A * _A], dtype=complex),
            2: np.array([1, _A * _A, _A], dtype=complex)}


def classical_fault_currents_012(code: str, z_th_012: np.ndarray, v_pre_pu: complex,
                                 r_fault_pu: float, r_ground_pu: float) -> np.ndarray:
    """Sequence currents into the fault by the classical interconnection [pu], phase-A referred.

    Parameters
    ----------
    code : str
        Fault type.
    z_th_012 : complex ndarray, shape (3,)
        Thevenin impedances Z0, Z1, Z2 at the fault [pu].
    v_pre_pu : complex
        Pre-fault positive-sequence (phase-A) voltage at the fault [pu].
    r_fault_pu, r_ground_pu : float
        Rf, Rg [pu].

    Notes
    -----
    With ``V`` the pre-fault voltage of the reference phase r
    (:func:`reference_phase`) and the sequence networks referred to r
    (Anderson 1973, ch. 3; Grainger & Stevenson 1994, sec. 12.2-12.4):

    * phase-to-ground, networks in series: ``I1 = I2 = I0 = V / (Z1 + Z2 + Z0 + 3 Rf)``;
    * phase-to-phase, positive and negative in parallel opposition:
      ``I1 = -I2 = V / (Z1 + Z2 + Rf)``, ``I0 = 0``;
    * two-phase-to-ground, the three in parallel: ``I1 = V / (Z1 + Rf + Zp)`` with
      ``Zp = (Z2 + Rf) || (Z0 + Rf + 3 Rg)``, ``I2 = -I1 (Z0 + Rf + 3 Rg) / S``,
      ``I0 = -I1 (Z2 + Rf) / S``, ``S = Z2 + Z0 + 2 Rf + 3 Rg``;
    * three-phase: ``I1 = V / (Z1 + Rf)``, ``I2 = I0 = 0``.

    Then ``I_a1 = a^k I_r1``, ``I_a2 = a^-k I_r2`` with k = 0, 1, 2 for r = A, B, C.
    """
    code = check_fault_type(code)
    z0, z1, z2 = (complex(z) for z in z_th_012)
    rf, rg = r_fault_pu, r_ground_pu
    r = reference_phase(code)
    v = v_pre_pu * (1.0, _A * _A, _A)[r]
    n = len(faulted_phases(code))
    if n == 1:
        i1 = v / (z1 + z2 + z0 + 3 * rf)
        i_r = np.array([i1, i1, i1])
    elif n == 2 and not code.endswith("G"):
        i1 = v / (z1 + z2 + rf)
        i_r = np.array([0.0, i1, -i1])
    elif n == 2:
        za, zg = z2 + rf, z0 + rf + 3 * rg
        i1 = v / (z1 + rf + za * zg / (za + zg))
        i_r = np.array([-i1 * za / (za + zg), i1, -i1 * zg / (za + zg)])
    else:
        i_r = np.array([0.0, v / (z1 + rf), 0.0])
    return _REF_ROT[r] * i_r


# ----------------------------------------------------------------------------- solving

_NET_CACHE_SIZE = 8


def _network(model: NetworkModel, spec: FaultSpec | None) -> SequenceNetwork:
    """Sequence networks for a fault position, from a small per-model cache."""
    key = (None, None, None) if spec is None else (spec.line, spec.fraction, spec.bus)
    cache = model._cache.setdefault("nets", {})
    net = cache.get(key)
    if net is None:
        if spec is None:
            net = build_sequence_networks(model)
        else:
            net = build_sequence_networks(model, line=spec.line, fraction=spec.fraction,
                                          bus=spec.bus)
        if len(cache) >= _NET_CACHE_SIZE:
            del cache[next(iter(cache))]
        cache[key] = net
    return net


def _solve(net: SequenceNetwork, rhs_f: int | None):
    """Pre-fault positive-sequence voltages and the fault-node columns of Z0, Z1, Z2."""
    n = len(net.node_names)
    if rhs_f is None:
        return np.linalg.solve(net.y[1], net.injection), None
    e = np.zeros((n, 1), dtype=complex)
    e[rhs_f, 0] = 1.0
    x1 = np.linalg.solve(net.y[1], np.column_stack([net.injection, e[:, 0]]))
    z0 = np.linalg.solve(net.y[0], e)[:, 0]
    z2 = np.linalg.solve(net.y[2], e)[:, 0]
    return x1[:, 0], np.vstack([z0, x1[:, 1], z2])


def _singular(model: NetworkModel, exc: Exception) -> ModelError:
    return ModelError(f"{model.source_name}: the network cannot be solved ({exc}); is every "
                      f"part of it connected to a source?")


def solve_fault(model: NetworkModel, spec: FaultSpec) -> FaultResult:
    """Currents and voltages for a shunt fault, with pre-fault load by superposition.

    Parameters
    ----------
    model : NetworkModel
    spec : FaultSpec

    Returns
    -------
    FaultResult
        Primary A / V line-to-ground and per unit; see the module Notes for the method.
    """
    net = _network(model, spec)
    f = net.fault_node
    try:
        v1_pre, zcol = _solve(net, f)
        kv_f = float(net.node_kv[f])
        zb = z_base_ohm(kv_f, model.system.base_mva)
        rf, rg = spec.r_fault_ohm / zb, spec.r_ground_ohm / zb
        z_th = zcol[:, f]
        v_pre_012 = np.array([0.0, v1_pre[f], 0.0], dtype=complex)
        i_f_pu = fault_currents_pu(spec.type, z_th, v_pre_012, rf, rg)
    except np.linalg.LinAlgError as exc:
        raise _singular(model, exc) from None
    i_f_012 = FORTESCUE_INV @ i_f_pu
    v_pre = np.zeros((3, len(net.node_names)), dtype=complex)
    v_pre[1] = v1_pre
    v012 = v_pre - zcol * i_f_012[:, None]  # (3, n) per unit
    v_f_012 = v012[:, f]
    ib_f, vb_f = i_base_a(kv_f, model.system.base_mva), v_base_v(kv_f)
    fault = FaultPoint(
        node=net.node_names[f], kv=kv_f,
        i_abc=i_f_pu * ib_f, v_abc=(FORTESCUE @ v_f_012) * vb_f,
        i_012=i_f_012 * ib_f, v_012=v_f_012 * vb_f,
        i_012_pu=i_f_012, v_012_pu=v_f_012,
        v_pre_abc=(FORTESCUE @ v_pre_012) * vb_f, v_pre_pu=complex(v1_pre[f]),
        z_thevenin_pu=z_th.copy(), z_thevenin_ohm=z_th * zb,
        r_fault_pu=rf, r_ground_pu=rg,
    )
    return _assemble(model, net, spec, v012, v_pre, fault, i_f_012)


def _assemble(model, net, spec, v012, v_pre, fault, i_f_012):
    base = model.system.base_mva
    kvs = net.node_kv
    terminals: dict[str, TerminalState] = {}
    index = net.bus_index
    for t in model.terminals:
        e, p = net.ports[(t.line, t.bus)]
        el = net.elements[e]
        vi = v012[:, el.idx]
        i012 = np.array([el.y[0][p] @ vi[0], el.y[1][p] @ vi[1], el.y[2][p] @ vi[2]])
        i1pre = el.y[1][p] @ v_pre[1, el.idx]
        if net.fault_at_end == (t.line, t.bus):
            i012 = i012 + i_f_012
        if t.ct_polarity == "reversed":
            i012, i1pre = -i012, -i1pre
        n = index[t.bus]
        kv = float(kvs[n])
        ib, vb = i_base_a(kv, base), v_base_v(kv)
        v_n = v012[:, n]
        terminals[t.id] = TerminalState(
            id=t.id, line=t.line, bus=t.bus,
            v_abc=(FORTESCUE @ v_n) * vb, i_abc=(FORTESCUE @ i012) * ib,
            v_abc_pre=(FORTESCUE[:, 1] * v_pre[1, n]) * vb,
            i_abc_pre=(FORTESCUE[:, 1] * i1pre) * ib,
            v_012=v_n * vb, i_012=i012 * ib, v_012_pu=v_n.copy(), i_012_pu=i012,
        )
    return FaultResult(spec=spec, fault=fault, terminals=terminals, base_mva=base,
                       _model=model, _net=net, _v012=v012, _v_pre=v_pre)


def prefault(model: NetworkModel) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Pre-fault (load-flow) state at every terminal.

    Returns
    -------
    dict
        terminal id -> ``(v_abc [V], i_abc [A])``, current from the bus into
        the line (sign per CT polarity as in :class:`TerminalState`).

    Notes
    -----
    The sources are EMFs behind their impedances, lines and transformers are
    linear: one solve of ``Y1 V = sum(E / z1)``.
    """
    net = _network(model, None)
    try:
        v1 = np.linalg.solve(net.y[1], net.injection)
    except np.linalg.LinAlgError as exc:
        raise _singular(model, exc) from None
    out = {}
    base = model.system.base_mva
    for t in model.terminals:
        e, p = net.ports[(t.line, t.bus)]
        el = net.elements[e]
        i1 = (el.y[1] @ v1[el.idx])[p]
        kv = float(net.node_kv[el.idx[p]])
        sign = -1.0 if t.ct_polarity == "reversed" else 1.0
        n = net.node_names.index(t.bus)
        out[t.id] = (FORTESCUE @ np.array([0.0, v1[n], 0.0]) * v_base_v(kv),
                     sign * FORTESCUE @ np.array([0.0, i1, 0.0]) * i_base_a(kv, base))
    return out


#: IEC 60909-0:2016 table 1, voltage factor c (from memory): above 1 kV c_max = 1.10,
#: c_min = 1.00; up to 1 kV c_max = 1.10 (1.05 in systems with a 6 % tolerance),
#: c_min = 0.95
IEC60909_C = {"max": (1.10, 1.10), "min": (1.00, 0.95)}   # (above 1 kV, up to 1 kV)


def iec60909_voltage_factor(case: str, kv: float) -> float:
    """Voltage factor ``c`` of IEC 60909-0 table 1 for ``case`` "max" or "min" at ``kv``."""
    if case not in IEC60909_C:
        raise ModelError(f"IEC 60909 case: expected 'max' or 'min', got {case!r}")
    hv, lv = IEC60909_C[case]
    return hv if kv > 1.0 else lv


def iec60909_model(model: NetworkModel, c_factor: float) -> NetworkModel:
    """The model as the IEC 60909 method sees it for one voltage factor.

    IEC 60909-0 replaces every source by its impedance and drives the fault
    with the equivalent voltage source ``c U_n / sqrt(3)`` at the fault point,
    neglecting load and the lines' shunt capacitance (IEC 60909-0:2016,
    clause 5, from memory).  In a linear network that is the same as every
    source EMF at ``c`` pu and angle 0 of its voltage zone (so no pre-fault
    current flows and every bus sits at ``c`` pu) with the capacitance taken
    out, which is the copy returned.  The correction factors ``K_G``, ``K_T``
    for generators and network transformers are not applied: the model's
    sources are network feeders (Thevenin equivalents), whose impedance
    IEC 60909 takes as it is.
    """
    c = float(c_factor)
    if not (c > 0 and math.isfinite(c)):
        raise ModelError(f"IEC 60909 voltage factor: expected a positive number, got {c_factor!r}")
    sources = tuple(dataclasses.replace(s, emf_pu=c, angle_rad=0.0) for s in model.sources)
    return dataclasses.replace(without_line_capacitance(model), sources=sources)


def iec60909_fault(model: NetworkModel, spec: FaultSpec, case: str = "max") -> FaultResult:
    """Short-circuit currents of ``spec`` by the IEC 60909 method (``case`` "max" or "min").

    The voltage factor comes from :func:`iec60909_voltage_factor` at the fault
    point's kV; see :func:`iec60909_model` for what is neglected.
    """
    if spec.line is not None:
        kv = model.bus(model.line(spec.line).from_bus).kv
    else:
        kv = model.bus(spec.bus).kv
    return solve_fault(iec60909_model(model, iec60909_voltage_factor(case, kv)), spec)
