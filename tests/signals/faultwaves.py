"""Faulted three-phase waveforms made with numpy, for the signal-chain tests.

A two-source system (local source S, line, remote source R) with the fault at
a fraction of the line.  Fault sequence currents come from the textbook
connections of the sequence networks (J. J. Grainger and W. D. Stevenson,
*Power System Analysis*, McGraw-Hill 1994, ch. 12; P. M. Anderson, *Analysis
of Faulted Power Systems*, IEEE Press 1995, ch. 3), the relay's share by the
current-divider distribution factor of each sequence network, its voltage
change as ``dV_k = -Zs_k dI_k``.  Currents carry the RL transient that keeps
them continuous at every switching (inception, evolution, reclosing), with
the time constant of the source-plus-line X/R; each pole opens at the first
current zero after the breaker's contact parting; bus-side voltages return
to the source EMF once the last pole is open.  Seeded Gaussian noise.

This is independent of eventlab: only numpy is used.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

A_OP = np.exp(2j * np.pi / 3)
# Fortescue matrix written out here on purpose: the generator must not use the
# code under test (eventlab.symmetrical) to make its reference signals.
_F = np.array([[1, 1, 1], [1, A_OP ** 2, A_OP], [1, A_OP, A_OP ** 2]])

#: canonical type and cyclic rotation for each of the ten fault types
_CANON = {"AG": ("AG", 0), "BG": ("AG", 1), "CG": ("AG", 2),
          "BC": ("BC", 0), "CA": ("BC", 1), "AB": ("BC", 2),
          "BCG": ("BCG", 0), "CAG": ("BCG", 1), "ABG": ("BCG", 2), "ABC": ("ABC", 0)}


@dataclass
class System:
    """A 230 kV, 60 Hz two-source line (made-up values)."""

    f0_hz: float = 60.0
    v_ln_rms: float = 230e3 / np.sqrt(3)
    zs: tuple = (4 + 40j, 2 + 20j)          # local source (Z0, Z1) [ohm]
    zl: tuple = (15 + 150j, 5 + 50j)        # whole line (Z0, Z1) [ohm]
    zr: tuple = (6 + 60j, 3 + 30j)          # remote source (Z0, Z1) [ohm]
    load_angle_deg: float = 10.0            # local EMF leads the remote one
    remote_emf_pu: float = 1.0


@dataclass
class Event:
    """One fault stage: the type from ``start_s`` on (until the next stage or the opening)."""

    type: str
    start_s: float


@dataclass
class Scenario:
    events: list                            # list[Event], first is the inception
    fraction: float = 0.4
    r_fault_ohm: float = 0.0
    relay_time_s: float = 0.020             # inception -> trip
    breaker_time_s: float = 0.040           # trip -> contact parting
    reclose_s: float | None = None          # poles close again (fault still there if reclose_fault)
    reclose_fault: bool = True
    duration_s: float = 0.30
    samples_per_cycle: int = 64
    noise: float = 0.0                      # std of the noise / peak of nominal quantity
    seed: int = 0
    system: System = field(default_factory=System)
    sample_rate_hz: float | None = None     # default: samples_per_cycle * f0


def _fault_seq_currents(canon: str, z0, z1, z2, vf, rf):
    """Sequence currents into the fault, phase-A referred (Grainger & Stevenson ch. 12)."""
    if canon == "AG":
        i = vf / (z0 + z1 + z2 + 3 * rf)
        return np.array([i, i, i])
    if canon == "BC":
        i1 = vf / (z1 + z2 + rf)
        return np.array([0.0, i1, -i1])
    if canon == "BCG":
        z0g = z0 + 3 * rf
        i1 = vf / (z1 + z2 * z0g / (z2 + z0g))
        return np.array([-i1 * z2 / (z2 + z0g), i1, -i1 * z0g / (z2 + z0g)])
    if canon == "ABC":
        return np.array([0.0, vf / (z1 + rf), 0.0])
    raise ValueError(canon)


def steady_phasors(system: System, fraction: float, ftype: str | None, r_fault_ohm: float = 0.0):
    """Relay phasors (v_abc, i_abc) [V, A] before (ftype None) or during a fault."""
    s = system
    e_s = s.v_ln_rms * np.exp(1j * np.radians(s.load_angle_deg))
    e_r = s.v_ln_rms * s.remote_emf_pu
    zs = {0: s.zs[0], 1: s.zs[1], 2: s.zs[1]}
    zl = {0: s.zl[0], 1: s.zl[1], 2: s.zl[1]}
    zr = {0: s.zr[0], 1: s.zr[1], 2: s.zr[1]}
    i_load = (e_s - e_r) / (zs[1] + zl[1] + zr[1])
    v_pre = e_s - zs[1] * i_load
    i012 = np.array([0, i_load, 0], dtype=complex)
    v012 = np.array([0, v_pre, 0], dtype=complex)
    if ftype is not None:
        canon, rot = _CANON[ftype]
        m = fraction
        vf = e_s - (zs[1] + m * zl[1]) * i_load
        # solve the canonical (phase-A referred) fault in a frame whose pre-fault set is
        # a^-r times the real one; rolling the phases by r then gives the fault on the
        # phases asked for with the real pre-fault set
        shift = np.conj(A_OP) ** rot
        vf_r = vf * shift
        zth, dist = {}, {}
        for k in (0, 1, 2):
            za = zs[k] + m * zl[k]
            zb = zr[k] + (1 - m) * zl[k]
            zth[k] = za * zb / (za + zb)
            dist[k] = zb / (za + zb)
        i_f = _fault_seq_currents(canon, zth[0], zth[1], zth[2], vf_r, r_fault_ohm)
        d_i = np.array([dist[k] * i_f[k] for k in (0, 1, 2)])
        d_v = np.array([-zs[k] * d_i[k] for k in (0, 1, 2)])
        i_abc_r = _F @ (np.array([0, i_load * shift, 0]) + d_i)
        v_abc_r = _F @ (np.array([0, v_pre * shift, 0]) + d_v)
        return np.roll(v_abc_r, rot), np.roll(i_abc_r, rot)
    return _F @ v012, _F @ i012


def _tau_s(system: System, fraction: float) -> float:
    z = system.zs[1] + fraction * system.zl[1]
    return float(z.imag / (2 * np.pi * system.f0_hz * z.real))


def make_event(sc: Scenario):
    """Waveforms and truth of a scenario.

    Returns
    -------
    dict with ``fs_hz``, ``t`` (n,), ``v_abc``, ``i_abc`` (3, n) [V, A],
    ``trip`` and ``breaker`` (n,) 0/1 (52a: 1 = closed), and ``truth``.
    """
    s = sc.system
    n_cyc = sc.samples_per_cycle
    fs = sc.sample_rate_hz or n_cyc * s.f0_hz
    n = int(round(sc.duration_s * fs))
    t = np.arange(n) / fs
    w = 2 * np.pi * s.f0_hz
    tau = _tau_s(s, sc.fraction)

    def wave(ph):
        return np.sqrt(2) * np.real(ph[:, None] * np.exp(1j * w * t)[None, :])

    v_pre, i_pre = steady_phasors(s, sc.fraction, None)
    e_s = s.v_ln_rms * np.exp(1j * np.radians(s.load_angle_deg))
    v_open = _F @ np.array([0, e_s, 0])
    # stages: (start time, v phasors, i phasors)
    stages = [(0.0, v_pre, i_pre)]
    for ev in sc.events:
        v_f, i_f = steady_phasors(s, sc.fraction, ev.type, sc.r_fault_ohm)
        stages.append((ev.start_s, v_f, i_f))
    i = np.zeros((3, n))
    v = np.zeros((3, n))
    prev = None                              # (phasor, start time, jump) of the stage before
    for k, (t0, vp, ip) in enumerate(stages):
        k0 = int(np.ceil(t0 * fs - 1e-9))
        k1 = n if k + 1 == len(stages) else int(np.ceil(stages[k + 1][0] * fs - 1e-9))
        seg = slice(k0, k1)
        i[:, seg] = wave(ip)[:, seg]
        v[:, seg] = wave(vp)[:, seg]
        jump = np.zeros(3)
        if prev is not None:
            p_ph, p_t0, p_jump = prev
            i_prev_t0 = (np.sqrt(2) * np.real(p_ph * np.exp(1j * w * t0))
                         + p_jump * np.exp(-(t0 - p_t0) / tau))
            jump = i_prev_t0 - np.sqrt(2) * np.real(ip * np.exp(1j * w * t0))
            i[:, seg] += jump[:, None] * np.exp(-(t[seg] - t0) / tau)[None, :]
        prev = (ip, t0, jump)
    t_inc = sc.events[0].start_s
    t_trip = t_inc + sc.relay_time_s
    t_part = t_trip + sc.breaker_time_s
    k_part = int(np.ceil(t_part * fs))
    open_idx = []
    for p in range(3):
        x = i[p, k_part:]
        sc_ = np.nonzero(np.signbit(x[1:]) != np.signbit(x[:-1]))[0]
        open_idx.append(k_part + int(sc_[0]) + 1 if sc_.size else n)
    k_last = max(open_idx)
    k_rc = int(np.ceil(sc.reclose_s * fs)) if sc.reclose_s is not None else n
    for p in range(3):
        i[p, open_idx[p]:k_rc] = 0.0
    v[:, k_last:k_rc] = wave(v_open)[:, k_last:k_rc]
    trip = np.zeros(n)
    trip[int(np.ceil(t_trip * fs)):k_last + int(fs * 0.01)] = 1
    bkr = np.ones(n)
    bkr[k_last:k_rc] = 0
    truth = {"inception_s": t_inc, "type": sc.events[0].type,
             "open_s": [open_idx[p] / fs for p in range(3)], "clearing_s": k_last / fs,
             "trip_s": int(np.ceil(t_trip * fs)) / fs, "tau_s": tau,
             "types": [e.type for e in sc.events], "starts_s": [e.start_s for e in sc.events]}
    if sc.reclose_s is not None:
        tr = k_rc / fs
        if sc.reclose_fault:
            typ = sc.events[-1].type
            v_f, i_f = steady_phasors(s, sc.fraction, typ, sc.r_fault_ohm)
        else:
            v_f, i_f = v_pre, i_pre
        seg = slice(k_rc, n)
        tt = t[seg] - tr
        i[:, seg] = wave(i_f)[:, seg] - (np.sqrt(2) * np.real(i_f * np.exp(1j * w * tr)))[
            :, None] * np.exp(-tt / tau)[None, :]
        v[:, seg] = wave(v_f)[:, seg]
        bkr[k_rc:] = 1
        truth["reclose_s"] = tr
    rng = np.random.default_rng(sc.seed)
    if sc.noise > 0:
        v = v + rng.normal(scale=sc.noise * np.sqrt(2) * s.v_ln_rms, size=v.shape)
        i = i + rng.normal(scale=sc.noise * np.sqrt(2) * 1000.0, size=i.shape)
    return {"fs_hz": fs, "t": t, "v_abc": v, "i_abc": i, "trip": trip, "breaker": bkr,
            "truth": truth, "samples_per_cycle": n_cyc, "f0_hz": s.f0_hz}


def fault_event(ftype: str, inception_s: float = 0.0503, **kw):
    """Shorthand: one fault of ``ftype`` at ``inception_s`` [s]."""
    return make_event(Scenario(events=[Event(ftype, inception_s)], **kw))
