"""Pre-fault and fault windows around a fault interval.

The pre-fault window is one cycle.  The fault window starts one cycle after
inception; its first cycle classifies the fault (and tells the stages of an
evolving fault apart), and the phasors are fitted over the steady part of the
fault that follows, up to :data:`STEADY_MAX_CYCLES` cycles, ending before the
first pole opens or the next stage begins (:func:`steady_window`).
"""

from __future__ import annotations

from dataclasses import dataclass

#: longest fault window [cycles] the fault-window phasors are fitted over.  On the
#: quick grid of ``benchmarks/bench_location_accuracy.py`` three cycles gave a
#: worst case of 0.09 % (single-ended) / 0.05 % (two-ended) of the line, four and
#: five 0.14 % / 0.06 % and 0.14 % / 0.19 %; on the sample events (then without
#: their anti-aliasing filter) two cycles did worse than three in 11 of 12 answers
STEADY_MAX_CYCLES = 3.0


#: the words of a fault window that holds less than a cycle of the fault (a phasor
#: of the fault cannot be measured from it; the location step leaves that end out)
SHORT_FAULT = "short fault"


@dataclass(frozen=True)
class Window:
    """A data window ``[start_index, end_index]`` (inclusive) and its times [s].

    ``flagged`` is True when the preferred placement was not possible; ``note``
    says why.
    """

    start_index: int
    end_index: int
    start_s: float
    end_s: float
    flagged: bool = False
    note: str = ""
    # less than a cycle of the fault: no one-cycle phasor of it (SHORT_FAULT)
    short: bool = False

    def to_dict(self) -> dict:
        return {"start_s": self.start_s, "end_s": self.end_s, "start_index": self.start_index,
                "end_index": self.end_index, "flagged": self.flagged, "note": self.note}


def _win(time_s, start: int, end: int, flagged: bool = False, note: str = "",
         short: bool = False) -> Window:
    return Window(int(start), int(end), float(time_s[start]), float(time_s[end]), flagged,
                  note, short)


def prefault_window(time_s, inception_index: int, samples_per_cycle: int) -> Window | None:
    """One cycle ending at least one cycle before inception.

    Preferred: the window ends at ``inception - N - 1`` (one full cycle of
    margin, so that the window is clear of the inception even with a
    one-cycle filter).  If the record starts later than that, the latest full
    cycle before inception, flagged; None when the record holds less than one
    cycle before inception.
    """
    n = int(samples_per_cycle)
    end = inception_index - n - 1
    if end >= n - 1:
        return _win(time_s, end - n + 1, end)
    end = inception_index - 1
    if end >= n - 1:
        return _win(time_s, end - n + 1, end, True,
                    "less than two cycles before inception: window ends just before it")
    return None


def fault_window(time_s, inception_index: int, stop_index: int, samples_per_cycle: int,
                 settle_cycles: float = 1.0) -> Window:
    """One cycle of the fault, after the offset has mostly decayed, before the first pole opens.

    Parameters
    ----------
    time_s : array (n,)
        Sample times [s].
    inception_index : int
        First sample of the fault.
    stop_index : int
        First sample no longer usable (first pole opening, the next stage of an
        evolving fault, or the end of the fault).
    samples_per_cycle : int
    settle_cycles : float
        Cycles to wait after inception (default one: the window then starts
        with the offset ``exp(-T/tau)`` of its initial value; the mimic filter
        removes the rest).

    Returns
    -------
    Window
        Preferred ``[inception + settle, + N - 1]``; if that does not end
        before ``stop_index - 1``, the last cycle ending there (flagged when it
        starts within ``settle`` of inception); for a fault shorter than one
        cycle plus two samples, the cycle starting just after inception,
        flagged "short fault".
    """
    n = int(samples_per_cycle)
    n_t = len(time_s)
    settle = int(round(settle_cycles * n))
    start = inception_index + settle
    last_ok = min(stop_index, n_t) - 2
    if start + n - 1 <= last_ok:
        return _win(time_s, start, start + n - 1)
    end = last_ok
    start = end - n + 1
    if start >= inception_index + 1:
        return _win(time_s, start, end, True,
                    "the first pole opens (or the record ends) less than two cycles after "
                    "inception: window starts before the offset has decayed")
    start = min(inception_index + 1, max(n_t - n, 0))
    end = min(start + n - 1, n_t - 1)
    return _win(time_s, start, end, True,
                f"{SHORT_FAULT} (under one cycle): the window reaches past the pole opening "
                f"(or the record's end)", short=True)


def steady_window(time_s, window: Window, stop_index: int, samples_per_cycle: int,
                  max_cycles: float = STEADY_MAX_CYCLES) -> Window:
    """``window`` extended over the steady part of the fault that follows it.

    Parameters
    ----------
    time_s : array (n,)
    window : Window
        The one-cycle fault window (:func:`fault_window`).
    stop_index : int
        First sample no longer usable (first pole opening, next stage, end of
        the fault).
    samples_per_cycle : int
    max_cycles : float
        Longest window [cycles].

    Returns
    -------
    Window
        Same start, ending two samples before ``stop_index`` or after
        ``max_cycles`` cycles, whichever comes first; ``window`` itself when
        it is flagged (placed where the preferred placement did not fit) or
        cannot be lengthened.
    """
    n = int(samples_per_cycle)
    end = min(int(stop_index) - 2, window.start_index + int(round(max_cycles * n)) - 1,
              len(time_s) - 1)
    if window.flagged or end <= window.end_index:
        return window
    return _win(time_s, window.start_index, end)
