"""What the locate layer takes in: one terminal's phasors, frozen.

The signal chain (or a test, or the fault solver) fills a
:class:`TerminalPhasors` per line end; nothing here reads files.

Conventions (DEVELOPERS.md, "Conventions"): complex RMS phasors in primary
volts (line-to-ground) and amperes, phase order A B C, current positive from
the bus into the line.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from datetime import datetime, timedelta

import numpy as np

from eventlab.errors import SignalError
from eventlab.faulttypes import check_fault_type
from eventlab.signals.timeline import saturating_phases


def _phasor3(value, name: str) -> np.ndarray:
    arr = np.array(value, dtype=complex, copy=True).reshape(-1)
    if arr.shape != (3,):
        raise SignalError(f"TerminalPhasors.{name}: expected 3 complex phasors (A, B, C), "
                          f"got shape {np.shape(value)}")
    if not np.all(np.isfinite(arr)):
        raise SignalError(f"TerminalPhasors.{name}: phasors must be finite, got {arr}")
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class TerminalPhasors:
    """Pre-fault and fault-window phasors of one line terminal.

    Parameters
    ----------
    terminal_id : str or None
        Model terminal id this end belongs to; ``None`` to pair by ``station``.
    station : str
        Station name (COMTRADE ``station_name``), used for pairing.
    v_pre, i_pre : complex array, shape (3,)
        Pre-fault phase-to-ground voltages [V] and currents into the line [A].
    v_fault, i_fault : complex array, shape (3,)
        Fault-window phasors [V], [A].
    frequency_hz : float
        Power-system frequency [Hz].
    fault_type : str
        Fault type code (``AG`` ... ``ABC``), see :mod:`eventlab.faulttypes`.
    inception_s : float, optional
        Fault inception, record time [s].
    phasor_time_s : float, optional
        Record time [s] all four phasor sets refer to: a signal is
        ``x(t) = sqrt(2) Re(X exp(j w (t - phasor_time_s)))``.  The pre-fault
        phasors must be referred to the same instant (rotated by ``w dt``), so
        that ``i_fault - i_pre`` is the superimposed current.
    record_start : datetime, optional
        Absolute time of the record's first sample (C37.111 ``start``).
    samples_per_cycle : int, optional
        Sampling rate of the record in samples per cycle (to state offsets in samples).
    i_parallel_residual : complex, optional
        Residual current ``3 I0`` of a parallel circuit [A], for mutual
        coupling compensation.
    i_suspect : tuple of 3 bool
        Phases whose fault-window current is not to be trusted (a saturating
        CT, :func:`eventlab.signals.timeline.saturating_phases`): the model fit
        leaves them out; the impedance methods, which need every current of
        their loop, still use them and say so.
    v_remote_open, i_remote_open : complex array (3,), optional
        Phasors [V], [A] of the stage after the other end opened first (the
        fault fed from this end alone, :class:`eventlab.signals.timeline.RemoteOpenStage`),
        on the same reference instant as the others; None when there was none.
    remote_open_start_s : float, optional
        Record time that stage's window starts [s].
    remote_open_in_window : bool
        The other end opened inside the fault window
        (:attr:`eventlab.signals.timeline.RemoteOpenStage.in_fault_window`).
    energised : bool
        The line was energised from this end onto the fault (the record
        begins with it de-energised, the other end open): located by
        ``radial_stage`` on the fault window alone.
    """

    terminal_id: str | None
    station: str
    v_pre: np.ndarray
    i_pre: np.ndarray
    v_fault: np.ndarray
    i_fault: np.ndarray
    frequency_hz: float
    fault_type: str
    inception_s: float | None = None
    phasor_time_s: float | None = None
    record_start: datetime | None = None
    samples_per_cycle: int | None = None
    i_parallel_residual: complex | None = None
    window_start_s: float | None = field(default=None, compare=False)
    i_suspect: tuple[bool, bool, bool] = (False, False, False)
    v_remote_open: np.ndarray | None = field(default=None, compare=False)
    i_remote_open: np.ndarray | None = field(default=None, compare=False)
    remote_open_start_s: float | None = field(default=None, compare=False)
    remote_open_in_window: bool = field(default=False, compare=False)
    # the line was de-energised before this fault: energised from this end onto it
    # (switch onto fault), the other end open; the fault-window phasors are then the
    # stage fed from this end alone and there is no pre-fault state in service
    energised: bool = field(default=False, compare=False)

    def __post_init__(self) -> None:
        for name in ("v_pre", "i_pre", "v_fault", "i_fault"):
            object.__setattr__(self, name, _phasor3(getattr(self, name), name))
        if (self.v_remote_open is None) != (self.i_remote_open is None):
            raise SignalError("TerminalPhasors: v_remote_open and i_remote_open go together; "
                              "expected both or neither")
        for name in ("v_remote_open", "i_remote_open"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, _phasor3(getattr(self, name), name))
        sus = tuple(bool(x) for x in self.i_suspect)
        if len(sus) != 3:
            raise SignalError(f"TerminalPhasors.i_suspect: expected 3 flags (A, B, C), got "
                              f"{self.i_suspect!r}")
        object.__setattr__(self, "i_suspect", sus)
        try:
            code = check_fault_type(self.fault_type)
        except ValueError as exc:
            raise SignalError(f"TerminalPhasors.fault_type: {exc}") from None
        object.__setattr__(self, "fault_type", code)
        f = float(self.frequency_hz)
        if not (f > 0 and np.isfinite(f)):
            raise SignalError(f"TerminalPhasors.frequency_hz: expected a positive frequency, got {f}")
        object.__setattr__(self, "frequency_hz", f)

    @property
    def window_holds_remote_opening(self) -> bool:
        """True when the other end opened inside the fault window.

        Then the window mixes the fault fed from both ends with the fault fed
        from this end alone (the other end opened within about two cycles of
        inception), and methods on it are not to be trusted; the stage after
        the opening (``v_remote_open``) is.
        """
        return bool(self.remote_open_in_window and self.i_remote_open is not None)

    @property
    def omega(self) -> float:
        """Angular frequency [rad/s]."""
        return 2.0 * np.pi * self.frequency_hz

    @property
    def i_superimposed(self) -> np.ndarray:
        """Superimposed (fault minus pre-fault) currents [A]."""
        return self.i_fault - self.i_pre

    @property
    def v_superimposed(self) -> np.ndarray:
        """Superimposed voltages [V]."""
        return self.v_fault - self.v_pre

    def absolute_time(self, record_time_s: float | None) -> datetime | None:
        """Absolute time of a record instant, or None when the record has no start time."""
        if self.record_start is None or record_time_s is None:
            return None
        return self.record_start + timedelta(seconds=float(record_time_s))

    def rotated(self, angle_rad: float) -> TerminalPhasors:
        """The same end with every phasor multiplied by ``exp(j angle_rad)``."""
        r = np.exp(1j * angle_rad)
        i_par = None if self.i_parallel_residual is None else complex(
            self.i_parallel_residual * r)
        stage = {} if self.i_remote_open is None else {
            "v_remote_open": self.v_remote_open * r, "i_remote_open": self.i_remote_open * r}
        return replace(self, v_pre=self.v_pre * r, i_pre=self.i_pre * r,
                       v_fault=self.v_fault * r, i_fault=self.i_fault * r,
                       i_parallel_residual=i_par, **stage)


def with_remote_open(end: TerminalPhasors, stage) -> TerminalPhasors:
    """``end`` with the stage fed from it alone (a :class:`~eventlab.signals.timeline.RemoteOpenStage`).

    ``stage`` None gives ``end`` unchanged.
    """
    if stage is None:
        return end
    return replace(end, v_remote_open=stage.v, i_remote_open=stage.i,
                   remote_open_start_s=float(stage.window.start_s),
                   remote_open_in_window=bool(stage.in_fault_window))


def from_fault_interval(interval, *, station: str, frequency_hz: float,
                        terminal_id: str | None = None, record_start: datetime | None = None,
                        time0_s: float = 0.0, samples_per_cycle: int | None = None,
                        i_parallel_residual: complex | None = None) -> TerminalPhasors:
    """:class:`TerminalPhasors` from a signal-chain fault interval.

    Parameters
    ----------
    interval : eventlab.signals.timeline.FaultInterval
        Gives ``type``, ``start_s`` (inception), the pre-fault and fault
        windows and their phasors ``v_prefault``, ``i_prefault``, ``v_fault``,
        ``i_fault`` [V], [A].
    station : str
    frequency_hz : float
        Nominal frequency [Hz] the DFT reference rotates at.
    terminal_id : str, optional
    record_start : datetime, optional
        Absolute time of the record's first sample.
    time0_s : float
        Record time of the first sample [s]: the signal chain's DFT phasors
        are referred to the nominal-frequency reference from sample 0
        (:func:`eventlab.signals.phasors.dft_phasors`), so this is the
        phasors' reference instant.
    samples_per_cycle : int, optional

    The interval's ``i_distortion`` (what the fit left of each current over the
    steady part of the fault) marks the phases of a saturating CT in
    ``i_suspect``; its ``remote_open`` stage (the other end opened first)
    gives ``v_remote_open``, ``i_remote_open``.
    """
    distortion = getattr(interval, "i_distortion", None)
    stage = getattr(interval, "remote_open", None)
    if stage is not None and not stage.confirmed:
        stage = None          # a three-phase fault's change: not known to be the far end
    return with_remote_open(TerminalPhasors(
        terminal_id=terminal_id, station=station,
        v_pre=interval.v_prefault, i_pre=interval.i_prefault,
        v_fault=interval.v_fault, i_fault=interval.i_fault,
        frequency_hz=frequency_hz, fault_type=interval.type,
        inception_s=float(interval.start_s), phasor_time_s=float(time0_s),
        record_start=record_start, samples_per_cycle=samples_per_cycle,
        i_parallel_residual=i_parallel_residual,
        window_start_s=float(interval.fault.start_s),
        i_suspect=tuple(bool(x) for x in saturating_phases(interval.i_fault, distortion))
        if distortion is not None else (False, False, False)), stage)
