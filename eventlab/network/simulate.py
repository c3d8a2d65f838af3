"""Time-domain simulation of a line fault, recorded as COMTRADE at each terminal.

:func:`simulate` builds the three-phase circuit of a network model (sources
as EMFs behind coupled R-L, every line as coupled R-L sections in the phase
domain, optionally pi sections with shunt capacitance), switches the fault in
at the chosen point on wave, trips the faulted line's breakers pole by pole
at current zeros, and samples what a recorder at each terminal would see:
line-side voltages and the currents into the line through VT and CT ratios,
a relay trip output and the breaker auxiliary contacts.  The engine is
:mod:`eventlab.network.emt` (Dommel's companion models, trapezoidal rule).

:func:`write_simulation` writes one COMTRADE record per terminal through the
record layer's writer, plus ``truth.json`` with what was simulated.

Transformers are three two-winding units connected per their vector group
(no magnetising branch); lines with zero-sequence mutual coupling are
coupled 6 x 6 R-L pieces.

Conventions
-----------
Fault resistances follow the fault solver: phase-to-ground ``r_fault_ohm``;
phase-to-phase ``r_fault_ohm`` in total
between the two phases; two-phase-to-ground ``r_fault_ohm`` per phase to a
common point and ``r_ground_ohm`` from it to ground; three-phase
``r_fault_ohm`` per phase to a star point that is floating unless
``r_ground_ohm > 0``.  A zero resistance is replaced by
:data:`BOLTED_OHM` (the nodal solution needs a finite conductance; the
effect on the fault currents is of the order of 1e-5 relative).

Point on wave: ``inception_angle_deg`` is the phase of the local phase-A
voltage ``v_a = sqrt(2) |V_a| sin(theta)`` at inception, so 0 deg is its
rising zero crossing and 90 deg its positive peak (common practice, no
source).
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass, field, replace
from datetime import datetime
from pathlib import Path
from typing import Literal

import numpy as np

from eventlab.errors import ModelError
from eventlab.faulttypes import NO_FAULT, check_fault_type, faulted_phases
from eventlab.network.emt import (
    GROUND,
    Circuit,
    CircuitBuilder,
    Stepper,
    element_current_index,
    element_voltage_index,
)
from eventlab.network.emt_ct import CtSaturation, ct_secondary
from eventlab.network.emt_cvt import Cvt, cvt_output
from eventlab.network.model import Line, LineSection, NetworkModel, Terminal
from eventlab.network.perunit import transformer_z_pu, voltage_zones
from eventlab.records.build import make_record
from eventlab.records.model import Record
from eventlab.symmetrical import phase_matrix_from_sequence

#: Resistance standing in for a bolted fault or a closed breaker pole [ohm].
BOLTED_OHM = 1e-4
#: Resistance from every node to ground, so that no node floats [ohm].
LEAK_OHM = 1e7
#: Longest pi section of a line with capacitance [km] by default: chained
#: nominal pi sections approach the distributed line (the fault solver's exact
#: equivalent pi, :mod:`eventlab.network.longline`) with an error that falls as
#: the square of the section length; at 10 km the series impedance of a piece
#: is within 3e-5 of it at 60 Hz for the demo lines (0.26 % with one pi for the
#: 96 km line), at 2.5 times the simulation time of one pi per piece.
DEFAULT_PI_SEGMENT_KM = 10.0
#: Default record start (made up; fixed so that generated files are reproducible).
DEFAULT_START = datetime(2025, 3, 14, 2, 17, 5, 120000)

LineModel = Literal["rl", "pi"]
LINE_MODELS: tuple[str, ...] = ("rl", "pi")
VtSide = Literal["line", "bus"]
VT_SIDES: tuple[str, ...] = ("line", "bus")


@dataclass(frozen=True)
class LoadStep:
    """A constant-impedance load switched in at a bus (no-fault records).

    ``p_mw`` [MW] and ``q_mvar`` [Mvar] (lagging positive, three-phase) at the
    bus nominal voltage; switched in at ``at_s`` [s].
    """

    bus: str
    p_mw: float
    q_mvar: float = 0.0
    at_s: float = 0.1


@dataclass(frozen=True)
class SimulationSpec:
    """What to simulate.

    Parameters
    ----------
    line : str
        The line that faults (and whose breakers trip).
    fraction : float
        Fault position from the line's ``from`` bus, 0..1 of its length.
    type : str
        Fault code (AG ... ABC) or ``"none"`` for a record without fault.
    r_fault_ohm, r_ground_ohm : float
        Fault resistances [ohm] (module Conventions).
    inception_s : float
        Fault inception [s] from the first sample.
    inception_angle_deg : float, optional
        Point on wave of the local phase-A voltage [deg] (module Notes); the
        inception moves to the first such instant at or after ``inception_s``.
    relay_time_s : float
        Inception to the trip output (status channel ``TRIP``) [s].
    clear_after_s : float, optional
        Inception to the breaker open command completing [s]; each pole then
        opens at its next current zero.  ``None``: the fault is not cleared.
        ``clear_after_s - relay_time_s`` is the breaker time.
    duration_s : float
        Record length [s].
    samples_per_cycle : int
        Recorder rate, samples per nominal cycle.
    steps_per_cycle : int
        Minimum internal time steps per cycle (rounded up to a multiple of
        ``samples_per_cycle``).
    noise : float
        Standard deviation of additive noise relative to the channel's rated
        secondary value (VT: nominal phase voltage; CT: rated current) [-].
    seed : int
        Seed of the noise generator.
    ct_saturation : CtSaturation, optional
        CT core model, applied at the terminals named in ``ct_saturation_at``
        (all terminals when empty).
    cvt : Cvt, optional
        Capacitor voltage transformers (:mod:`eventlab.network.emt_cvt`: their
        subsidence transient after a voltage collapse) instead of ideal VTs,
        at the terminals named in ``cvt_at`` (all terminals when empty).
    evolve_to : str, optional
        Fault code the fault becomes ``evolve_after_s`` [s] after inception.
    reclose_after_s : float, optional
        Dead time [s] from the last pole opening to the reclose of both ends.
    reclose_ends : {"both", "from", "to"}
        Which ends reclose: both together, or only the line's ``from`` or
        ``to`` end (the leader of leader-follower reclosing; the follower stays
        open, as it does when the leader trips again onto a permanent fault).
    permanent : bool
        Whether the fault is still there at reclose (then the line trips again).
    single_pole : bool
        Open only the faulted pole for a single-phase-to-ground fault (and
        reclose it); a trip after reclose, or any other fault type, opens all
        three poles.
    remote_delay_s : float
        Sequential clearing: the breaker at the line's ``to`` end gets its trip
        and open command this much later than the ``from`` end [s] (negative:
        earlier), as when the ends' relays operate in different zones or
        through a slower channel.  Default 0 (both ends together).
    frequency_hz : float, optional
        Frequency of the sources [Hz] when it is not the model's nominal one
        (impedances stay those of the nominal frequency; the recorder still
        samples at ``samples_per_cycle`` times the nominal frequency).
    open_line_s : float, optional
        No-fault switching: the line's breakers are ordered open at this time [s].
    load_step : LoadStep, optional
        No-fault load change.
    line_model : {"rl", "pi"}, optional
        Series R-L sections, or nominal pi sections with the line
        capacitance.  Default: "pi" when the model gives capacitance, else "rl".
    pi_segment_km : float or None, optional
        Longest pi section [km] for ``"pi"`` (default
        :data:`DEFAULT_PI_SEGMENT_KM`, close to the distributed line); None
        for one nominal pi per piece of line between section joints and the
        fault point.
    vt_side : {"line", "bus"}
        Where the VTs measure: on the line side of the breaker (they see the
        line go dead when it opens) or on the bus.
    anti_alias_hz : float, optional
        Corner frequency [Hz] of a second-order Butterworth low-pass in front
        of the recorder's sampler (none by default; it delays the
        fundamental by a few degrees, as a real recorder's filter does).
    adc_bits : int, optional
        Quantise the secondary values as a recorder's converter of this many
        bits would, over the full scale of :func:`adc_full_scale` (values
        beyond it clip).  Default: only the file writer quantises.
    ct_ratio : (float, float), optional
        CT primary and secondary rating [A]; default 1200/5 at 60 Hz or
        1200/1 at 50 Hz.
    vt_ratio : (float, float), optional
        VT primary and secondary line-to-line rating [V]; default the bus
        voltage over 115 V (60 Hz) or 110 V (50 Hz).
    start : datetime
        Time stamp of the first sample.
    """

    line: str
    fraction: float
    type: str
    r_fault_ohm: float = 0.0
    r_ground_ohm: float = 0.0
    inception_s: float = 0.1
    inception_angle_deg: float | None = None
    relay_time_s: float = 0.025
    clear_after_s: float | None = 0.075
    duration_s: float = 0.4
    samples_per_cycle: int = 64
    steps_per_cycle: int = 1024
    noise: float = 0.0
    seed: int = 0
    ct_saturation: CtSaturation | None = None
    ct_saturation_at: tuple[str, ...] = ()
    cvt: Cvt | None = None
    cvt_at: tuple[str, ...] = ()
    evolve_to: str | None = None
    evolve_after_s: float = 0.0
    reclose_after_s: float | None = None
    reclose_ends: str = "both"
    permanent: bool = True
    single_pole: bool = False
    remote_delay_s: float = 0.0
    frequency_hz: float | None = None
    open_line_s: float | None = None
    load_step: LoadStep | None = None
    line_model: LineModel | None = None
    pi_segment_km: float | None = DEFAULT_PI_SEGMENT_KM
    vt_side: VtSide = "line"
    anti_alias_hz: float | None = None
    adc_bits: int | None = None
    ct_ratio: tuple[float, float] | None = None
    vt_ratio: tuple[float, float] | None = None
    start: datetime = DEFAULT_START

    def __post_init__(self) -> None:
        t = str(self.type).strip()
        canon = NO_FAULT if t.lower() == NO_FAULT else _fault_code("type", t)
        object.__setattr__(self, "type", canon)
        if self.evolve_to is not None:
            object.__setattr__(self, "evolve_to", _fault_code("evolve_to", self.evolve_to))
            if canon == NO_FAULT:
                raise ValueError("evolve_to needs a fault type, not 'none'")
        if self.r_ground_ohm and canon not in ("ABG", "BCG", "CAG", "ABC"):
            raise ValueError(f"r_ground_ohm applies to ABG, BCG, CAG and ABC only, not {canon} "
                             f"(put the whole resistance in r_fault_ohm)")
        if not (0.0 <= float(self.fraction) <= 1.0):
            raise ValueError(f"fraction must lie in [0, 1], got {self.fraction!r}")
        for name in ("r_fault_ohm", "r_ground_ohm", "relay_time_s", "noise", "evolve_after_s"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v >= 0):
                raise ValueError(f"{name} must be a finite number >= 0, got {v!r}")
        if self.frequency_hz is not None and not (math.isfinite(self.frequency_hz)
                                                  and 1.0 <= self.frequency_hz <= 1000.0):
            raise ValueError(f"frequency_hz must lie in 1..1000 Hz, got {self.frequency_hz!r}")
        if self.pi_segment_km is not None and not (math.isfinite(self.pi_segment_km)
                                                   and self.pi_segment_km > 0):
            raise ValueError(f"pi_segment_km must be a positive number, got {self.pi_segment_km!r}")
        for name in ("inception_s", "duration_s"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise ValueError(f"{name} must be a positive number, got {v!r}")
        if self.inception_s >= self.duration_s:
            raise ValueError(f"inception_s ({self.inception_s}) must be before the end of the "
                             f"record (duration_s {self.duration_s})")
        if not (math.isfinite(self.remote_delay_s)
                and self.relay_time_s + min(self.remote_delay_s, 0.0) >= 0.0):
            raise ValueError(f"remote_delay_s ({self.remote_delay_s}) must be finite and leave "
                             f"the remote trip at or after inception")
        if self.clear_after_s is not None and not (self.clear_after_s >= self.relay_time_s):
            raise ValueError(f"clear_after_s ({self.clear_after_s}) must be >= relay_time_s "
                             f"({self.relay_time_s})")
        if self.reclose_ends not in ("both", "from", "to"):
            raise ValueError(f"reclose_ends must be both, from or to, got "
                             f"{self.reclose_ends!r}")
        if self.reclose_after_s is not None and not self.reclose_after_s > 0:
            raise ValueError(f"reclose_after_s must be positive, got {self.reclose_after_s!r}")
        if not (isinstance(self.samples_per_cycle, int) and 8 <= self.samples_per_cycle <= 1024):
            raise ValueError(f"samples_per_cycle must be an integer in 8..1024, "
                             f"got {self.samples_per_cycle!r}")
        if not (isinstance(self.steps_per_cycle, int) and self.steps_per_cycle >= 64):
            raise ValueError(f"steps_per_cycle must be an integer >= 64, got "
                             f"{self.steps_per_cycle!r}")
        if self.anti_alias_hz is not None and not (math.isfinite(self.anti_alias_hz)
                                                   and self.anti_alias_hz > 0):
            raise ValueError(f"anti_alias_hz must be a positive frequency, got "
                             f"{self.anti_alias_hz!r}")
        if self.adc_bits is not None and not (isinstance(self.adc_bits, int)
                                              and 8 <= self.adc_bits <= 24):
            raise ValueError(f"adc_bits must be an integer in 8..24, got {self.adc_bits!r}")
        if self.vt_side not in VT_SIDES:
            raise ValueError(f"vt_side must be one of {', '.join(VT_SIDES)}, got {self.vt_side!r}")
        if self.line_model is not None and self.line_model not in LINE_MODELS:
            raise ValueError(f"line_model must be one of {', '.join(LINE_MODELS)}, "
                             f"got {self.line_model!r}")
        for name in ("ct_ratio", "vt_ratio"):
            v = getattr(self, name)
            if v is not None and (len(v) != 2 or not all(math.isfinite(x) and x > 0 for x in v)):
                raise ValueError(f"{name} must be two positive numbers (primary, secondary), "
                                 f"got {v!r}")


def _fault_code(name: str, code: str) -> str:
    try:
        return check_fault_type(code)
    except ValueError as exc:
        raise ValueError(f"{name}: {exc}") from None


@dataclass(frozen=True)
class Truth:
    """What was simulated: the answer a record analysis should find.

    Times are [s] from the first sample of the records.  ``distance_km`` is
    from the line's ``from`` bus; ``distance_from_km`` gives the distance from
    each terminal of the faulted line.
    """

    model: str
    line: str
    type: str
    fraction: float
    distance_km: float
    r_fault_ohm: float
    r_ground_ohm: float
    inception_s: float | None
    inception_angle_deg: float | None
    trip_s: Mapping[str, tuple[float, ...]]
    pole_open_s: Mapping[str, tuple[tuple[float | None, float | None, float | None], ...]]
    reclose_s: float | None
    clear_s: float | None
    evolve_to: str | None
    evolve_s: float | None
    permanent: bool
    frequency_hz: float
    samples_per_cycle: int
    steps_per_cycle: int
    line_model: str
    nearest_structure: str | None
    stations: Mapping[str, str]
    distance_from_km: Mapping[str, float] = field(default_factory=dict)
    source_frequency_hz: float | None = None
    notes: str = ""
    anti_alias_hz: float | None = None
    cvt: str | None = None                 # suppression circuit of the CVTs, None: ideal VTs

    def to_dict(self) -> dict:
        """JSON-ready mapping (angles in degrees, times in seconds)."""
        d = asdict(self)
        d["trip_s"] = {k: list(v) for k, v in self.trip_s.items()}
        d["pole_open_s"] = {k: [list(x) for x in v] for k, v in self.pole_open_s.items()}
        d["stations"] = dict(self.stations)
        d["distance_from_km"] = dict(self.distance_from_km)
        return d


@dataclass(frozen=True)
class SimulationResult:
    """Records per terminal id and the truth of the event."""

    records: Mapping[str, Record]
    truth: Truth
    terminals: Mapping[str, Terminal] = field(default_factory=dict, repr=False)


# ----------------------------------------------------------------------------- circuit

@dataclass(frozen=True)
class _Layout:
    circuit: Circuit
    breakers: dict[str, str]          # terminal/breaker key -> branch name
    line_end_nodes: dict[str, tuple[int, int, int]]
    fault_groups: tuple[str, ...]     # r-branch groups of fault slot 1, 2
    fault_ground: tuple[str, ...]     # their ground resistor groups ('' when none)
    faulted_breakers: tuple[str, ...]  # breaker keys of the faulted line
    leak_of: dict[int, str]           # node -> leak branch name
    load_groups: tuple[str, ...]


def _rl_of(z0: complex, z1: complex, omega: float) -> tuple[np.ndarray, np.ndarray]:
    z = phase_matrix_from_sequence(z0, z1)
    return np.real(z), np.imag(z) / omega


def _c_of(c0_f: float, c1_f: float) -> np.ndarray:
    return np.real(phase_matrix_from_sequence(c0_f, c1_f))


def _split_sections(line: Line, at_km: float | None) -> list[list[tuple[float, LineSection]]]:
    """The line's sections as pieces, cut at ``at_km``: [before, after] lists."""
    before: list[tuple[float, LineSection]] = []
    after: list[tuple[float, LineSection]] = []
    pos = 0.0
    for s in line.sections:
        a, b = pos, pos + s.length_km
        if at_km is None or at_km >= b:
            before.append((s.length_km, s))
        elif at_km <= a:
            after.append((s.length_km, s))
        else:
            before.append((at_km - a, s))
            after.append((b - at_km, s))
        pos = b
    return [before, after] if at_km is not None else [before]


def _fault_slot(code: str, r_f: float, r_g: float) -> tuple[list[int], float, float | None]:
    """Faulted phases, resistance per phase to the star point, star-to-ground (None: floating)."""
    ph = list(faulted_phases(code))
    rb = BOLTED_OHM
    if len(ph) == 1:
        return ph, max(r_f, rb), max(r_g, rb)
    if len(ph) == 2 and not code.endswith("G"):
        return ph, max(r_f / 2.0, rb), None
    if len(ph) == 2:
        return ph, max(r_f, rb), max(r_g, rb)
    return ph, max(r_f, rb), (r_g if r_g > 0 else None)


def _build(model: NetworkModel, spec: SimulationSpec, mode: str) -> _Layout:
    f = model.system.frequency_hz
    omega = 2.0 * math.pi * f
    fline = model.line(spec.line)
    zones = voltage_zones(model)
    cb = CircuitBuilder()
    kv = {b.id: b.kv for b in model.buses}
    for b in model.buses:
        cb.bus(b.id)
    # sources
    for k, s in enumerate(model.sources):
        if abs(s.z2_ohm - s.z1_ohm) > 1e-9 * abs(s.z1_ohm):
            raise ModelError(f"{model.source_name}: simulate: source at {s.bus} has z2 != z1, "
                             f"which a static R-L network cannot represent")
        r, ll = _rl_of(s.z0_ohm, s.z1_ohm, omega)
        ang = s.angle_rad + zones[s.bus].angle_rad
        e_a = math.sqrt(2.0) * s.emf_pu * kv[s.bus] * 1e3 / math.sqrt(3.0)
        emf = e_a * np.exp(1j * (ang + np.array([0.0, -2.0, 2.0]) * math.pi / 3.0))
        cb.add_rl(f"src{k}.{s.bus}", cb.bus(s.bus), (GROUND,) * 3, r, ll, emf_v=emf)
    breakers: dict[str, str] = {}
    line_end: dict[str, tuple[int, int, int]] = {}
    faulted_breakers: list[str] = []
    fault_nodes = None
    ends: dict[str, dict[str, tuple[int, int, int]]] = {}
    for ln in model.lines:
        ends[ln.id] = {}
        for bus in (ln.from_bus, ln.to_bus):
            key = f"{ln.id}@{bus}"
            nodes = cb.bus(f"{ln.id}.{bus}")
            name = f"brk.{key}"
            cb.add_r(name, cb.bus(bus), nodes, [BOLTED_OHM] * 3)
            breakers[key] = name
            line_end[key] = nodes
            ends[ln.id][bus] = nodes
            if ln.id == fline.id:
                faulted_breakers.append(key)
    done: set[str] = set()
    for ln in model.lines:
        if ln.id in done:
            continue
        at_km = None
        if ln.id == fline.id and spec.type != NO_FAULT:
            at_km = spec.fraction * ln.length_km
        if ln.mutual is not None:
            other = model.line(ln.mutual.line)
            done.update({ln.id, other.id})
            if other.id == fline.id and spec.type != NO_FAULT:
                ln, other = other, ln
                at_km = spec.fraction * ln.length_km
            fn = _pair_chain(cb, ln, other, ends, at_km, spec, omega, mode)
            if fn is not None:
                fault_nodes = fn
            continue
        done.add(ln.id)
        parts = _split_sections(ln, at_km)
        chain_start = ends[ln.id][ln.from_bus]
        for p_i, pieces in enumerate(parts):
            last = p_i == len(parts) - 1
            chain_end = ends[ln.id][ln.to_bus] if last else cb.bus(f"{ln.id}.F")
            if not last:
                fault_nodes = chain_end
            _chain(cb, f"{ln.id}.p{p_i}", chain_start, chain_end, pieces, spec, omega, mode)
            chain_start = chain_end
    for t in model.transformers:
        _add_transformer(cb, model, t, omega)
    fault_groups: list[str] = []
    fault_ground: list[str] = []
    if spec.type != NO_FAULT:
        codes = [spec.type] + ([spec.evolve_to] if spec.evolve_to else [])
        for k, code in enumerate(codes):
            ph, r_ph, r_g = _fault_slot(code, spec.r_fault_ohm, spec.r_ground_ohm)
            star = cb.node(f"fault{k}.N")
            gname = f"fault{k}"
            cb.add_r(gname, tuple(fault_nodes[i] for i in ph), (star,) * len(ph),
                     [r_ph] * len(ph), closed=[False] * len(ph))
            fault_groups.append(gname)
            if r_g is not None:
                cb.add_r(f"fault{k}.g", (star,), (GROUND,), [r_g], closed=[False])
                fault_ground.append(f"fault{k}.g")
            else:
                fault_ground.append("")
    load_groups: list[str] = []
    if spec.load_step is not None:
        ls = spec.load_step
        if ls.bus not in kv:
            raise ModelError(f"{model.source_name}: simulate: load_step bus {ls.bus!r} is not a bus "
                             f"of the model")
        v2 = (kv[ls.bus] * 1e3) ** 2
        if ls.p_mw > 0:
            r = v2 / (ls.p_mw * 1e6)
            cb.add_r("load.p", cb.bus(ls.bus), (GROUND,) * 3, [r] * 3, closed=[False] * 3)
            load_groups.append("load.p")
        if ls.q_mvar > 0:
            x = v2 / (ls.q_mvar * 1e6)
            mid = cb.bus("load.q")
            cb.add_r("load.q", cb.bus(ls.bus), mid, [BOLTED_OHM] * 3, closed=[False] * 3)
            cb.add_rl("load.ql", mid, (GROUND,) * 3, np.zeros((3, 3)), np.eye(3) * x / omega)
            load_groups.append("load.q")
    leak_of: dict[int, str] = {}
    for n in range(len(cb.node_names)):
        name = f"leak.{n}"
        cb.add_r(name, (n,), (GROUND,), [LEAK_OHM])
        leak_of[n] = name
    f_src = spec.frequency_hz if spec.frequency_hz is not None else f
    return _Layout(cb.build(f_src), breakers, line_end, tuple(fault_groups), tuple(fault_ground),
                   tuple(faulted_breakers), leak_of, tuple(load_groups))


def _chain(cb: CircuitBuilder, name: str, start, end, pieces, spec: SimulationSpec,
           omega: float, mode: str) -> None:
    """Series R-L (and shunt C) elements of ``pieces`` from node triple ``start`` to ``end``."""
    segs: list[tuple[float, LineSection]] = []
    for length, sec in pieces:
        if length <= 0:
            continue
        n = 1
        if mode == "pi" and spec.pi_segment_km is not None and sec.c1_nf_per_km > 0:
            n = max(1, math.ceil(length / spec.pi_segment_km - 1e-9))
        segs.extend([(length / n, sec)] * n)
    if not segs:  # fault exactly at a line end: zero-length piece
        cb.add_r(f"{name}.tie", start, end, [BOLTED_OHM] * 3)
        return
    node = start
    for k, (length, sec) in enumerate(segs):
        nxt = end if k == len(segs) - 1 else cb.bus(f"{name}.n{k}")
        r, ll = _rl_of(sec.z0_ohm_per_km * length, sec.z1_ohm_per_km * length, omega)
        cb.add_rl(f"{name}.s{k}", node, nxt, r, ll)
        if mode == "pi" and sec.c1_nf_per_km > 0:
            c = _c_of(sec.c0_nf_per_km * 1e-9 * length / 2.0, sec.c1_nf_per_km * 1e-9 * length / 2.0)
            cb.add_c(f"{name}.c{k}a", node, (GROUND,) * 3, c)
            cb.add_c(f"{name}.c{k}b", nxt, (GROUND,) * 3, c)
        node = nxt


def _pair_chain(cb: CircuitBuilder, la: Line, lb: Line, ends, at_km, spec: SimulationSpec,
                omega: float, mode: str):
    """Two lines with zero-sequence mutual coupling as coupled 6 x 6 R-L pieces.

    Both lines are cut at the fault point of ``la`` (if any); positions run from
    ``la.from_bus``.  Returns the fault node triple on ``la`` or None.
    """
    sa, sb = la.sections[0], lb.sections[0]
    length = la.length_km
    z0m = la.mutual.z0m_ohm_per_km
    cuts = [0.0, length] if at_km is None else sorted({0.0, float(at_km), length})
    a_prev, b_prev = ends[la.id][la.from_bus], ends[lb.id][la.from_bus]
    fault_nodes = None
    if at_km is not None and at_km <= 0.0:
        fault_nodes = a_prev
    if at_km is not None and at_km >= length:
        fault_nodes = ends[la.id][la.to_bus]
    segs: list[tuple[float, bool]] = []   # (length, ends at the fault point)
    for j in range(len(cuts) - 1):
        piece = cuts[j + 1] - cuts[j]
        n = 1
        if mode == "pi" and spec.pi_segment_km is not None:
            n = max(1, math.ceil(piece / spec.pi_segment_km - 1e-9))
        for q in range(n):
            segs.append((piece / n, q == n - 1 and at_km is not None
                         and abs(cuts[j + 1] - at_km) < 1e-12))
    for k, (seg_km, at_fault) in enumerate(segs):
        last = k == len(segs) - 1
        if last:
            a_next, b_next = ends[la.id][la.to_bus], ends[lb.id][la.to_bus]
        else:
            a_next = cb.bus(f"{la.id}.F" if at_fault else f"{la.id}.m{k}")
            b_next = cb.bus(f"{lb.id}.m{k}")
        if at_fault:
            fault_nodes = a_next
        za = phase_matrix_from_sequence(sa.z0_ohm_per_km * seg_km, sa.z1_ohm_per_km * seg_km)
        zb = phase_matrix_from_sequence(sb.z0_ohm_per_km * seg_km, sb.z1_ohm_per_km * seg_km)
        zm = phase_matrix_from_sequence(z0m * seg_km, 0.0)
        z6 = np.block([[za, zm], [zm, zb]])
        cb.add_rl(f"{la.id}+{lb.id}.s{k}", a_prev + b_prev, a_next + b_next, np.real(z6),
                  np.imag(z6) / omega)
        if mode == "pi":
            for sec, n_prev, n_next, tag in ((sa, a_prev, a_next, "a"), (sb, b_prev, b_next, "b")):
                if sec.c1_nf_per_km > 0:
                    c = _c_of(sec.c0_nf_per_km * 1e-9 * seg_km / 2.0,
                              sec.c1_nf_per_km * 1e-9 * seg_km / 2.0)
                    cb.add_c(f"{la.id}+{lb.id}.c{k}{tag}1", n_prev, (GROUND,) * 3, c)
                    cb.add_c(f"{la.id}+{lb.id}.c{k}{tag}2", n_next, (GROUND,) * 3, c)
        a_prev, b_prev = a_next, b_next
    return fault_nodes


def _winding_options(hv_w: str, lv_w: str):
    """Candidate LV connections: (LV node pairs per unit k, sign) for each rotation/polarity."""
    opts = []
    for r in range(3):
        for sign in (1.0, -1.0):
            if lv_w == "D":
                for d in (1, 2):
                    opts.append(([((k + r) % 3, (k + r + d) % 3) for k in range(3)], sign))
            else:
                opts.append(([((k + r) % 3, None) for k in range(3)], sign))
    return opts


def _lv_positive_sequence(hv_pairs, lv_pairs, sign, turns):
    """Positive-sequence LV phase voltages for HV phase voltages (1, a^2, a)."""
    a = np.exp(2j * np.pi / 3.0)
    vp = np.array([1.0, a * a, a])
    w = np.array([vp[f] - (vp[t] if t is not None else 0.0) for f, t in hv_pairs]) / turns
    m = np.zeros((4, 3), complex)
    rhs = np.zeros(4, complex)
    for k, (p, q) in enumerate(lv_pairs):
        m[k, p] += 1.0
        if q is not None:
            m[k, q] -= 1.0
        rhs[k] = sign * w[k]
    m[3, :] = 1.0   # positive sequence: no zero-sequence part
    return np.linalg.lstsq(m, rhs, rcond=None)[0]


def _add_transformer(cb: CircuitBuilder, model: NetworkModel, t, omega: float) -> None:
    """Three two-winding units in the vector group's connection (no magnetising branch).

    The leakage of the three units is one coupled 3 x 3 R-L group built from
    the positive- and zero-sequence short-circuit impedances (referred to the
    HV winding), so that the sequence impedances are those of the fault
    solver; the LV connection is the one of the three rotations, two
    polarities (and two delta senses) whose positive-sequence shift is
    ``clock x 30 deg`` lagging (IEC 60076-1).
    """
    hv, lv = cb.bus(t.hv_bus), cb.bus(t.lv_bus)
    kv_h, kv_l = model.bus(t.hv_bus).kv, model.bus(t.lv_bus).kv
    hw, lw = t.hv_winding, t.lv_winding
    s3 = math.sqrt(3.0)
    vwh = kv_h * 1e3 / s3 if hw != "D" else kv_h * 1e3
    vwl = kv_l * 1e3 / s3 if lw != "D" else kv_l * 1e3
    turns = vwh / vwl
    z1pu, z0pu = transformer_z_pu(t, t.mva)           # on the transformer's own rating
    zb_w = vwh * vwh / (t.mva * 1e6 / 3.0)
    zw = phase_matrix_from_sequence(z0pu * zb_w, z1pu * zb_w)

    def star(tag: str, winding: str, z_n: complex):
        if winding != "YN":
            return cb.node(f"{t.id}.{tag}N")          # floating star (leak only)
        if abs(z_n) == 0.0:
            return GROUND
        n = cb.node(f"{t.id}.{tag}N")
        if z_n.imag > 0:
            cb.add_rl(f"{t.id}.{tag}zn", (n,), (GROUND,), [[z_n.real]], [[z_n.imag / omega]])
        else:
            cb.add_r(f"{t.id}.{tag}zn", (n,), (GROUND,), [max(z_n.real, BOLTED_OHM)])
        return n

    if hw == "D":
        hv_pairs = [(k, (k + 1) % 3) for k in range(3)]
        hv_from = tuple(hv[k] for k in range(3))
        hv_to = tuple(hv[(k + 1) % 3] for k in range(3))
    else:
        hn = star("H", hw, t.z_n_hv_ohm)
        hv_pairs = [(k, None) for k in range(3)]
        hv_from, hv_to = tuple(hv), (hn,) * 3
    want = -t.clock * math.pi / 6.0
    ratio = kv_l / kv_h
    chosen = None
    for lv_pairs, sign in _winding_options(hw, lw):
        v = _lv_positive_sequence(hv_pairs, lv_pairs, sign, turns)
        if (abs(abs(v[0]) - ratio) < 1e-9 * ratio
                and abs(np.angle(v[0] * np.exp(-1j * want))) < 1e-9):
            chosen = (lv_pairs, sign)
            break
    if chosen is None:  # pragma: no cover - every valid vector group has a connection
        raise ModelError(f"{model.source_name}: simulate: no winding connection found for "
                         f"transformer {t.id} ({t.vector_group})")
    lv_pairs, sign = chosen
    ln_ = star("L", lw, t.z_n_lv_ohm) if lw != "D" else None
    f2, t2 = [], []
    for p, q in lv_pairs:
        a_node = lv[p]
        b_node = lv[q] if q is not None else ln_
        if sign < 0:
            a_node, b_node = b_node, a_node
        f2.append(a_node)
        t2.append(b_node)
    cb.add_winding_rl(f"xfmr.{t.id}", hv_from, hv_to, f2, t2, [turns] * 3, np.real(zw),
                      np.imag(zw) / omega)


# ----------------------------------------------------------------------------- run

def _steps_per_cycle(spec: SimulationSpec) -> int:
    k = max(1, math.ceil(spec.steps_per_cycle / spec.samples_per_cycle))
    return k * spec.samples_per_cycle


def simulate(model: NetworkModel, spec: SimulationSpec) -> SimulationResult:
    """Simulate ``spec`` on ``model`` and return a record per terminal and the truth.

    Parameters
    ----------
    model : NetworkModel
    spec : SimulationSpec

    Returns
    -------
    SimulationResult
        ``records`` keyed by terminal id (every terminal of the model), with
        voltages [V] and currents [A] in primary values and VT/CT ratios in
        the channels; ``truth``.

    Raises
    ------
    ModelError
        When the model holds what the simulation cannot represent, or the
        spec names an unknown line or bus.

    Notes
    -----
    Engine and references: :mod:`eventlab.network.emt` (Dommel 1969; Marti
    and Lin 1989).  Internal step ``1 / (f * steps_per_cycle)``; the recorder
    samples every ``steps_per_cycle / samples_per_cycle``-th step, after the
    optional anti-aliasing filter (``anti_alias_hz``).
    """
    f = model.system.frequency_hz
    f_src = spec.frequency_hz if spec.frequency_hz is not None else f
    omega = 2.0 * math.pi * f_src          # the sources' angular frequency
    fline = model.line(spec.line)
    if spec.load_step is not None and spec.type != NO_FAULT:
        raise ModelError("simulate: load_step is for no-fault records (type 'none')")
    has_c = any(sec.c1_nf_per_km > 0 for ln in model.lines for sec in ln.sections)
    mode = spec.line_model or ("pi" if has_c else "rl")
    if mode == "pi" and not has_c:
        raise ModelError(f"{model.source_name}: simulate: line_model 'pi' needs c1_nf_per_km and "
                         f"c0_nf_per_km on the lines")
    unknown = [t for t in (*spec.ct_saturation_at, *spec.cvt_at)
               if t not in {x.id for x in model.terminals}]
    if unknown:
        raise ModelError(f"{model.source_name}: simulate: ct_saturation_at or cvt_at names unknown "
                         f"terminal(s) {', '.join(unknown)}; terminals are "
                         f"{', '.join(t.id for t in model.terminals)}")
    lay = _build(model, spec, mode)
    circuit = lay.circuit
    spc_int = _steps_per_cycle(spec)
    decim = spc_int // spec.samples_per_cycle
    dt = 1.0 / (f * spc_int)
    n_total = int(round(spec.duration_s / dt / decim)) * decim

    # watched quantities: per breaker 3 currents, per line end 3 voltages
    keys = list(lay.breakers)
    watch: list[int] = []
    cur_slot: dict[str, slice] = {}
    volt_slot: dict[str, slice] = {}
    for key in keys:
        s0 = len(watch)
        watch.extend(element_current_index(circuit, lay.breakers[key]).tolist())
        cur_slot[key] = slice(s0, s0 + 3)
    for key in keys:
        s0 = len(watch)
        if spec.vt_side == "bus":
            bus = key.split("@", 1)[1]
            vt_nodes = [circuit.node_index(f"{bus}.{p}") for p in "ABC"]
        else:
            vt_nodes = lay.line_end_nodes[key]
        for node in vt_nodes:
            watch.extend(element_voltage_index(circuit, lay.leak_of[node]).tolist())
        volt_slot[key] = slice(s0, s0 + 3)

    closed: dict[str, tuple[bool, ...]] = {}
    st = Stepper(circuit, dt, closed, np.array(watch), n_total)

    # ---- point on wave
    local_key = _local_key(model, fline)
    inception_s = None
    inc_angle = None
    if spec.type != NO_FAULT:
        t_inc = spec.inception_s
        # local phase-A voltage phasor (cosine reference, peak) from the steady state
        big = st.steady_phasors()
        va_peak = big[watch[volt_slot[local_key].start]]
        if spec.inception_angle_deg is not None:
            # sin(omega t + arg(va) + pi/2) = sin(theta)
            theta = math.radians(spec.inception_angle_deg)
            phase0 = omega * t_inc + np.angle(va_peak) + math.pi / 2.0
            adv = (theta - phase0) % (2.0 * math.pi)
            t_inc = t_inc + adv / omega
        n_inc = int(round(t_inc / dt))
        if n_inc >= n_total:
            raise ModelError(f"simulate: the inception ({t_inc:.4f} s) falls after the end of the "
                             f"record ({spec.duration_s} s)")
        inception_s = n_inc * dt
        ph = omega * inception_s + np.angle(va_peak) + math.pi / 2.0
        inc_angle = math.degrees(ph) % 360.0
        if inc_angle > 360.0 - 1e-9:
            inc_angle = 0.0

    # ---- events: (step, kind, payload)
    events: list[tuple[int, int, str, object]] = []
    seq = [0]

    def at(t_s: float, kind: str, payload=None) -> None:
        seq[0] += 1
        events.append((max(int(round(t_s / dt)), 1), seq[0], kind, payload))

    def protection(t0_s: float, only: tuple[str, ...] | None = None) -> None:
        """Trip and open commands from ``t0_s``, the ``to`` end ``remote_delay_s`` apart.

        ``only``: the breakers that trip (after a reclose by one end, that end's).
        """
        groups = [(0.0, only)]
        if spec.remote_delay_s != 0.0 and only is None:
            far = tuple(k for k in lay.faulted_breakers if k.split("@", 1)[1] == fline.to_bus)
            near = tuple(k for k in lay.faulted_breakers if k not in far)
            groups = [(0.0, near), (spec.remote_delay_s, far)]
        for delay, keys in groups:
            at(t0_s + spec.relay_time_s + delay, "trip", keys)
            if spec.clear_after_s is not None:
                at(t0_s + spec.clear_after_s + delay, "open", keys)

    if spec.type != NO_FAULT:
        at(inception_s, "fault", 0)
        if spec.evolve_to:
            at(inception_s + spec.evolve_after_s, "fault", 1)
        protection(inception_s)
    if spec.open_line_s is not None:
        at(spec.open_line_s, "open", None)
    if spec.load_step is not None:
        at(spec.load_step.at_s, "load", None)

    pole_closed = {k: [True, True, True] for k in keys}
    pending: set[tuple[str, int]] = set()
    trip_on: dict[str, list[float]] = {k: [] for k in lay.faulted_breakers}
    trip_off: dict[str, list[float]] = {k: [] for k in lay.faulted_breakers}
    opened: dict[str, list[list[float | None]]] = {k: [] for k in lay.faulted_breakers}
    fault_slot = -1
    reclose_s = None
    reclosed: set[str] = set()          # breakers that reclosed
    evolve_s = None
    clear_s = None

    target: dict[str, tuple[int, ...]] = {}
    codes = [spec.type] + ([spec.evolve_to] if spec.evolve_to else [])

    def breaker_state(key):
        return tuple(pole_closed[key])

    while st.n < n_total:
        n_next = min([e[0] for e in events], default=n_total)
        n_next = min(n_next, n_total)
        if n_next > st.n:
            if pending:
                watch_pos = [cur_slot[k].start + p for (k, p) in sorted(pending)]

                def crossed(prev, now, watch_pos=watch_pos):
                    return any(prev[j] * now[j] <= 0.0 for j in watch_pos)

                st.run(n_next, stop_when=crossed)
            else:
                st.run(n_next)
        if st.n >= n_total:
            break
        changes: dict[str, tuple[bool, ...]] = {}
        now_s = st.n * dt
        if pending:
            prev, now = st.out[:, st.n - 1], st.out[:, st.n]
            hit = [(k, p) for (k, p) in pending
                   if prev[cur_slot[k].start + p] * now[cur_slot[k].start + p] <= 0.0]
            for k, p in hit:
                pending.discard((k, p))
                pole_closed[k][p] = False
                if k in opened:
                    opened[k][-1][p] = now_s
                changes[lay.breakers[k]] = breaker_state(k)
            def tripped(k):
                return all(not pole_closed[k][p] for p in target.get(k, (0, 1, 2)))

            for k in {k for k, _ in hit}:
                if tripped(k) and k in trip_on and len(trip_off[k]) < len(trip_on[k]):
                    trip_off[k].append(now_s)
            if hit and not pending and all(tripped(k) for k in lay.faulted_breakers):
                if clear_s is None and spec.type != NO_FAULT:
                    clear_s = now_s
                if (spec.reclose_after_s is not None and reclose_s is None
                        and spec.type != NO_FAULT):
                    at(now_s + spec.reclose_after_s, "close", None)
                    if not spec.permanent:
                        changes.update(_fault_changes(lay, -1))
                        fault_slot = -1
        for e in sorted(e for e in events if e[0] <= st.n):
            _, _, kind, payload = e
            events.remove(e)
            if kind == "fault":
                fault_slot = int(payload)
                changes.update(_fault_changes(lay, fault_slot))
                if fault_slot == 1:
                    evolve_s = now_s
            elif kind == "trip":
                for k in (payload if payload is not None else lay.faulted_breakers):
                    trip_on[k].append(now_s)
            elif kind == "open":
                phases = (0, 1, 2)
                code = codes[fault_slot] if fault_slot >= 0 else NO_FAULT
                if (spec.single_pole and reclose_s is None and code != NO_FAULT
                        and len(faulted_phases(code)) == 1):
                    phases = faulted_phases(code)
                for k in (payload if payload is not None else lay.faulted_breakers):
                    target[k] = phases
                    if k in opened:
                        opened[k].append([None, None, None])
                    for p in phases:
                        if pole_closed[k][p]:
                            pending.add((k, p))
            elif kind == "close":
                reclose_s = now_s
                for k in lay.faulted_breakers:
                    if not _recloses(k, fline, spec.reclose_ends):
                        continue
                    reclosed.add(k)
                    pole_closed[k] = [True, True, True]
                    changes[lay.breakers[k]] = breaker_state(k)
                if spec.permanent and fault_slot >= 0:
                    protection(now_s, None if spec.reclose_ends == "both"
                               else tuple(sorted(reclosed)))
            elif kind == "load":
                for g in lay.load_groups:
                    changes[g] = (True, True, True)
        if changes:
            st.switch(changes)
    # trip status still high at the end
    out = st.out

    # ---- recorder
    terms = {t.id: t for t in model.terminals}
    records: dict[str, Record] = {}
    rng = np.random.default_rng(spec.seed)
    trigger_s = next((x for x in (inception_s, spec.open_line_s,
                                  spec.load_step.at_s if spec.load_step else None)
                      if x is not None), 0.0)
    n_rec = n_total // decim + 1
    t_rec = np.arange(n_rec) / (f * spec.samples_per_cycle)
    for t in model.terminals:
        key = f"{t.line}@{t.bus}"
        i_prim = out[cur_slot[key], :]
        if t.ct_polarity == "reversed":
            i_prim = -i_prim
        v_prim = out[volt_slot[key], :]
        kv = model.bus(t.bus).kv
        ct = spec.ct_ratio or ((1200.0, 5.0) if f > 55 else (1200.0, 1.0))
        vt = spec.vt_ratio or (kv * 1e3, 115.0 if f > 55 else 110.0)
        ct_n = ct[0] / ct[1]
        vt_n = vt[0] / vt[1]
        i_sec = i_prim / ct_n
        if spec.ct_saturation is not None and (not spec.ct_saturation_at
                                               or t.id in spec.ct_saturation_at):
            i_sec = ct_secondary(i_sec, dt, f, spec.ct_saturation)
        if spec.cvt is not None and (not spec.cvt_at or t.id in spec.cvt_at):
            v_prim = cvt_output(v_prim, dt, f, spec.cvt, vt[1] / math.sqrt(3.0))
        if spec.anti_alias_hz is not None:
            i_sec = _anti_alias(i_sec, dt, spec.anti_alias_hz, spc_int)
            v_prim = _anti_alias(v_prim, dt, spec.anti_alias_hz, spc_int)
        i_sec = i_sec[:, ::decim]
        v_sec = v_prim[:, ::decim] / vt_n
        if spec.noise > 0:
            v_sec = v_sec + rng.normal(0.0, spec.noise * vt[1] / math.sqrt(3.0), v_sec.shape)
            i_sec = i_sec + rng.normal(0.0, spec.noise * ct[1], i_sec.shape)
        if spec.adc_bits is not None:
            v_sec = _adc(v_sec, adc_full_scale(vt[1], "V", spec.adc_bits)[0], spec.adc_bits)
            i_sec = _adc(i_sec, adc_full_scale(ct[1], "A", spec.adc_bits)[0], spec.adc_bits)
        status = _status_waveforms(t_rec, key, trip_on, trip_off, opened,
                                   reclose_s if key in reclosed else None)
        records[t.id] = _make_record(model, t, spec, t_rec, v_sec * vt_n, i_sec * ct_n,
                                     vt, ct, status, trigger_s)

    distance_km = spec.fraction * fline.length_km
    nearest = None
    if fline.structures and spec.type != NO_FAULT:
        nearest = min(fline.structures, key=lambda s: abs(s.distance_km - distance_km)).structure
    pole_open = {_term_id(model, k): tuple(tuple(x) for x in v) for k, v in opened.items()}
    trips = {_term_id(model, k): tuple(v) for k, v in trip_on.items()}
    truth = Truth(
        model=model.system.name, line=fline.id, type=spec.type, fraction=float(spec.fraction),
        distance_km=round(float(distance_km), 6) if spec.type != NO_FAULT else 0.0,
        r_fault_ohm=float(spec.r_fault_ohm), r_ground_ohm=float(spec.r_ground_ohm),
        inception_s=inception_s, inception_angle_deg=inc_angle,
        trip_s=trips, pole_open_s=pole_open, reclose_s=reclose_s, clear_s=clear_s,
        evolve_to=spec.evolve_to, evolve_s=evolve_s, permanent=bool(spec.permanent),
        frequency_hz=float(f), source_frequency_hz=float(f_src),
        samples_per_cycle=spec.samples_per_cycle,
        steps_per_cycle=spc_int, line_model=mode, nearest_structure=nearest,
        stations={t.id: t.station for t in model.terminals},
        distance_from_km={t.id: round(float(distance_km if t.bus == fline.from_bus
                                            else fline.length_km - distance_km), 6)
                          for t in model.terminals_of_line(fline.id)}
        if spec.type != NO_FAULT else {},
        anti_alias_hz=spec.anti_alias_hz,
        cvt=None if spec.cvt is None else spec.cvt.fsc,
    )
    return SimulationResult(records=records, truth=truth, terminals=terms)


def adc_full_scale(rated_secondary: float, unit: str, bits: int) -> tuple[float, float]:
    """Full scale (peak) [V or A] and step of the simulated recorder's converter.

    VT inputs span +-2 times the peak of the rated phase voltage
    (``rated_secondary`` line-to-line [V]), CT inputs +-40 times the peak of
    the rated current [A] (common practice, no source: fault recorders are
    ranged for about 2 pu voltage and 20-40 times rated current).
    """
    if unit == "V":
        fs = 2.0 * math.sqrt(2.0) * rated_secondary / math.sqrt(3.0)
    else:
        fs = 40.0 * math.sqrt(2.0) * rated_secondary
    return fs, fs / (2 ** (bits - 1) - 1)


def _adc(x: np.ndarray, full_scale: float, bits: int) -> np.ndarray:
    step = full_scale / (2 ** (bits - 1) - 1)
    return np.clip(np.rint(x / step), -(2 ** (bits - 1) - 1), 2 ** (bits - 1) - 1) * step


def _anti_alias(x: np.ndarray, dt: float, corner_hz: float, steps_per_cycle: int) -> np.ndarray:
    """Second-order Butterworth low-pass at the internal rate (scipy.signal.butter).

    The filter starts settled on the record's first cycle (periodic pre-event
    steady state, repeated twice in front and dropped afterwards).
    """
    from scipy.signal import butter, sosfilt

    fs = 1.0 / dt
    if not corner_hz < fs / 2.0:
        raise ModelError(f"simulate: anti_alias_hz {corner_hz} Hz must be below half the "
                         f"internal rate ({fs / 2.0:.0f} Hz)")
    sos = butter(2, corner_hz, fs=fs, output="sos")
    lead = np.concatenate([x[:, :steps_per_cycle]] * 2, axis=1)
    y = sosfilt(sos, np.concatenate([lead, x], axis=1), axis=1)
    return y[:, lead.shape[1]:]


def _term_id(model: NetworkModel, key: str) -> str:
    line, bus = key.split("@", 1)
    for t in model.terminals:
        if t.line == line and t.bus == bus:
            return t.id
    return key


def _local_key(model: NetworkModel, line: Line) -> str:
    for t in model.terminals:
        if t.line == line.id:
            return f"{line.id}@{t.bus}"
    return f"{line.id}@{line.from_bus}"


def _fault_changes(lay: _Layout, slot: int) -> dict[str, tuple[bool, ...]]:
    ch: dict[str, tuple[bool, ...]] = {}
    for k, (g, gg) in enumerate(zip(lay.fault_groups, lay.fault_ground, strict=True)):
        m = len(next(b for b in lay.circuit.branches if b.name == g).nodes_from)
        ch[g] = (k == slot,) * m
        if gg:
            ch[gg] = (k == slot,)
    return ch


def _recloses(key: str, line: Line, ends: str) -> bool:
    """Whether the breaker ``key`` (``"line@bus"``) recloses with ``reclose_ends``."""
    if ends == "both" or not key.startswith(f"{line.id}@"):
        return True
    bus = key.split("@", 1)[1]
    return bus == (line.from_bus if ends == "from" else line.to_bus)


def _status_waveforms(t_rec, key, trip_on, trip_off, opened, reclose_s):
    """TRIP and 52A-A/B/C as 0/1 arrays on the record time base."""
    n = t_rec.size
    trip = np.zeros(n, np.uint8)
    for i, t_on in enumerate(trip_on.get(key, [])):
        offs = trip_off.get(key, [])
        t_off = offs[i] if i < len(offs) else math.inf
        trip[(t_rec >= t_on - 1e-12) & (t_rec < t_off - 1e-12)] = 1
    poles = np.ones((3, n), np.uint8)
    cycles = opened.get(key, [])
    for i, cyc in enumerate(cycles):
        for p in range(3):
            if cyc[p] is not None:
                t_close = reclose_s if (reclose_s is not None and reclose_s > cyc[p]
                                        and i == 0) else math.inf
                poles[p, (t_rec >= cyc[p] - 1e-12) & (t_rec < t_close - 1e-12)] = 0
    return trip, poles


def _make_record(model: NetworkModel, t: Terminal, spec: SimulationSpec, t_rec, v_prim, i_prim,
                 vt, ct, status, trigger_s: float) -> Record:
    """The terminal's record in primary values, VT/CT ratios in the channels."""
    names = {role: t.channels.get(role, role) for role in
             ("VA", "VB", "VC", "IA", "IB", "IC", "IN", "TRIP", "52A-A", "52A-B", "52A-C")}
    analog = []
    for k, role in enumerate(("VA", "VB", "VC")):
        analog.append({"name": names[role], "phase": "ABC"[k], "unit": "V", "values": v_prim[k],
                       "circuit": t.line, "primary": float(vt[0]), "secondary": float(vt[1])})
    for k, role in enumerate(("IA", "IB", "IC")):
        analog.append({"name": names[role], "phase": "ABC"[k], "unit": "A", "values": i_prim[k],
                       "circuit": t.line, "primary": float(ct[0]), "secondary": float(ct[1])})
    analog.append({"name": names["IN"], "phase": "N", "unit": "A", "values": i_prim.sum(axis=0),
                   "circuit": t.line, "primary": float(ct[0]), "secondary": float(ct[1])})
    trip, poles = status
    st = [{"name": names["TRIP"], "values": trip, "circuit": t.line, "normal": 0}]
    for p in range(3):
        role = f"52A-{'ABC'[p]}"
        st.append({"name": names[role], "values": poles[p], "circuit": t.line,
                   "phase": "ABC"[p], "normal": 1})
    f = model.system.frequency_hz
    return make_record(t.station, f * spec.samples_per_cycle, analog, st, frequency_hz=f,
                       device=f"{t.id} simulated", start=spec.start, trigger_s=trigger_s,
                       values="primary")


def to_secondary(record: Record) -> Record:
    """``record`` with its analog values divided by their primary/secondary ratios.

    The channels' ``ps`` flags become ``"S"`` and ``record.values`` "secondary",
    as a recorder that stores secondary values writes them.
    """
    if record.values == "secondary":
        return record
    chans = []
    for ch in record.analog:
        v = np.array(ch.values / ch.ratio)
        v.setflags(write=False)
        chans.append(replace(ch, values=v, ps="S"))
    return replace(record, analog=tuple(chans), values="secondary")


# ----------------------------------------------------------------------------- writing

def file_stem(station: str) -> str:
    """File name stem for a station: spaces become underscores."""
    return "_".join(str(station).split())


def write_simulation(result: SimulationResult, out_dir, data_format: str = "BINARY",
                     revision: int = 1999, single_file: bool = False) -> list[Path]:
    """Write every record (``<STATION>.cfg/.dat``) and ``truth.json`` into ``out_dir``.

    Parameters
    ----------
    result : SimulationResult
    out_dir : str or Path
        Created when missing.
    data_format : {"ASCII", "BINARY", "BINARY32", "FLOAT32"}
    revision : {1999, 2013}
    single_file : bool
        Write a 2013 ``.cff`` instead of ``.cfg``/``.dat``.

    Returns
    -------
    list of Path
        The files written.
    """
    from eventlab.records.writer import write_record

    data_format = str(data_format).upper()
    if data_format not in ("ASCII", "BINARY", "BINARY32", "FLOAT32"):
        raise ValueError(f"data_format must be ASCII, BINARY, BINARY32 or FLOAT32, "
                         f"got {data_format!r}")
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    paths: list[Path] = []
    stems = [file_stem(r.station) for r in result.records.values()]
    for tid, rec in result.records.items():
        stem = file_stem(rec.station)
        if stems.count(stem) > 1:
            stem = file_stem(f"{rec.station} {tid}")
        rec = replace(to_secondary(rec), data_format=data_format, revision=revision)
        paths.extend(write_record(rec, out / stem, revision=revision, data_format=data_format,
                                  single_file=single_file))
    truth_path = out / "truth.json"
    truth_path.write_text(json.dumps(result.truth.to_dict(), indent=2) + "\n", encoding="utf-8")
    paths.append(truth_path)
    return paths
