"""Shared by the inception tests and their measurement script: instants on wave, timeline run."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from eventlab.signals.timeline import build_timeline

from .faultwaves import System, steady_phasors


def inception_instants(system: System, t0: float = 0.05) -> dict[str, float]:
    """Instants after ``t0`` at phase-A voltage zero, +45 deg, peak, +135 deg [s]."""
    v_pre, _ = steady_phasors(system, 0.5, None)
    w = 2 * np.pi * system.f0_hz
    ph = np.angle(v_pre[0])
    out = {}
    for name, target in (("zero", np.pi / 2), ("45", 0.75 * np.pi), ("peak", np.pi),
                         ("135", 1.25 * np.pi)):
        k = np.ceil((w * t0 + ph - target) / (2 * np.pi))
        out[name] = float((target - ph + 2 * np.pi * k) / w)
    return out


def timeline_of(e):
    """:func:`build_timeline` of a ``faultwaves.fault_event`` with its trip and 52A channels."""
    trips = [SimpleNamespace(name="TRIP", values=e["trip"], normal=0)]
    bkrs = [SimpleNamespace(name="52A", values=e["breaker"], normal=1)]
    return build_timeline(e["t"], e["v_abc"], e["i_abc"], e["samples_per_cycle"],
                          trips=trips, breakers=bkrs)
