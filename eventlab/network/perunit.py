"""Per-unit system of a network model: bases per voltage zone, conversions both ways.

The MVA base is ``[system] base_mva``; each bus's voltage base is its nominal
``kv`` (line-to-line).  Lines join buses of equal ``kv`` only, so a *voltage
zone* (buses joined by lines) has one kV base; transformers join zones and are
taken with rated voltages equal to their buses' nominal voltages (no off-nominal
tap).  Each zone also has a reference angle: the first zone found is 0 and a
transformer of clock number k puts its LV zone k x 30 deg behind its HV zone
(IEC 60076-1), so that sources at their default angle 0 carry no load.

Notes
-----
``Z_base = kV^2 / MVA`` [ohm], ``I_base = MVA / (sqrt(3) kV)`` [kA],
``V_base = kV / sqrt(3)`` [kV line-to-ground]; a per-unit sequence voltage is
phase-A referred line-to-ground (common practice, no source).
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass

from eventlab.errors import ModelError
from eventlab.network.model import NetworkModel, Transformer

SQRT3 = math.sqrt(3.0)


def z_base_ohm(kv: float, base_mva: float) -> float:
    """Impedance base [ohm] for a line-to-line ``kv`` [kV] and ``base_mva`` [MVA]."""
    return kv * kv / base_mva


def i_base_a(kv: float, base_mva: float) -> float:
    """Current base [A]."""
    return base_mva * 1e6 / (SQRT3 * kv * 1e3)


def v_base_v(kv: float) -> float:
    """Line-to-ground voltage base [V]."""
    return kv * 1e3 / SQRT3


def ohm_to_pu(z_ohm: complex, kv: float, base_mva: float) -> complex:
    """Impedance [ohm] -> [pu]."""
    return z_ohm / z_base_ohm(kv, base_mva)


def pu_to_ohm(z_pu: complex, kv: float, base_mva: float) -> complex:
    """Impedance [pu] -> [ohm]."""
    return z_pu * z_base_ohm(kv, base_mva)


def amps_to_pu(i_a: complex, kv: float, base_mva: float) -> complex:
    """Current [A] -> [pu]."""
    return i_a / i_base_a(kv, base_mva)


def pu_to_amps(i_pu: complex, kv: float, base_mva: float) -> complex:
    """Current [pu] -> [A]."""
    return i_pu * i_base_a(kv, base_mva)


def volts_to_pu(v_v: complex, kv: float) -> complex:
    """Line-to-ground voltage [V] -> [pu]."""
    return v_v / v_base_v(kv)


def pu_to_volts(v_pu: complex, kv: float) -> complex:
    """Voltage [pu] -> line-to-ground [V]."""
    return v_pu * v_base_v(kv)


def transformer_z_pu(t: Transformer, base_mva: float) -> tuple[complex, complex]:
    """Positive- and zero-sequence short-circuit impedance of ``t`` on the system base [pu].

    Notes
    -----
    ``|z| = z% / 100 * base_mva / mva``, ``R = |z| / sqrt(1 + (X/R)^2)``, ``X = R (X/R)``.
    """
    out = []
    for zp in (t.z_percent, t.z0_percent):
        zmag = zp / 100.0 * base_mva / t.mva
        r = zmag / math.sqrt(1.0 + t.x_r * t.x_r)
        out.append(complex(r, r * t.x_r))
    return out[0], out[1]


@dataclass(frozen=True)
class Zone:
    """A voltage zone: index, kV base and reference angle [rad]."""

    index: int
    kv: float
    angle_rad: float


def voltage_zones(model: NetworkModel) -> dict[str, Zone]:
    """Voltage zone of every bus (breadth-first through lines and transformers).

    Raises
    ------
    ModelError
        When transformer phase shifts around a loop do not add up.
    """
    cached = model._cache.get("zones")
    if cached is not None:
        return cached
    adj: dict[str, list[tuple[str, float]]] = {b.id: [] for b in model.buses}
    for ln in model.lines:
        adj[ln.from_bus].append((ln.to_bus, 0.0))
        adj[ln.to_bus].append((ln.from_bus, 0.0))
    for t in model.transformers:
        shift = -t.clock * math.pi / 6.0
        adj[t.hv_bus].append((t.lv_bus, shift))
        adj[t.lv_bus].append((t.hv_bus, -shift))
    angle: dict[str, float] = {}
    zone_of: dict[str, int] = {}
    zone_kv: dict[int, float] = {}
    n_zone = 0
    kv = {b.id: b.kv for b in model.buses}
    for b in model.buses:
        if b.id in angle:
            continue
        angle[b.id] = 0.0
        queue = deque([b.id])
        while queue:
            u = queue.popleft()
            for v, shift in adj[u]:
                a = angle[u] + shift
                if v in angle:
                    d = (angle[v] - a + math.pi) % (2 * math.pi) - math.pi
                    if abs(d) > 1e-9:
                        raise ModelError(f"{model.source_name}: transformer phase shifts do not "
                                         f"agree around a loop through bus {v!r}")
                    continue
                angle[v] = a
                queue.append(v)
    # zones: buses joined by lines (lines join equal kV only)
    line_adj: dict[str, list[str]] = {b.id: [] for b in model.buses}
    for ln in model.lines:
        line_adj[ln.from_bus].append(ln.to_bus)
        line_adj[ln.to_bus].append(ln.from_bus)
    for b in model.buses:
        if b.id in zone_of:
            continue
        zone_of[b.id] = n_zone
        zone_kv[n_zone] = kv[b.id]
        queue = deque([b.id])
        while queue:
            u = queue.popleft()
            for v in line_adj[u]:
                if v not in zone_of:
                    zone_of[v] = n_zone
                    queue.append(v)
        n_zone += 1
    def wrap(a: float) -> float:
        w = (a + math.pi) % (2 * math.pi) - math.pi
        return math.pi if w <= -math.pi + 1e-12 else w

    zones = {bid: Zone(zone_of[bid], zone_kv[zone_of[bid]], wrap(angle[bid])) for bid in angle}
    model._cache["zones"] = zones
    return zones
