"""Sequence networks: zero-, positive- and negative-sequence bus admittance matrices.

Every branch is a *primitive element*: a set of ports (network nodes) and a
primitive admittance matrix per sequence, stamped into the nodal matrix
``Y[idx, idx] += Y_prim``.  Nodes are the buses, then the junctions between
line sections, then (for a fault on a line) the fault point and the cut in a
mutually coupled parallel line.

Elements (per unit on ``base_mva`` and each zone's kV, see :mod:`.perunit`):

* line piece of length ``l``: the exact (distributed-parameter) equivalent pi
  of series ``z_s l`` and shunt ``j w c_s l`` (:mod:`.longline`; without
  capacitance the series impedance alone), negative sequence = positive;
* two lines with zero-sequence mutual coupling ``z0m``: in the zero sequence a
  coupled pair with series matrix ``[[z0a, z0m], [z0m, z0b]] l`` inverted to
  ``Y_b`` (the matrix equivalent pi with the shunt capacitance, :mod:`.longline`)
  and stamped as ``[[Y_b + Y_h, -Y_b], [-Y_b, Y_b + Y_h]]``; modelled only for two
  single-section lines of equal length between the same two buses;
* transformer: series ``z`` behind an ideal phase shifter ``t``
  (``V_lv' = t V_hv``), ``Y_prim = (1/z) [[1, -conj(t)], [-t, 1]]`` with
  ``t = exp(-j k pi / 6)`` for the positive sequence and ``conj(t)`` for the
  negative (clock number k, IEC 60076-1).  Zero sequence by winding connection
  (e.g. Grainger & Stevenson, *Power System Analysis*, 1994, sec. 11.7, from
  memory): YNyn a series path ``z0 + 3 Zn_hv + 3 Zn_lv`` (with ``t0 = -1`` for
  clock 2, 6, 10); YNd a shunt ``z0 + 3 Zn_hv`` at the HV bus; Dyn the same at
  the LV bus; every other connection open;
* source: shunt ``1 / z_s`` at its bus and, in the positive sequence, the Norton
  injection ``E / z1``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from eventlab.errors import ModelError
from eventlab.network.longline import equivalent_pi, equivalent_pi_matrix
from eventlab.network.model import Line, LineSection, NetworkModel
from eventlab.network.perunit import transformer_z_pu, voltage_zones, z_base_ohm

#: a fault point closer than this to a node (bus, section joint) is put on the node [km]
_EPS_KM = 1e-6


@dataclass
class Element:
    """A primitive element (internal; mutable only while being built).

    Attributes
    ----------
    id : str
        Line or transformer id (a coupled pair: ``"L1+L2"``).
    kind : str
        ``"line"``, ``"pair"`` or ``"transformer"``.
    idx : ndarray of int
        Port nodes; for k series branches the k "from" ports then the k "to" ports.
    y : tuple of three ndarray
        Primitive admittance per sequence (0, 1, 2) [pu].
    """

    id: str
    kind: str
    idx: np.ndarray
    y: tuple[np.ndarray, np.ndarray, np.ndarray]


@dataclass
class SequenceNetwork:
    """Nodal matrices of the three sequence networks and how to read them.

    Attributes
    ----------
    y : tuple of three ndarray, shape (n, n)
        ``Y0, Y1, Y2`` [pu].
    node_names : list of str
    node_kv : ndarray
        kV base of each node.
    injection : ndarray, shape (n,)
        Positive-sequence Norton injection of the sources [pu].
    elements : list of Element
    ports : dict
        ``(line or transformer id, bus id) -> (element index, port position)``:
        the port where that branch meets that bus.
    fault_node : int or None
    fault_at_end : tuple or None
        ``(line id, bus id)`` when the fault point on a line coincides with its
        end bus (fraction 0 or 1): the CT there also carries the fault current.
    """

    y: tuple[np.ndarray, np.ndarray, np.ndarray]
    node_names: list[str]
    node_kv: np.ndarray
    injection: np.ndarray
    elements: list[Element]
    ports: dict[tuple[str, str], tuple[int, int]]
    sources: list[tuple[int, complex, complex, complex, complex]] = field(default_factory=list)
    fault_node: int | None = None
    fault_at_end: tuple[str, str] | None = None
    bus_index: dict[str, int] = field(default_factory=dict)


def _omega(model: NetworkModel) -> float:
    return 2.0 * math.pi * model.system.frequency_hz


def _piece_y(sec: LineSection, length_km: float, zb: float, w: float) -> tuple[np.ndarray, ...]:
    out = []
    for z_km, c_nf in ((sec.z0_ohm_per_km, sec.c0_nf_per_km), (sec.z1_ohm_per_km, sec.c1_nf_per_km)):
        z_s, y_h = equivalent_pi(z_km * length_km / zb, 1j * w * c_nf * 1e-9 * length_km * zb)
        ys, ysh = 1.0 / complex(z_s), complex(y_h)
        out.append(np.array([[ys + ysh, -ys], [-ys, ys + ysh]], dtype=complex))
    return out[0], out[1], out[1]


def _pair_y(a: LineSection, b: LineSection, z0m_km: complex, length_km: float, zb: float,
            w: float) -> tuple[np.ndarray, ...]:
    out = []
    for seq in (0, 1):
        za = (a.z0_ohm_per_km if seq == 0 else a.z1_ohm_per_km) * length_km / zb
        zbb = (b.z0_ohm_per_km if seq == 0 else b.z1_ohm_per_km) * length_km / zb
        zm = z0m_km * length_km / zb if seq == 0 else 0.0
        ca = a.c0_nf_per_km if seq == 0 else a.c1_nf_per_km
        cb = b.c0_nf_per_km if seq == 0 else b.c1_nf_per_km
        y_tot = 1j * w * 1e-9 * length_km * zb * np.diag([ca, cb])
        z_s, y_h = equivalent_pi_matrix(np.array([[za, zm], [zm, zbb]], dtype=complex), y_tot)
        yb = np.linalg.inv(z_s)
        yp = np.block([[yb + y_h, -yb], [-yb, yb + y_h]])
        out.append(yp)
    return out[0], out[1], out[1]


def _cuts(line: Line, extra_km: float | None) -> list[tuple[float, float, LineSection]]:
    """Pieces (start_km, end_km, section) of a line, cut at section joints and ``extra_km``."""
    pieces = []
    pos = 0.0
    for sec in line.sections:
        a, b = pos, pos + sec.length_km
        if extra_km is not None and a + _EPS_KM < extra_km < b - _EPS_KM:
            pieces.append((a, extra_km, sec))
            pieces.append((extra_km, b, sec))
        else:
            pieces.append((a, b, sec))
        pos = b
    return pieces


class _Builder:
    def __init__(self, model: NetworkModel):
        self.model = model
        self.zones = voltage_zones(model)
        self.names = [b.id for b in model.buses]
        self.kv = [b.kv for b in model.buses]
        self.index = {b.id: i for i, b in enumerate(model.buses)}
        self.elements: list[Element] = []
        self.ports: dict[tuple[str, str], tuple[int, int]] = {}
        self.w = _omega(model)
        self.base = model.system.base_mva
        #: nodes with a zero-sequence shunt to ground (sources, earthed windings, line C0)
        self.zero_grounded: set[int] = set()

    def node(self, name: str, kv: float) -> int:
        self.names.append(name)
        self.kv.append(kv)
        return len(self.names) - 1

    def add(self, el: Element) -> int:
        self.elements.append(el)
        return len(self.elements) - 1

    def line(self, line: Line, fault_km: float | None = None) -> int | None:
        """Add a line's pieces; returns the node at ``fault_km`` when given."""
        kv = self.model.bus(line.from_bus).kv
        zb = z_base_ohm(kv, self.base)
        pieces = _cuts(line, fault_km)
        f_node = None
        n_from = self.index[line.from_bus]
        n_to = self.index[line.to_bus]
        prev = n_from
        if fault_km is not None and fault_km <= _EPS_KM:
            f_node = n_from
        for j, (a, b, sec) in enumerate(pieces):
            last = j == len(pieces) - 1
            nxt = n_to if last else self.node(f"{line.id}@{b:.6g}km", kv)
            if fault_km is not None and abs(b - fault_km) <= _EPS_KM:
                f_node = nxt
            e = self.add(Element(line.id, "line", np.array([prev, nxt]),
                                 _piece_y(sec, b - a, zb, self.w)))
            if sec.c0_nf_per_km > 0:
                self.zero_grounded.update((prev, nxt))
            if j == 0:
                self.ports[(line.id, line.from_bus)] = (e, 0)
            if last:
                self.ports[(line.id, line.to_bus)] = (e, 1)
            prev = nxt
        return f_node

    def pair(self, la: Line, lb: Line, fault_km: float | None = None) -> int | None:
        """Two coupled single-section lines (``la`` orientation); fault on ``la`` if given."""
        kv = self.model.bus(la.from_bus).kv
        zb = z_base_ohm(kv, self.base)
        sa, sb = la.sections[0], lb.sections[0]
        length = la.length_km
        n_from, n_to = self.index[la.from_bus], self.index[la.to_bus]
        z0m = la.mutual.z0m_ohm_per_km
        cuts = [0.0, length]
        if fault_km is not None and _EPS_KM < fault_km < length - _EPS_KM:
            cuts = [0.0, fault_km, length]
        f_node = None
        if fault_km is not None and fault_km <= _EPS_KM:
            f_node = n_from
        if fault_km is not None and fault_km >= length - _EPS_KM:
            f_node = n_to
        prev_a = prev_b = n_from
        same_dir = lb.from_bus == la.from_bus
        for j in range(len(cuts) - 1):
            last = j == len(cuts) - 2
            if last:
                na = nb = n_to
            else:
                na = self.node(f"{la.id}@{cuts[j + 1]:.6g}km", kv)
                nb = self.node(f"{lb.id}@{(cuts[j + 1] if same_dir else length - cuts[j + 1]):.6g}km", kv)
                f_node = na
            if sa.c0_nf_per_km > 0:
                self.zero_grounded.update((prev_a, na))
            if sb.c0_nf_per_km > 0:
                self.zero_grounded.update((prev_b, nb))
            e = self.add(Element(f"{la.id}+{lb.id}", "pair",
                                 np.array([prev_a, prev_b, na, nb]),
                                 _pair_y(sa, sb, z0m, cuts[j + 1] - cuts[j], zb, self.w)))
            if j == 0:
                self.ports[(la.id, la.from_bus)] = (e, 0)
                self.ports[(lb.id, la.from_bus)] = (e, 1)
            if last:
                self.ports[(la.id, la.to_bus)] = (e, 2)
                self.ports[(lb.id, la.to_bus)] = (e, 3)
            prev_a, prev_b = na, nb
        return f_node

    def transformers(self) -> None:
        for t in self.model.transformers:
            z1, z0 = transformer_z_pu(t, self.base)
            h, lo = self.index[t.hv_bus], self.index[t.lv_bus]
            k = t.clock
            tt = complex(np.exp(-1j * k * math.pi / 6.0))
            y1 = np.array([[1.0, -np.conj(tt)], [-tt, 1.0]], dtype=complex) / z1
            y2 = np.array([[1.0, -tt], [-np.conj(tt), 1.0]], dtype=complex) / z1
            hw, lw = t.hv_winding, t.lv_winding
            zn_hv = 3.0 * t.z_n_hv_ohm / z_base_ohm(self.kv[h], self.base)
            zn_lv = 3.0 * t.z_n_lv_ohm / z_base_ohm(self.kv[lo], self.base)
            y0 = np.zeros((2, 2), dtype=complex)
            if hw == "YN" and lw == "YN":
                t0 = -1.0 if k in (2, 6, 10) else 1.0
                y0 = np.array([[1.0, -t0], [-t0, 1.0]], dtype=complex) / (z0 + zn_hv + zn_lv)
            elif hw == "YN" and lw == "D":
                y0[0, 0] = 1.0 / (z0 + zn_hv)
                self.zero_grounded.add(h)
            elif hw == "D" and lw == "YN":
                y0[1, 1] = 1.0 / (z0 + zn_lv)
                self.zero_grounded.add(lo)
            e = self.add(Element(t.id, "transformer", np.array([h, lo]), (y0, y1, y2)))
            self.ports[(t.id, t.hv_bus)] = (e, 0)
            self.ports[(t.id, t.lv_bus)] = (e, 1)

    def check_connected(self) -> None:
        """Every node must reach a source through branches (else Y1 is singular)."""
        n = len(self.names)
        adj: list[set[int]] = [set() for _ in range(n)]
        for el in self.elements:
            nodes = [int(x) for x in el.idx]
            for a in nodes:
                adj[a].update(nodes)
        seen = {self.index[s.bus] for s in self.model.sources}
        stack = list(seen)
        while stack:
            u = stack.pop()
            for v in adj[u] - seen:
                seen.add(v)
                stack.append(v)
        lost = [self.names[i] for i in range(n) if i not in seen]
        if lost:
            raise ModelError(f"{self.model.source_name}: not connected to any [[source]]: "
                             f"{', '.join(lost[:5])}{' ...' if len(lost) > 5 else ''}")

    def finish(self, fault_node: int | None, fault_at_end) -> SequenceNetwork:
        self.check_connected()
        n = len(self.names)
        ys = tuple(np.zeros((n, n), dtype=complex) for _ in range(3))
        for el in self.elements:
            ix = np.ix_(el.idx, el.idx)
            for s in range(3):  # add.at: a coupled pair repeats its end nodes
                np.add.at(ys[s], ix, el.y[s])
        inj = np.zeros(n, dtype=complex)
        sources = []
        for src in self.model.sources:
            i = self.index[src.bus]
            zb = z_base_ohm(self.kv[i], self.base)
            z0, z1, z2 = src.z0_ohm / zb, src.z1_ohm / zb, src.z2_ohm / zb
            e = src.emf_pu * complex(np.exp(1j * (src.angle_rad + self.zones[src.bus].angle_rad)))
            ys[0][i, i] += 1.0 / z0
            ys[1][i, i] += 1.0 / z1
            ys[2][i, i] += 1.0 / z2
            inj[i] += e / z1
            self.zero_grounded.add(i)
            sources.append((i, e, z0, z1, z2))
        _ground_floating_zero_sequence(ys[0], self.zero_grounded)
        return SequenceNetwork(y=ys, node_names=list(self.names), node_kv=np.array(self.kv),
                               injection=inj, elements=self.elements, ports=self.ports,
                               sources=sources, fault_node=fault_node, fault_at_end=fault_at_end,
                               bus_index=dict(self.index))


#: leakage to ground [pu admittance] given to each node of an ungrounded zero-sequence island
ZERO_SEQUENCE_LEAKAGE_PU = 1e-9


def _ground_floating_zero_sequence(y0: np.ndarray, grounded_nodes: set[int]) -> None:
    """Give zero-sequence islands with no path to ground a tiny leakage (in place).

    Behind a delta winding or an ungrounded star the zero-sequence network has
    no path to ground and ``Y0`` is singular.  A leakage of
    :data:`ZERO_SEQUENCE_LEAKAGE_PU` per node gives the physical limit of an
    ungrounded system (no ground-fault current, full neutral shift) with a
    relative error of that order.
    """
    n = y0.shape[0]
    scale = max(float(np.max(np.abs(y0))), 1.0)
    linked = np.abs(y0) > 1e-14 * scale
    grounded = np.zeros(n, dtype=bool)
    grounded[list(grounded_nodes)] = True
    seen = np.zeros(n, dtype=bool)
    for start in range(n):
        if seen[start]:
            continue
        comp = [start]
        seen[start] = True
        k = 0
        while k < len(comp):
            u = comp[k]
            k += 1
            for v in np.nonzero(linked[u] & ~seen)[0]:
                seen[v] = True
                comp.append(int(v))
        if not grounded[comp].any():
            y0[comp, comp] += ZERO_SEQUENCE_LEAKAGE_PU


def _partner(model: NetworkModel, line: Line) -> Line | None:
    return model.line(line.mutual.line) if line.mutual is not None else None


def build_sequence_networks(model: NetworkModel, line: str | None = None,
                            fraction: float | None = None, bus: str | None = None
                            ) -> SequenceNetwork:
    """The three sequence networks with a fault point.

    Parameters
    ----------
    model : NetworkModel
    line : str, optional
        Line on which the fault point lies ...
    fraction : float, optional
        ... at this fraction of its route length from its ``from`` bus (0..1).
    bus : str, optional
        ... or the fault point is this bus.  With neither, no fault point.

    Returns
    -------
    SequenceNetwork
    """
    b = _Builder(model)
    f_node = None
    at_end = None
    done: set[str] = set()
    fline = model.line(line) if line is not None else None
    if fline is not None:
        if fraction is None or not (0.0 <= fraction <= 1.0) or not math.isfinite(fraction):
            raise ModelError(f"{model.source_name}: fault on line {line}: fraction must be within "
                             f"0..1, got {fraction!r}")
        fault_km = fraction * fline.length_km
        partner = _partner(model, fline)
        if partner is not None:
            f_node = b.pair(fline, partner, fault_km)
            done |= {fline.id, partner.id}
        else:
            f_node = b.line(fline, fault_km)
            done.add(fline.id)
        if f_node == b.index[fline.from_bus]:
            at_end = (fline.id, fline.from_bus)
        elif f_node == b.index[fline.to_bus]:
            at_end = (fline.id, fline.to_bus)
    elif bus is not None:
        model.bus(bus)
        f_node = b.index[bus]
    for ln in model.lines:
        if ln.id in done:
            continue
        partner = _partner(model, ln)
        if partner is not None:
            b.pair(ln, partner)
            done |= {ln.id, partner.id}
        else:
            b.line(ln)
            done.add(ln.id)
    b.transformers()
    return b.finish(f_node, at_end)
