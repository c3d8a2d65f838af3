"""Solver vs an independent phase-domain nodal solution (no symmetrical components).

The a-b-c network is built here element by element and solved with numpy:
sources as balanced EMFs behind 3x3 impedances, transposed lines as exact
distributed-parameter pieces (the matrix exponential of the telegrapher's
equations, scipy.linalg.expm) with self (z0 + 2 z1)/3 and mutual (z0 - z1)/3 per phase (the usual
relation for a transposed line, common practice, no source), zero-sequence
mutual coupling as a block (z0m / 3) on every pair of phases of the two
lines, transformers as three single-phase units wired star/delta by their
vector group (IEC 60076-1 clock notation), and the fault as conductances per
the fault-resistance conventions.  Ten fault types, with Rf, Rg, pre-fault
load, sections with shunt capacitance, a coupled pair (one of them given in
the opposite direction), two transformers and a terminal with reversed CT.
Agreement required: 1e-6 relative (issue 4).
"""

import math

import numpy as np
import pytest
import scipy.linalg

from eventlab.faulttypes import FAULT_TYPES, faulted_phases
from eventlab.network.faults import FaultSpec, prefault, solve_fault
from eventlab.network.model import model_from_dict

F_HZ = 50.0
W = 2 * math.pi * F_HZ
A = np.exp(2j * np.pi / 3)
POS = np.array([1, A * A, A])  # positive-sequence phase rotation

DATA = {
    "system": {"name": "phase-domain check", "frequency_hz": F_HZ, "base_mva": 100.0},
    "bus": [{"id": "W", "kv": 220.0}, {"id": "E", "kv": 220.0}, {"id": "M", "kv": 220.0},
            {"id": "S", "kv": 33.0}, {"id": "X", "kv": 11.0}],
    "source": [
        {"bus": "W", "z1_ohm": [1.5, 16.0], "z0_ohm": [2.5, 27.0], "emf_pu": 1.03},
        {"bus": "E", "z1_ohm": [2.0, 25.0], "z0_ohm": [3.0, 31.0], "z2_ohm": [2.2, 26.0],
         "emf_pu": 0.99, "angle_deg": -11.0},
        {"bus": "S", "sc_mva": 400.0, "x_r": 12.0, "x0_x1": 0.8, "angle_deg": -4.0},
    ],
    "line": [
        {"id": "LA", "from": "W", "to": "E", "length_km": 90.0,
         "z1_ohm_per_km": [0.04, 0.39], "z0_ohm_per_km": [0.28, 1.15],
         "c1_nf_per_km": 9.5, "c0_nf_per_km": 6.0,
         "mutual": {"line": "LB", "z0m_ohm_per_km": [0.21, 0.62]}},
        {"id": "LB", "from": "E", "to": "W", "length_km": 90.0,
         "z1_ohm_per_km": [0.05, 0.41], "z0_ohm_per_km": [0.30, 1.20]},
        {"id": "LS", "from": "W", "to": "M", "section": [
            {"length_km": 30.0, "z1_ohm_per_km": [0.03, 0.33], "z0_ohm_per_km": [0.25, 1.0],
             "c1_nf_per_km": 11.0, "c0_nf_per_km": 7.0},
            {"length_km": 12.0, "z1_ohm_per_km": [0.06, 0.12], "z0_ohm_per_km": [0.4, 0.3],
             "c1_nf_per_km": 250.0, "c0_nf_per_km": 250.0}]},
        {"id": "LM", "from": "M", "to": "E", "length_km": 55.0,
         "z1_ohm_per_km": [0.035, 0.36], "z0_ohm_per_km": [0.27, 1.1]},
    ],
    "transformer": [
        {"id": "T1", "hv_bus": "E", "lv_bus": "S", "mva": 120.0, "z_percent": 11.0, "x_r": 25.0,
         "vector_group": "YNd1", "z_n_ohm": [3.0, 12.0]},
        {"id": "T2", "hv_bus": "M", "lv_bus": "X", "mva": 40.0, "z_percent": 9.0, "x_r": 15.0,
         "vector_group": "Dyn11", "z_n_ohm": [1.5, 0.0]},
    ],
    "terminal": [
        {"id": "W-LA", "line": "LA", "bus": "W"}, {"id": "E-LA", "line": "LA", "bus": "E"},
        {"id": "W-LB", "line": "LB", "bus": "W", "ct_polarity": "reversed"},
        {"id": "W-LS", "line": "LS", "bus": "W"}, {"id": "M-LS", "line": "LS", "bus": "M"},
        {"id": "E-LM", "line": "LM", "bus": "E"},
    ],
}


def _zabc(z1, z0, z2=None):
    """Phase matrix of a balanced element from z1, z0 (z2 != z1 only for a source)."""
    if z2 is None:
        s, m = (z0 + 2 * z1) / 3, (z0 - z1) / 3
        return np.full((3, 3), m, dtype=complex) + np.eye(3) * (s - m)
    # a source with z2 != z1 (its data are sequence values): the circulant matrix
    # A diag(z0, z1, z2) A^-1 written out, first row (z0 + z1 + z2, z0 + a z1 + a^2 z2,
    # z0 + a^2 z1 + a z2) / 3
    c = [(z0 + z1 + z2) / 3, (z0 + A * z1 + A * A * z2) / 3, (z0 + A * A * z1 + A * z2) / 3]
    return np.array([[c[0], c[1], c[2]], [c[2], c[0], c[1]], [c[1], c[2], c[0]]])


def _line_two_port(z, y):
    """Nodal admittance ``[[Y_aa, Y_ab], [Y_ba, Y_bb]]`` of a uniform line piece.

    Exact distributed-parameter solution from the transfer matrix
    ``[V_b; I_b] = expm([[0, -Z], [-Y, 0]]) [V_a; I_a]`` of the telegrapher's
    equations ``dV/dx = -z I``, ``dI/dx = -y V`` (``Z``, ``Y`` the piece's
    totals; e.g. Grainger & Stevenson, *Power System Analysis*, 1994, ch. 6,
    from memory), with scipy's matrix exponential: independent of the series
    eventlab evaluates.  Rows give the currents into the piece at ``a``, ``b``.
    """
    n = z.shape[0]
    t = scipy.linalg.expm(np.block([[np.zeros((n, n)), -z], [-y, np.zeros((n, n))]]))
    t11, t12, t21, t22 = t[:n, :n], t[:n, n:], t[n:, :n], t[n:, n:]
    t12i = np.linalg.inv(t12)
    return np.block([[-t12i @ t11, t12i], [-t21 + t22 @ t12i @ t11, -t22 @ t12i]])


class PhaseNetwork:
    def __init__(self):
        self.n = 0
        self.stamps = []  # (nodes, Y)
        self.inj = {}
        self.names = {}

    def node3(self, name):
        self.names[name] = list(range(self.n, self.n + 3))
        self.n += 3
        return self.names[name]

    def node1(self):
        self.n += 1
        return self.n - 1

    def stamp(self, nodes, y):
        self.stamps.append((list(nodes), np.asarray(y, dtype=complex)))

    def series(self, a, b, z):
        y = np.linalg.inv(z)
        self.stamp(list(a) + list(b), np.block([[y, -y], [-y, y]]))
        return y

    def solve(self, extra=()):
        Y = np.zeros((self.n, self.n), dtype=complex)
        for nodes, y in list(self.stamps) + list(extra):
            np.add.at(Y, np.ix_(nodes, nodes), y)  # nodes may repeat (coupled pair)
        inj = np.zeros(self.n, dtype=complex)
        for k, v in self.inj.items():
            inj[k] += v
        return np.linalg.solve(Y, inj)


def _build(line_id=None, fraction=None):
    d = DATA
    kv = {b["id"]: b["kv"] for b in d["bus"]}
    net = PhaseNetwork()
    for b in d["bus"]:
        net.node3(b["id"])
    # sources: reference angle of each zone from the transformers (HV 0; T1 clock 1: S at -30;
    # T2 clock 11: X at +30)
    zone = {"W": 0, "E": 0, "M": 0, "S": -30.0, "X": 30.0}
    for s in d["source"]:
        u = kv[s["bus"]] * 1e3
        if "z1_ohm" in s:
            z1 = complex(*s["z1_ohm"])
            z0 = complex(*s["z0_ohm"])
            z2 = complex(*s["z2_ohm"]) if "z2_ohm" in s else z1
        else:  # |Z1| = U^2 / S_sc (common practice, no source)
            zm = (kv[s["bus"]] ** 2) / s["sc_mva"]
            r = zm / math.sqrt(1 + s["x_r"] ** 2)
            z1 = z2 = complex(r, r * s["x_r"])
            z0 = z1 * s["x0_x1"]
        zs = _zabc(z1, z0, z2 if z2 != z1 else None)
        e = s.get("emf_pu", 1.0) * u / math.sqrt(3) * np.exp(
            1j * math.radians(s.get("angle_deg", 0.0) + zone[s["bus"]])) * POS
        y = np.linalg.inv(zs)
        nodes = net.names[s["bus"]]
        net.stamp(nodes, y)
        for k, v in zip(nodes, y @ e, strict=True):
            net.inj[k] = net.inj.get(k, 0) + v
    ends = {}  # (line, bus) -> (nodes at the bus, series admittance rows, piece info)

    def pi_piece(a, b, z1k, z0k, c1, c0, length):
        y = _line_two_port(_zabc(z1k * length, z0k * length),
                           1j * W * 1e-9 * length * _zabc(c1, c0).real)
        net.stamp(list(a) + list(b), y)
        return (a, b, y)

    fault_nodes = None
    lines = {ln["id"]: ln for ln in d["line"]}
    # coupled pair LA (W->E) and LB (given E->W): build both oriented W->E, cut at the fault
    la, lb = lines["LA"], lines["LB"]
    length = la["length_km"]
    cuts = [0.0, length]
    if line_id in ("LA", "LB"):
        x = fraction * length if line_id == "LA" else (1 - fraction) * length
        cuts = [0.0, x, length]
    prev_a = prev_b = net.names["W"]
    zm_km = complex(*la["mutual"]["z0m_ohm_per_km"])
    pieces_pair = []
    for j in range(len(cuts) - 1):
        ln_ = cuts[j + 1] - cuts[j]
        last = j == len(cuts) - 2
        na = net.names["E"] if last else net.node3(f"LA@{j}")
        nb = net.names["E"] if last else net.node3(f"LB@{j}")
        za = _zabc(complex(*la["z1_ohm_per_km"]) * ln_, complex(*la["z0_ohm_per_km"]) * ln_)
        zb = _zabc(complex(*lb["z1_ohm_per_km"]) * ln_, complex(*lb["z0_ohm_per_km"]) * ln_)
        zab = np.full((3, 3), zm_km * ln_ / 3)
        c_a = 1j * W * 1e-9 * ln_ * _zabc(la.get("c1_nf_per_km", 0.0),
                                          la.get("c0_nf_per_km", 0.0)).real
        y = _line_two_port(np.block([[za, zab], [zab, zb]]),
                           np.block([[c_a, np.zeros((3, 3))], [np.zeros((3, 3)), np.zeros((3, 3))]]))
        net.stamp(list(prev_a) + list(prev_b) + list(na) + list(nb), y)
        pieces_pair.append((list(prev_a) + list(prev_b), list(na) + list(nb), y))
        if not last and line_id in ("LA", "LB"):
            fault_nodes = na if line_id == "LA" else nb
        prev_a, prev_b = na, nb
    first, lastp = pieces_pair[0], pieces_pair[-1]

    def pair_current(piece, side, which, v):
        a, b, y = piece
        i = y @ np.concatenate([v[a], v[b]])      # into the piece at [a (6), b (6)]
        i = i[:6] if side == 0 else i[6:]
        return i[0:3] if which == "LA" else i[3:6]

    ends[("LA", "W")] = lambda v: pair_current(first, 0, "LA", v)
    ends[("LA", "E")] = lambda v: pair_current(lastp, 1, "LA", v)
    ends[("LB", "W")] = lambda v: pair_current(first, 0, "LB", v)
    ends[("LB", "E")] = lambda v: pair_current(lastp, 1, "LB", v)

    # single lines (sections, cut at the fault)
    for lid in ("LS", "LM"):
        ln = lines[lid]
        secs = ln.get("section", [ln])
        total = sum(s["length_km"] for s in secs)
        xf = fraction * total if line_id == lid else None
        prev = net.names[ln["from"]]
        pos = 0.0
        pieces = []
        for si, s in enumerate(secs):
            bounds = [pos, pos + s["length_km"]]
            if xf is not None and bounds[0] < xf < bounds[1]:
                bounds = [bounds[0], xf, bounds[1]]
            for j in range(len(bounds) - 1):
                last = si == len(secs) - 1 and j == len(bounds) - 2
                nxt = net.names[ln["to"]] if last else net.node3(f"{lid}@{bounds[j + 1]}")
                if xf is not None and abs(bounds[j + 1] - xf) < 1e-12:
                    fault_nodes = nxt
                pieces.append(pi_piece(prev, nxt, complex(*s["z1_ohm_per_km"]),
                                       complex(*s["z0_ohm_per_km"]), s.get("c1_nf_per_km", 0.0),
                                       s.get("c0_nf_per_km", 0.0), bounds[j + 1] - bounds[j]))
                prev = nxt
            pos += s["length_km"]
        p0, pn = pieces[0], pieces[-1]
        ends[(lid, ln["from"])] = lambda v, p=p0: (p[2] @ np.concatenate([v[p[0]], v[p[1]]]))[:3]
        ends[(lid, ln["to"])] = lambda v, p=pn: (p[2] @ np.concatenate([v[p[0]], v[p[1]]]))[3:]

    # transformers: three single-phase units; winding primitive (1/z) [[r^2, -r], [-r, 1]]
    # on (v_hv_winding, v_lv_winding), r = N_lv / N_hv, leakage z on the LV winding
    for t in d["transformer"]:
        hv, lv = net.names[t["hv_bus"]], net.names[t["lv_bus"]]
        u_h, u_l = kv[t["hv_bus"]] * 1e3, kv[t["lv_bus"]] * 1e3
        zpu = t["z_percent"] / 100
        rr = zpu / math.sqrt(1 + t["x_r"] ** 2)
        z_star_lv = complex(rr, rr * t["x_r"]) * u_l**2 / (t["mva"] * 1e6)
        vg = t["vector_group"]
        zn = complex(*t["z_n_ohm"])
        nn = net.node1()  # star point
        net.stamp([nn], [[1 / zn]])
        for k in range(3):
            if vg == "YNd1":  # HV star leg k: phase k to N; LV delta leg k: phase k to phase k+1
                hw = (hv[k], nn)
                lw = (lv[k], lv[(k + 1) % 3])
                r = u_l / (u_h / math.sqrt(3))
                zl = 3 * z_star_lv
            elif vg == "Dyn11":  # HV delta leg k: phase k to phase k+1; LV star leg k: k to N
                hw = (hv[k], hv[(k + 1) % 3])
                lw = (lv[k], nn)
                r = (u_l / math.sqrt(3)) / u_h
                zl = z_star_lv
            else:  # pragma: no cover
                raise AssertionError(vg)
            yw = np.array([[r * r, -r], [-r, 1]]) / zl
            # winding voltages from node voltages: w = C v, stamp C^T yw C
            nodes = [hw[0], hw[1], lw[0], lw[1]]
            C = np.array([[1, -1, 0, 0], [0, 0, 1, -1]])
            net.stamp(nodes, C.T @ yw @ C)
    return net, ends, fault_nodes


def _fault_stamps(net, nodes, code, rf, rg):
    ph = faulted_phases(code)
    g = 1 / rf
    out = []
    if len(ph) == 1:
        out.append(([nodes[ph[0]]], [[g]]))
    elif len(ph) == 2 and not code.endswith("G"):
        out.append(([nodes[ph[0]], nodes[ph[1]]], [[g, -g], [-g, g]]))
    else:
        s = net.node1()
        for p in ph:
            out.append(([nodes[p], s], [[g, -g], [-g, g]]))
        if code.endswith("G") or rg > 0:
            out.append(([s], [[1 / rg]]))
    return out


def _fault_current(v, nodes, code, rf, rg):
    """Current into the fault per phase from the node voltages."""
    ph = faulted_phases(code)
    vf = v[nodes]
    i = np.zeros(3, dtype=complex)
    if len(ph) == 1:
        i[ph[0]] = vf[ph[0]] / rf
    elif len(ph) == 2 and not code.endswith("G"):
        i[ph[0]] = (vf[ph[0]] - vf[ph[1]]) / rf
        i[ph[1]] = -i[ph[0]]
    else:
        # star point voltage: sum of currents into it = current to ground
        gs = len(ph) / rf + (1 / rg if (code.endswith("G") or rg > 0) else 0.0)
        vs = sum(vf[p] for p in ph) / rf / gs
        for p in ph:
            i[p] = (vf[p] - vs) / rf
    return i


@pytest.fixture(scope="module")
def model():
    return model_from_dict(DATA, source_name="phase-domain")


def _close(ours, ref, what):
    scale = max(np.max(np.abs(ref)), 1e-30)
    err = np.max(np.abs(np.asarray(ours) - ref)) / scale
    assert err < 1e-6, (what, err)


def _check(model, spec, net, ends, fnodes, rf, rg):
    v_pre = net.solve()
    v = net.solve(_fault_stamps(net, fnodes, spec.type, rf, rg))
    r = solve_fault(model, spec)
    _close(r.fault.i_abc, _fault_current(v, fnodes, spec.type, rf, rg), "fault current")
    _close(r.fault.v_abc, v[fnodes], "fault voltage")
    for t in DATA["terminal"]:
        sign = -1 if t.get("ct_polarity") == "reversed" else 1
        ts = r.terminals[t["id"]]
        _close(ts.i_abc, sign * ends[(t["line"], t["bus"])](v), t["id"])
        _close(ts.i_abc_pre, sign * ends[(t["line"], t["bus"])](v_pre), t["id"] + " pre")
        _close(ts.v_abc, v[net.names[t["bus"]]], t["id"] + " V")
    for b in DATA["bus"]:
        _close(r.buses[b["id"]].v_abc, v[net.names[b["id"]]], b["id"])
        _close(r.buses[b["id"]].v_abc_pre, v_pre[net.names[b["id"]]], b["id"] + " pre")


RES = {"rf": 0.7, "rg": 2.3}


@pytest.mark.parametrize("code", FAULT_TYPES)
@pytest.mark.parametrize("line, fraction", [("LS", 0.83), ("LA", 0.3), ("LB", 0.55)])
def test_line_faults_all_types(model, code, line, fraction):
    rg = RES["rg"] if code in ("ABG", "BCG", "CAG", "ABC") else 0.0
    net, ends, fnodes = _build(line, fraction)
    _check(model, FaultSpec(line, fraction, code, RES["rf"], rg), net, ends, fnodes,
           RES["rf"], rg)


@pytest.mark.parametrize("code", ["AG", "BC", "CAG", "ABC"])
@pytest.mark.parametrize("bus", ["S", "X", "M"])
def test_bus_faults_behind_transformers(model, code, bus):
    rg = RES["rg"] if code in ("CAG", "ABC") else 0.0
    net, ends, _ = _build()
    _check(model, FaultSpec.at_bus(bus, code, RES["rf"], rg), net, ends, net.names[bus],
           RES["rf"], rg)


def test_prefault_matches_phase_domain_load_flow(model):
    net, ends, _ = _build()
    v = net.solve()
    pre = prefault(model)
    for t in DATA["terminal"]:
        sign = -1 if t.get("ct_polarity") == "reversed" else 1
        v_abc, i_abc = pre[t["id"]]
        _close(v_abc, v[net.names[t["bus"]]], t["id"])
        _close(i_abc, sign * ends[(t["line"], t["bus"])](v), t["id"])


@pytest.mark.parametrize("line, fraction", [("LS", 30.0 / 42.0), ("LA", 0.0), ("LB", 1.0)])
def test_fault_at_section_joint_and_line_ends_is_continuous(model, line, fraction):
    """A fault exactly at a joint or an end agrees with one a hair (1e-7) inside the line."""
    near = fraction + (1e-7 if fraction < 1 else -1e-7)
    a = solve_fault(model, FaultSpec(line, fraction, "BCG", 0.7, 2.3))
    b = solve_fault(model, FaultSpec(line, near, "BCG", 0.7, 2.3))
    _close(a.fault.i_abc, b.fault.i_abc, "fault")
    for tid in a.terminals:
        np.testing.assert_allclose(a.terminals[tid].i_abc, b.terminals[tid].i_abc,
                                   atol=1e-6 * np.max(np.abs(b.fault.i_abc)), err_msg=tid)


def test_fault_at_line_end_is_the_bus_fault_plus_the_ct(model):
    """At m = 0 the fault is just inside the CT of the W end of LS: same fault current as a
    W bus fault, and the W-LS terminal carries it on top of what the line itself takes."""
    a = solve_fault(model, FaultSpec("LS", 0.0, "AG", 0.7))
    b = solve_fault(model, FaultSpec.at_bus("W", "AG", 0.7))
    _close(a.fault.i_abc, b.fault.i_abc, "fault")
    _close(a.terminals["W-LS"].i_abc, b.terminals["W-LS"].i_abc + b.fault.i_abc, "W-LS")
    _close(a.terminals["W-LA"].i_abc, b.terminals["W-LA"].i_abc, "W-LA")
