"""The fault calculation written out for a reviewer (``eventlab fault --show-work``).

:func:`show_work` returns plain text lines, in the order a reviewer checks a
fault study by hand: bases, per-unit impedances, the pre-fault voltage and the
Thevenin sequence impedances at the fault point, the interconnection of the
sequence networks for the fault type, the sequence currents and voltages, the
phase quantities, and the contributions with any transformer phase shift.
Nothing is printed here; the command prints the lines.
"""

from __future__ import annotations

import math

import numpy as np

from eventlab.faulttypes import faulted_phases
from eventlab.network.faults import (
    FaultResult,
    classical_fault_currents_012,
    reference_phase,
)
from eventlab.network.model import NetworkModel
from eventlab.network.perunit import (
    i_base_a,
    transformer_z_pu,
    v_base_v,
    voltage_zones,
    z_base_ohm,
)
from eventlab.units import polar_deg

PHASES = "ABC"


def _c(z: complex, digits: int = 5) -> str:
    z = complex(z)
    sign = "+" if z.imag >= 0 else "-"
    return f"{z.real:.{digits}f} {sign} j{abs(z.imag):.{digits}f}"


def _p(z: complex, unit: str = "", digits: int = 4) -> str:
    mag, ang = polar_deg(z)
    if abs(ang) < 5e-4:  # print 0.000, not -0.000
        ang = 0.0
    u = f" {unit}" if unit else ""
    return f"{mag:.{digits}f}{u} at {ang:8.3f} deg"


def _interconnection_text(code: str, ref: str) -> list[str]:
    n = len(faulted_phases(code))
    if n == 1:
        return [f"phase-to-ground: the three sequence networks in series (reference phase {ref})",
                "  I1 = I2 = I0 = V / (Z1 + Z2 + Z0 + 3 Rf)"]
    if n == 2 and not code.endswith("G"):
        return [f"phase-to-phase: positive and negative networks in parallel, opposed "
                f"(reference phase {ref}, the healthy one)",
                "  I1 = -I2 = V / (Z1 + Z2 + Rf),  I0 = 0   (Rf = total between the phases)"]
    if n == 2:
        return [f"two-phase-to-ground: the three networks in parallel (reference phase {ref}, "
                f"the healthy one)",
                "  Zp = (Z2 + Rf) || (Z0 + Rf + 3 Rg),  I1 = V / (Z1 + Rf + Zp)",
                "  I2 = -I1 (Z0 + Rf + 3 Rg) / (Z2 + Z0 + 2 Rf + 3 Rg)",
                "  I0 = -I1 (Z2 + Rf) / (Z2 + Z0 + 2 Rf + 3 Rg)"]
    return ["three-phase: the positive-sequence network alone",
            "  I1 = V / (Z1 + Rf),  I2 = I0 = 0"]


def _two_source_check(model: NetworkModel, result: FaultResult) -> list[str]:
    """Hand formula of the Thevenin impedances for a single line between two sources."""
    spec = result.spec
    if (spec.line is None or len(model.lines) != 1 or model.transformers
            or len(model.buses) != 2 or len(model.sources) != 2
            or any(sec.c1_nf_per_km or sec.c0_nf_per_km for sec in model.lines[0].sections)):
        return []
    ln = model.lines[0]
    try:
        s_from = next(s for s in model.sources if s.bus == ln.from_bus)
        s_to = next(s for s in model.sources if s.bus == ln.to_bus)
    except StopIteration:
        return []
    zb = z_base_ohm(model.bus(ln.from_bus).kv, model.system.base_mva)
    x = spec.fraction * ln.length_km
    out = [f"   by hand: Z = (Zs + Z_line(0..{x:.3f} km)) || (Zr + Z_line({x:.3f}..{ln.length_km:g}"
           f" km)), Zs at {ln.from_bus}, Zr at {ln.to_bus}"]
    for name, k in (("Z1", 1), ("Z2", 2), ("Z0", 0)):
        za = {0: s_from.z0_ohm, 1: s_from.z1_ohm, 2: s_from.z2_ohm}[k]
        zr = {0: s_to.z0_ohm, 1: s_to.z1_ohm, 2: s_to.z2_ohm}[k]
        pos = 0.0
        near = 0j
        far = 0j
        for sec in ln.sections:
            zkm = sec.z0_ohm_per_km if k == 0 else sec.z1_ohm_per_km
            a, b = pos, pos + sec.length_km
            near += zkm * max(0.0, min(b, x) - a)
            far += zkm * max(0.0, b - max(a, x))
            pos = b
        z1 = (za + near) / zb
        z2 = (zr + far) / zb
        out.append(f"     {name} = ({_c(z1)}) || ({_c(z2)}) = {_c(z1 * z2 / (z1 + z2))} pu")
    return out


def show_work(model: NetworkModel, result: FaultResult) -> list[str]:
    """Text lines of the calculation behind ``result`` (see the module docstring)."""
    spec = result.spec
    base = model.system.base_mva
    zones = voltage_zones(model)
    out: list[str] = []
    add = out.append

    add("1. Bases")
    add(f"   S_base = {base:g} MVA;  Z_base = kV^2 / S_base,  I_base = S_base / (sqrt(3) kV),  "
        f"V_base = kV / sqrt(3)")
    seen = set()
    for b in model.buses:
        z = zones[b.id]
        if (z.index, b.kv) in seen:
            continue
        seen.add((z.index, b.kv))
        members = [x.id for x in model.buses if zones[x.id].index == z.index]
        add(f"   zone {z.index} ({', '.join(members)}): {b.kv:g} kV, Z_base = "
            f"{z_base_ohm(b.kv, base):.4f} ohm, I_base = {i_base_a(b.kv, base):.3f} A, "
            f"V_base = {v_base_v(b.kv) / 1e3:.4f} kV, reference angle "
            f"{math.degrees(z.angle_rad):.1f} deg")

    add("2. Per-unit impedances (sequence 1 / 2 / 0)")
    for s in model.sources:
        zb = z_base_ohm(model.bus(s.bus).kv, base)
        add(f"   source at {s.bus}: Z1 = {_c(s.z1_ohm / zb)}, Z2 = {_c(s.z2_ohm / zb)}, "
            f"Z0 = {_c(s.z0_ohm / zb)} pu;  E = {s.emf_pu:g} pu at "
            f"{math.degrees(s.angle_rad + zones[s.bus].angle_rad):.3f} deg")
    for ln in model.lines:
        zb = z_base_ohm(model.bus(ln.from_bus).kv, base)
        add(f"   line {ln.id} {ln.from_bus}-{ln.to_bus} ({ln.length_km:g} km, "
            f"{len(ln.sections)} section{'s' if len(ln.sections) > 1 else ''}): "
            f"Z1 = {_c(ln.z1_ohm / zb)}, Z0 = {_c(ln.z0_ohm / zb)} pu")
        if len(ln.sections) > 1:
            pos = 0.0
            for j, sec in enumerate(ln.sections, 1):
                add(f"      section {j}: {pos:.4f}-{pos + sec.length_km:.4f} km, "
                    f"z1 = {_c(sec.z1_ohm_per_km * sec.length_km / zb)}, "
                    f"z0 = {_c(sec.z0_ohm_per_km * sec.length_km / zb)} pu")
                pos += sec.length_km
        if any(sec.c1_nf_per_km for sec in ln.sections):
            add("      shunt capacitance distributed along the line: each piece is its exact "
                "equivalent pi, Z' = Z sinh(g)/g and Y'/2 = (Y/2) tanh(g/2)/(g/2) with "
                "g = sqrt(Z Y), Y = j 2 pi f C l")
        if ln.mutual is not None:
            zm = ln.mutual.z0m_ohm_per_km * ln.length_km / zb
            add(f"      zero-sequence mutual with {ln.mutual.line}: Z0m = {_c(zm)} pu")
        if spec.line == ln.id:
            d = spec.fraction * ln.length_km
            add(f"      fault at m = {spec.fraction:.6g}, {d:.4f} km from {ln.from_bus}: the "
                f"line is split there into {d:.4f} km and {ln.length_km - d:.4f} km")
    for t in model.transformers:
        z1, z0 = transformer_z_pu(t, base)
        add(f"   transformer {t.id} {t.hv_bus}-{t.lv_bus} {t.vector_group}: "
            f"Z1 = Z2 = {_c(z1)}, Z0 = {_c(z0)} pu (z% on {t.mva:g} MVA x "
            f"{base:g}/{t.mva:g})")

    f = result.fault
    ref = reference_phase(spec.type)
    add("3. Pre-fault voltage and Thevenin sequence impedances at the fault point "
        f"({f.node}, {f.kv:g} kV)")
    add("   pre-fault: the source EMFs drive the linear network, Y1 V = sum(E / Z1); "
        "the fault by superposition")
    add(f"   V_pre (phase A) = {_p(f.v_pre_pu, 'pu', 5)}")
    add("   Z0, Z1, Z2 = diagonal entry of the inverse sequence admittance matrix at the "
        "fault point")
    for k, name in ((1, "Z1"), (2, "Z2"), (0, "Z0")):
        add(f"   {name} = {_c(f.z_thevenin_pu[k])} pu = {_c(f.z_thevenin_ohm[k], 3)} ohm")
    out.extend(_two_source_check(model, result))
    add(f"   Rf = {spec.r_fault_ohm:g} ohm = {f.r_fault_pu:.6f} pu;  Rg = {spec.r_ground_ohm:g} "
        f"ohm = {f.r_ground_pu:.6f} pu")

    add(f"4. Interconnection for {spec.type}")
    for line in _interconnection_text(spec.type, PHASES[ref]):
        add("   " + line)
    rot = (1.0, complex(np.exp(-2j * np.pi / 3)), complex(np.exp(2j * np.pi / 3)))[ref]
    add(f"   V = pre-fault voltage of phase {PHASES[ref]} = {_p(f.v_pre_pu * rot, 'pu', 5)}")
    i_cl = classical_fault_currents_012(spec.type, f.z_thevenin_pu, f.v_pre_pu,
                                        f.r_fault_pu, f.r_ground_pu)
    if ref:
        add(f"   (referred back to phase A: I_a1 = a^{ref} I_{PHASES[ref].lower()}1, "
            f"I_a2 = a^-{ref} I_{PHASES[ref].lower()}2)")
    diff = float(np.max(np.abs(i_cl - f.i_012_pu)))
    add(f"   classical formula vs the general phase-domain solution: largest difference "
        f"{diff:.2e} pu")

    add("5. Sequence currents and voltages at the fault (phase-A referred)")
    ib_f = i_base_a(f.kv, base)
    for k in (1, 2, 0):
        add(f"   I{k} = {_p(f.i_012_pu[k], 'pu', 5)} = {_p(f.i_012_pu[k] * ib_f, 'A', 1)}")
    add("   V1 = V_pre - Z1 I1,  V2 = -Z2 I2,  V0 = -Z0 I0")
    for k in (1, 2, 0):
        add(f"   V{k} = {_p(f.v_012_pu[k], 'pu', 5)} = {_p(f.v_012[k] / 1e3, 'kV', 4)}")

    add("6. Phase quantities at the fault: I_abc = A I_012, V_abc = A V_012 "
        "(A = [[1,1,1],[1,a^2,a],[1,a,a^2]])")
    for k in range(3):
        add(f"   {PHASES[k]}: I = {_p(f.i_abc[k], 'A', 1)}   V = {_p(f.v_abc[k] / 1e3, 'kV', 4)}")
    add(f"   check: 3 I0 = I_A + I_B + I_C = {_p(f.i_abc.sum(), 'A', 1)}")

    add("7. Contributions (current from the bus into the branch; sources: into the bus)")
    for b in result.branches:
        i1, i2, i0 = b.i_012_pu[1], b.i_012_pu[2], b.i_012_pu[0]
        name = "source" if b.kind == "source" else f"{b.kind} {b.element}"
        add(f"   {name} at {b.bus}: I1 = {_p(i1, 'pu', 5)}, I2 = {_p(i2, 'pu', 5)}, "
            f"I0 = {_p(i0, 'pu', 5)}")
        add("      phases: " + ",  ".join(f"{PHASES[k]} {_p(b.i_abc[k], 'A', 1)}"
                                        for k in range(3)))
    for t in model.transformers:
        k = t.clock
        zero = {("YN", "YN"): "passes (series path)", ("YN", "D"): "shunt at the HV bus, "
                "blocked to LV", ("D", "YN"): "shunt at the LV bus, blocked to HV"}.get(
            (t.hv_winding, t.lv_winding), "blocked (no path)")
        add(f"   transformer {t.id} {t.vector_group}: on the LV side the positive sequence lags "
            f"the HV side by {30 * k} deg, the negative sequence leads by {30 * k} deg; "
            f"zero sequence {zero}")
    add("8. Terminals (as their recorders see them)")
    for tid, ts in result.terminals.items():
        add(f"   {tid} (line {ts.line} at {ts.bus}): " + ",  ".join(
            f"I{PHASES[k]} {_p(ts.i_abc[k], 'A', 1)}" for k in range(3)))
    return out

