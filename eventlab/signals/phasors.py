"""Phasor estimation: one-cycle DFT (Fourier), half-cycle DFT and cosine filters,
mitigation of the decaying DC offset, moving RMS.

Conventions
-----------
* ``samples`` is a real array whose *last* axis is time; any leading shape
  (one channel, three phases, a whole record's analog channels) is kept.
* Output index ``k`` is the phasor of the data window that *ends* at sample
  ``k`` (the estimate is available at sample ``k``).  The first ``L - 1``
  outputs, whose window is not yet full, are NaN (``L`` from
  :func:`window_length`).
* Phasors are complex RMS and referred to a reference that rotates at the
  nominal frequency from the record's first sample (sample 0 = time 0): a
  steady nominal-frequency signal ``x(t) = Xm cos(w0 t + phi)`` gives the
  constant phasor ``Xm / sqrt(2) * exp(j phi)`` at every ``k``.  This is the
  phasor convention of IEEE C37.118.1-2011 clause 4.2 with the record's first
  sample as the time origin.  At an off-nominal frequency ``f`` the estimate
  of a window is referred to the window *centre* ``t_c`` (the DFT sum is
  symmetric about it): the ideal value there is
  ``Xm / sqrt(2) * exp(j (2 pi (f - f0) t_c + phi))``.

Nothing here loops over samples: moving sums are differences of cumulative
sums along the time axis, FIR filters are :func:`scipy.signal.lfilter` calls.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Literal, NamedTuple, get_args

import numpy as np
from scipy.signal import butter, lfilter, lfilter_zi

from eventlab.errors import SignalError

FilterKind = Literal["full", "half", "cosine"]
FILTER_KINDS: tuple[str, ...] = get_args(FilterKind)

SQRT2 = float(np.sqrt(2.0))


# ---------------------------------------------------------------- checks
def check_filter_kind(kind: str) -> str:
    """Return ``kind`` if it is one of :data:`FILTER_KINDS`, else raise SignalError."""
    if kind not in FILTER_KINDS:
        raise SignalError(f"phasor filter kind {kind!r}: expected one of "
                          f"{', '.join(FILTER_KINDS)}")
    return kind


def check_samples_per_cycle(samples_per_cycle, kind: str = "full") -> int:
    """Validate the window size [samples per nominal cycle] for a filter kind."""
    check_filter_kind(kind)
    n = int(round(float(samples_per_cycle)))
    if abs(n - float(samples_per_cycle)) > 1e-9 or n < 4:
        raise SignalError(f"samples_per_cycle={samples_per_cycle!r}: expected a whole "
                          f"number >= 4 (resample first, see signals.frequency)")
    if kind == "half" and n % 2:
        raise SignalError(f"samples_per_cycle={n}: the half-cycle filter needs an even number")
    if kind == "cosine" and n % 4:
        raise SignalError(f"samples_per_cycle={n}: the cosine filter needs a multiple of 4")
    return n


def window_length(samples_per_cycle: int, kind: FilterKind = "full") -> int:
    """Samples of history one output of :func:`dft_phasors` needs.

    full: ``N``; half: ``N / 2``; cosine: ``N + N / 4`` (a one-cycle cosine
    correlator and its value a quarter cycle earlier).
    """
    n = check_samples_per_cycle(samples_per_cycle, kind)
    return {"full": n, "half": n // 2, "cosine": n + n // 4}[kind]


# ---------------------------------------------------------------- helpers
def _as_samples(samples) -> np.ndarray:
    x = np.asarray(samples, dtype=float)
    if x.ndim == 0:
        raise SignalError("samples: expected an array with time on the last axis, got a scalar")
    return x


def _moving_sum(y: np.ndarray, length: int) -> np.ndarray:
    """Sum of the last ``length`` values along the last axis; NaN before the first full window."""
    out = np.full(y.shape, np.nan, dtype=np.result_type(y.dtype, float))
    n = y.shape[-1]
    if n < length:
        return out
    c = np.cumsum(y, axis=-1)
    out[..., length - 1] = c[..., length - 1]
    out[..., length:] = c[..., length:] - c[..., :-length]
    return out


def _rotator(n_samples: int, samples_per_cycle: int) -> np.ndarray:
    """``exp(-j 2 pi m / N)`` for m = 0 .. n_samples-1 (exact per-cycle table)."""
    table = np.exp(-2j * np.pi * np.arange(samples_per_cycle) / samples_per_cycle)
    return np.resize(table, n_samples)


# ---------------------------------------------------------------- DFT filters
def dft_phasors(samples, samples_per_cycle: int, kind: FilterKind = "full") -> np.ndarray:
    """Complex RMS phasors of every sample (full-cycle DFT by default).

    Parameters
    ----------
    samples : array_like of float, shape (..., n)
        Instantaneous values [V] or [A]; time on the last axis, sampled at
        ``samples_per_cycle`` samples per nominal cycle.
    samples_per_cycle : int
        Whole number of samples per nominal cycle ``N`` (>= 4; even for
        ``"half"``, a multiple of 4 for ``"cosine"``).
    kind : {"full", "half", "cosine"}
        Full-cycle DFT (Fourier) filter, half-cycle DFT, or cosine filter.

    Returns
    -------
    complex ndarray, shape (..., n)
        RMS phasor [V] or [A] of the window ending at each sample, referred to
        the nominal-frequency reference from sample 0 (module docstring); NaN
        for the first ``window_length - 1`` samples.

    Notes
    -----
    Full cycle (the discrete Fourier transform at the fundamental):

    ``X_k = (sqrt(2) / N) * sum_{m=k-N+1}^{k} x_m exp(-j 2 pi m / N)``

    Half cycle: the same sum over the last ``N/2`` samples, scaled by
    ``2 sqrt(2) / N``; it responds twice as fast and does not reject even
    harmonics or DC.  Cosine filter: ``C_k = (2 / N) sum_{n=0}^{N-1}
    x_{k-N+1+n} cos(2 pi n / N)`` gives the real part and ``C_{k-N/4}`` the
    imaginary part of the window-referred phasor, which is then rotated to
    the fixed reference; it rejects DC and integer harmonics and attenuates a
    decaying offset better than the sine part of the DFT.  See A. G. Phadke and
    J. S. Thorp, *Computer Relaying for Power Systems*, 2nd ed., Wiley 2009,
    ch. 3-4, and E. O. Schweitzer and D. Hou, "Filtering for protective
    relays", 47th Georgia Tech Protective Relaying Conference, 1993.
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle, kind)
    n_t = x.shape[-1]
    rot = _rotator(n_t, n)
    if kind == "full":
        return (SQRT2 / n) * _moving_sum(x * rot, n)
    if kind == "half":
        return (2.0 * SQRT2 / n) * _moving_sum(x * rot, n // 2)
    # cosine filter
    h = np.cos(2.0 * np.pi * np.arange(n) / n)[::-1]          # newest sample last in the window
    c = lfilter((2.0 / n) * h, [1.0], x, axis=-1)              # window-referred real part
    q = n // 4
    out = np.full(x.shape, np.nan, dtype=complex)
    if n_t >= n + q:
        re = c[..., n + q - 1:]
        im = c[..., n - 1:n_t - q]
        k = np.arange(n + q - 1, n_t)
        start = k - n + 1                                      # first sample of window k
        out[..., n + q - 1:] = (re + 1j * im) / SQRT2 * _rotator_at(start, n)
    return out


def _rotator_at(m: np.ndarray, samples_per_cycle: int) -> np.ndarray:
    return np.exp(-2j * np.pi * (np.asarray(m) % samples_per_cycle) / samples_per_cycle)


# ---------------------------------------------------------------- RMS
def moving_rms(samples, samples_per_cycle: int) -> np.ndarray:
    """True RMS over the last cycle at every sample [V] or [A] (NaN before the first full cycle).

    Notes
    -----
    ``rms_k = sqrt((1/N) sum_{m=k-N+1}^{k} x_m^2)`` (IEC 61000-4-30 uses the
    same definition over 10/12-cycle windows).
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle)
    ms = _moving_sum(x * x, n) / n
    return np.sqrt(np.maximum(ms, 0.0))


# ---------------------------------------------------------------- DC offset
def mimic_filter(samples, samples_per_cycle: int, tau_samples: float) -> np.ndarray:
    """Digital mimic (DC-removal) filter with unity gain at the fundamental.

    Parameters
    ----------
    samples : array_like, shape (..., n)
        Instantaneous current [A] (time on the last axis).
    samples_per_cycle : int
        Samples per nominal cycle ``N``.
    tau_samples : float
        Time constant of the decaying offset [samples] (``tau_s * fs``).

    Returns
    -------
    ndarray, shape (..., n)
        Filtered waveform [A]; sample 0 is NaN.  Its fundamental has the input's
        magnitude and leads it by ``-arg(G)`` (see Notes);
        :func:`mimic_phasors` removes that phase shift.

    Notes
    -----
    ``y_n = (x_n - alpha x_{n-1}) / |G|``, ``alpha = exp(-1/tau)``,
    ``G = 1 - alpha exp(-j 2 pi / N)``.  The numerator is zero for a sampled
    exponential ``exp(-n/tau)`` (the exact discrete form of the mimic filter of
    G. Benmouyal, "Removal of DC-offset in current waveforms using digital
    mimic filtering", IEEE Trans. Power Delivery 10(2), 1995, which writes
    ``K[(1+tau) - tau z^-1]``).
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle)
    g = _gain(n, tau_samples)
    alpha = float(np.exp(-1.0 / tau_samples))
    y = np.full(x.shape, np.nan, dtype=float)
    y[..., 1:] = (x[..., 1:] - alpha * x[..., :-1]) / abs(g)
    return y


def mimic_phasors(samples, samples_per_cycle: int, tau_s: float, sample_rate_hz: float,
                  kind: FilterKind = "full") -> np.ndarray:
    """Phasors [A] of :func:`dft_phasors` after the mimic filter for offset time constant ``tau_s`` [s].

    The first ``window_length`` outputs are NaN (one more than the plain filter).

    Notes
    -----
    ``X_k = DFT_k{ x_n - alpha x_{n-1} } / G`` with ``alpha`` and ``G`` of
    :func:`mimic_filter` (Benmouyal 1995): the complex gain ``G`` of the mimic
    at the fundamental is divided out, so the phasor of a steady sinusoid is
    unchanged while a decaying offset of time constant ``tau_s`` is removed
    exactly.
    """
    check_filter_kind(kind)
    n = check_samples_per_cycle(samples_per_cycle, kind)
    tau_n = float(tau_s) * float(sample_rate_hz)
    g = _gain(n, tau_n)
    y = mimic_filter(samples, n, tau_n) * abs(g)
    y[..., 0] = 0.0
    ph = dft_phasors(y, n, kind) / g
    ph[..., :window_length(n, kind)] = np.nan
    return ph


def _gain(samples_per_cycle: int, tau_samples: float) -> complex:
    if not (np.isfinite(tau_samples) and tau_samples > 0):
        raise SignalError(f"offset time constant {tau_samples!r} samples: expected a "
                          f"positive finite value")
    alpha = float(np.exp(-1.0 / tau_samples))
    return complex(1.0 - alpha * np.exp(-2j * np.pi / samples_per_cycle))


def decay_ls_phasors(samples, samples_per_cycle: int, tau_s: float,
                     sample_rate_hz: float) -> np.ndarray:
    """Least-squares phasors [A] over one cycle with a decaying-exponential term.

    Parameters
    ----------
    samples : array_like, shape (..., n)
        Instantaneous current [A].
    samples_per_cycle : int
        Samples per nominal cycle ``N`` (the window length).
    tau_s : float
        Assumed time constant of the offset [s].
    sample_rate_hz : float
        Sample rate [Hz].

    Returns
    -------
    complex ndarray, shape (..., n)
        Phasor of the window ending at each sample, same reference as
        :func:`dft_phasors`; NaN for the first ``N - 1`` samples.

    Notes
    -----
    In each window ``x_n = a cos(2 pi n / N) - b sin(2 pi n / N)
    + c exp(-n / tau)`` (n = 0 .. N-1 from the window start) is fitted by
    least squares; ``(a + j b) / sqrt(2)`` is the window-referred phasor.  The
    fit is a fixed pair of FIR filters (rows of the pseudo-inverse of the
    design matrix), so it runs as two convolutions.  Least-squares phasor
    estimation with a decaying term: M. S. Sachdev and M. A. Baribeau, "A new
    algorithm for digital impedance relays", IEEE Trans. PAS-98(6), 1979.
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle)
    tau_n = float(tau_s) * float(sample_rate_hz)
    if not (np.isfinite(tau_n) and tau_n > 0):
        raise SignalError(f"tau_s={tau_s!r}: expected a positive time constant")
    pinv = _decay_ls_rows(n, tau_n)                    # (3, N)
    ha = pinv[0][::-1]
    hb = pinv[1][::-1]
    a = lfilter(ha, [1.0], x, axis=-1)
    b = lfilter(hb, [1.0], x, axis=-1)
    out = np.full(x.shape, np.nan, dtype=complex)
    n_t = x.shape[-1]
    if n_t >= n:
        k = np.arange(n - 1, n_t)
        out[..., n - 1:] = ((a[..., n - 1:] + 1j * b[..., n - 1:]) / SQRT2
                            * _rotator_at(k - n + 1, n))
    return out


def _decay_ls_rows(n: int, tau_n: float) -> np.ndarray:
    """Pseudo-inverse (3, N) of the one-cycle design ``[cos, -sin, exp(-m / tau)]``."""
    m = np.arange(n)
    th = 2.0 * np.pi * m / n
    return np.linalg.pinv(np.column_stack([np.cos(th), -np.sin(th), np.exp(-m / tau_n)]))


def window_phasor_decay_ls(samples, end_index: int, samples_per_cycle: int,
                           tau_samples: float) -> np.ndarray:
    """Least-squares phasor with a decaying term of the one window ending at ``end_index``.

    Same value and reference as ``decay_ls_phasors(samples, N, tau_s, fs)[..., end_index]``
    (``tau_samples = tau_s * fs``), computed on that window only.

    Parameters
    ----------
    samples : array_like, shape (..., n)
        Instantaneous values [A] or [V].
    end_index : int
        Last sample of the window (``>= N - 1``).
    samples_per_cycle : int
    tau_samples : float
        Offset time constant [samples].

    Returns
    -------
    complex ndarray, shape (...)

    Notes
    -----
    Unlike the mimic filter, whose first difference amplifies content above
    the fundamental by up to ``omega tau`` (so that the ringing of line
    capacitance leaks into the DFT at high sample rates), the least-squares
    fit has unit gain for what it does not model (Sachdev and Baribeau 1979,
    see :func:`decay_ls_phasors`).
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle)
    k = int(end_index)
    tau_n = float(tau_samples)
    if not (np.isfinite(tau_n) and tau_n > 0):
        raise SignalError(f"tau_samples={tau_samples!r}: expected a positive time constant")
    _window_length(k, n, None, x.shape[-1])
    ab = x[..., k - n + 1:k + 1] @ _decay_ls_rows(n, tau_n).T   # (..., 3)
    return (ab[..., 0] + 1j * ab[..., 1]) / SQRT2 * _rotator_at(np.array([k - n + 1]), n)[0]


def _window_length(end_index: int, n: int, length: int | None, n_samples: int) -> int:
    """Length [samples] of the window ending at ``end_index``, checked against the record."""
    w_len = n if length is None else int(length)
    if w_len < n:
        raise SignalError(f"window of {w_len} samples: expected at least one cycle ({n})")
    if end_index < w_len - 1 or end_index >= n_samples:
        raise SignalError(f"window ending at sample {end_index}: expected {w_len - 1} <= "
                          f"index < {n_samples}")
    return w_len


#: bounds of the fitted offset time constant [cycles]: X/R = 2 pi tau/T of about 1.6
#: to 190 at the fault, wider than transmission and sub-transmission systems have
#: (common practice, no source)
TAU_FIT_BOUNDS_CYCLES = (0.25, 30.0)


#: the fault-window fit sees the samples through a causal Butterworth low-pass of
#: this order with its cut-off at FIT_LOWPASS_HARMONIC times the nominal frequency
#: (at most 0.4 of the sampling rate).  What lies well above the fundamental (the
#: line's travelling-wave ringing, which lasts for cycles on a lightly damped
#: line, and what of it a recorder folds down) is noise to the sinusoid-plus-
#: offset model; a 3-cycle rectangular window lets ~1 % of a component 14
#: harmonics away through, the filter 1/400 of one at 1600 Hz.  On the quick grid
#: of benchmarks/bench_location_accuracy.py (records of a line in 10 km pi
#: sections, behind the recorder's anti-aliasing filter) the 95th percentile of
#: the single-ended error went from 0.07 % to 0.03 % of the line, phase faults
#: from 0.09 % to 0.01 % and the unsynchronised two-ended method from 0.26 % to
#: 0.04 %.  The offset ``exp(-t/tau)`` passes as an exponential of the same
#: ``tau`` once the filter's own transient (a few ms) has gone, so the model
#: still holds; the window starts a cycle after inception
FIT_LOWPASS_HARMONIC = 6.0
FIT_LOWPASS_ORDER = 4


@lru_cache(maxsize=32)
def _fit_lowpass(samples_per_cycle: int):
    """``(b, a, zi)`` of the fit's low-pass at ``samples_per_cycle`` (computed once)."""
    wn = 2.0 * min(FIT_LOWPASS_HARMONIC / samples_per_cycle, 0.4)   # fraction of Nyquist
    b, a = butter(FIT_LOWPASS_ORDER, wn)
    return b, a, lfilter_zi(b, a)


def fit_prefilter(samples, end_index: int, samples_per_cycle: int,
                  cycle_samples: float | None = None):
    """The samples up to ``end_index`` through the fit's low-pass, and its gain.

    Returns ``(filtered, gain)``: ``filtered`` shape ``(..., end_index + 1)``
    (nothing after the window enters: the filter is causal) and ``gain`` the
    complex response at the power-system frequency (nominal, or the one whose
    cycle is ``cycle_samples`` samples long when the frequency is tracked), by
    which a phasor fitted to the filtered samples is divided: its phase falls
    by about 0.4 deg per Hz near the fundamental.  The filter starts in the
    steady state of the first sample.
    """
    x = np.asarray(samples, dtype=float)[..., :int(end_index) + 1]
    n = int(samples_per_cycle)
    b, a, zi0 = _fit_lowpass(n)
    zi = zi0 * x[..., :1]
    y, _ = lfilter(b, a, x, axis=-1, zi=zi)
    z = np.exp(-2j * np.pi / (n if cycle_samples is None else float(cycle_samples)))
    gain = complex(np.polyval(b[::-1], z) / np.polyval(a[::-1], z))
    return y, gain


class WindowFit(NamedTuple):
    """Result of :func:`fault_window_current`."""

    phasor: np.ndarray          # complex (...), same reference as dft_phasors
    tau_s: float | None         # time constant used [s] (given, or of the largest offset)
    residual: np.ndarray        # (...) residual RMS / fundamental RMS per channel


def _fit_window(x2: np.ndarray, end_index: int, n: int, length: int | None,
                tau_n=None):
    """Fundamental + exponential fit of each row's window.

    ``tau_n`` [samples]: one time constant, one per row, or None (fitted).

    Variable projection in closed form: with the sinusoid's columns ``B``
    projected out (``P``), the residual for a trial time constant is
    ``|r0|^2 - (e'.r0)^2 / |e'|^2`` (``r0 = x - P x``, ``e' = e - P e``, ``e``
    the exponential), evaluated for every channel at once on a grid of
    ``log tau`` and refined by successive parabolas around each channel's best.
    """
    k = int(end_index)
    w_len = _window_length(k, n, length, x2.shape[-1])
    seg = x2[:, k - w_len + 1:k + 1]
    m = np.arange(w_len)
    th = 2.0 * np.pi * m / n
    base = np.column_stack([np.cos(th), -np.sin(th)])           # (L, 2)
    pinv_b = np.linalg.pinv(base)                                # (2, L)
    r0 = seg - (seg @ pinv_b.T) @ base.T                         # (C, L)

    def project(e):                                              # e (G, L) -> e'
        return e - (e @ pinv_b.T) @ base.T

    def gain(u, rows):
        """(e'.r0)^2 / |e'|^2 for time constants exp(u) (one per row of ``rows``)."""
        ep = project(np.exp(-m[None, :] / np.exp(u)[:, None]))
        den = np.einsum("gl,gl->g", ep, ep)
        num = np.einsum("gl,gl->g", ep, r0[rows])
        return np.where(den > 0, num * num / np.where(den > 0, den, 1.0), 0.0)

    c_n = seg.shape[0]
    rows = np.arange(c_n)
    if tau_n is not None:
        u = np.broadcast_to(np.log(np.asarray(tau_n, dtype=float)), (c_n,)).copy()
    else:
        lo, hi = (float(np.log(c * n)) for c in TAU_FIT_BOUNDS_CYCLES)
        grid = np.linspace(lo, hi, 48)
        ep = project(np.exp(-m[None, :] / np.exp(grid)[:, None]))           # (G, L)
        den = np.einsum("gl,gl->g", ep, ep)
        g = (r0 @ ep.T) ** 2 / np.where(den > 0, den, 1.0)[None, :]       # (C, G)
        u = grid[np.argmax(g, axis=1)]
        h = grid[1] - grid[0]
        for _ in range(8):
            gm, g0, gp = gain(u - h, rows), gain(u, rows), gain(u + h, rows)
            curv = gm - 2.0 * g0 + gp
            step = np.where(curv < 0, 0.5 * h * (gm - gp) / np.where(curv < 0, curv, -1.0),
                            np.where(gp > gm, h, -h))
            u = np.clip(u + np.clip(step, -h, h), lo, hi)
            h *= 0.35
    e = np.exp(-m[None, :] / np.exp(u)[:, None])                           # (C, L)
    ep = project(e)
    den = np.einsum("cl,cl->c", ep, ep)
    coef_e = np.where(den > 0, np.einsum("cl,cl->c", ep, r0) / np.where(den > 0, den, 1.0),
                      0.0)
    beta = (seg - coef_e[:, None] * e) @ pinv_b.T                           # (C, 2)
    fit = beta @ base.T + coef_e[:, None] * e
    resid = seg - fit
    ph = (beta[:, 0] + 1j * beta[:, 1]) / SQRT2
    fund = np.abs(ph)
    res = np.where(fund > 0, np.sqrt(np.mean(resid * resid, axis=1)) / np.where(
        fund > 0, fund, 1.0), 0.0)
    ph = ph * _rotator_at(np.array([k - w_len + 1]), n)[0]
    return ph, np.exp(u), coef_e, res


def window_fit(samples, end_index: int, samples_per_cycle: int, tau_samples=None,
               length: int | None = None):
    """Sinusoid-plus-exponential fit of each channel's window ending at ``end_index``.

    ``tau_samples``: the time constant [samples] (one, or one per channel),
    or None to fit it per channel.  Returns ``(phasor, tau_samples, offset,
    residual)``, one entry per channel, as :func:`window_phasor_fitted_decay`;
    the fitted model is ``x_k = sqrt(2) Re(phasor exp(j 2 pi k / N)) +
    offset exp(-(k - k0) / tau)`` with ``k0`` the window's first sample, so it
    can be carried past the window (:func:`window_model`).
    """
    x = _as_samples(samples)
    x2 = np.atleast_2d(x).reshape(-1, x.shape[-1])
    n = check_samples_per_cycle(samples_per_cycle)
    return _fit_window(x2, end_index, n, length, tau_samples)


def window_model(phasor, tau_samples, offset, first_index: int, indices,
                 samples_per_cycle: int) -> np.ndarray:
    """Values (c, len(indices)) of the model :func:`window_fit` found, at sample ``indices``."""
    k = np.asarray(indices, dtype=float)[None, :]
    ph = np.atleast_1d(np.asarray(phasor, dtype=complex))[:, None]
    tau = np.atleast_1d(np.asarray(tau_samples, dtype=float))[:, None]
    off = np.atleast_1d(np.asarray(offset, dtype=float))[:, None]
    n = float(samples_per_cycle)
    return (SQRT2 * np.real(ph * np.exp(2j * np.pi * k / n))
            + off * np.exp(-(k - first_index) / tau))


def window_phasor_fitted_decay(samples, end_index: int, samples_per_cycle: int,
                               length: int | None = None
                               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares phasor of one window with a decaying term of fitted time constant.

    Each channel gets its own time constant: in every window
    ``x_m = a cos(2 pi m / N) - b sin(2 pi m / N) + c exp(-m / tau)`` is fitted
    with ``tau`` chosen to minimise the residual (variable projection: for a
    fixed ``tau`` the fit is linear, so only ``tau`` is searched, by Brent's
    method on ``log tau`` within :data:`TAU_FIT_BOUNDS_CYCLES`).

    Parameters
    ----------
    samples : array_like, shape (c, n) or (n,)
        Instantaneous currents [A].
    end_index : int
        Last sample of the window (``>= length - 1``).
    samples_per_cycle : int
    length : int, optional
        Window length [samples], at least ``N`` (default ``N``, one cycle); a
        longer window rejects more of what the model does not hold (noise,
        ringing, content between the harmonics).

    Returns
    -------
    phasor : complex ndarray, shape (c,) (or scalar shape for 1-D input)
        Same reference as :func:`dft_phasors` at ``end_index``.
    tau_samples : ndarray, shape (c,)
        Fitted time constant [samples] of each channel.
    offset : ndarray, shape (c,)
        Fitted offset at the window's first sample ``c`` [A].
    residual : ndarray, shape (c,)
        RMS of what the fit leaves over the window, as a fraction of the
        fundamental's RMS (0 for a pure sinusoid with offset; a saturating CT
        or an arc leaves several per cent).

    Notes
    -----
    The offset of a fault current is a sum of exponentials, one per R-L path;
    at a line end fed from two sources of different X/R its time constant is
    neither the line's nor the source's, and differs from phase to phase.  A
    time constant taken from one channel (or from the line's X/R) and applied
    to all leaves an error that rotates at the fundamental as the window moves
    (several per cent one cycle after inception).  Variable projection:
    G. H. Golub and V. Pereyra, "The differentiation of pseudo-inverses and
    nonlinear least squares problems whose variables separate", SIAM J. Numer.
    Anal. 10(2), 1973; the linear part as in :func:`decay_ls_phasors`.
    """
    x = _as_samples(samples)
    ph, taus, offs, res = window_fit(x, end_index, samples_per_cycle, None, length)
    shape = x.shape[:-1]
    if x.ndim == 1:
        return ph[0], taus[:1], offs[:1], res[:1]
    return ph.reshape(shape), taus.reshape(shape), offs.reshape(shape), res.reshape(shape)


def fault_window_current(samples, end_index: int, samples_per_cycle: int,
                         sample_rate_hz: float, tau_s: float | None = None,
                         length: int | None = None, *,
                         cycle_samples: float | None = None) -> WindowFit:
    """Fault-window phasor(s) with the decaying offset removed, as the timeline uses.

    Fundamental plus a decaying exponential fitted by least squares over the
    window ending at ``end_index``, ``length`` samples long (default one
    cycle): with ``tau_s`` given, that time constant (as
    :func:`window_phasor_decay_ls`); else each channel its own
    (:func:`window_phasor_fitted_decay`).  The samples go through the causal
    low-pass of :func:`fit_prefilter` first and the phasor is divided by its
    gain at the nominal frequency (or at the tracked one, ``cycle_samples``).

    Returns
    -------
    WindowFit
        ``phasor`` [A] or [V]; ``tau_s`` the time constant used (given, or the
        fitted one of the channel with the largest offset); ``residual`` per
        channel (see :func:`window_phasor_fitted_decay`).
    """
    x = _as_samples(samples)
    fs = float(sample_rate_hz)
    tau_n = None if tau_s is None else float(tau_s) * fs
    if tau_n is not None and not (np.isfinite(tau_n) and tau_n > 0):
        raise SignalError(f"tau_s={tau_s!r}: expected a positive time constant")
    x, gain = fit_prefilter(x, end_index, samples_per_cycle, cycle_samples)
    ph, taus, offs, res = window_fit(x, end_index, samples_per_cycle, tau_n, length)
    ph = ph / gain
    shape = x.shape[:-1]
    if tau_s is None:
        tau_s = float(taus[int(np.argmax(np.abs(offs)))] / fs)
    if x.ndim == 1:
        return WindowFit(ph[0], tau_s, res[0])
    return WindowFit(ph.reshape(shape), tau_s, res.reshape(shape))


def estimate_decay_tau(samples, samples_per_cycle: int, sample_rate_hz: float,
                       start: int) -> float | None:
    """Time constant [s] of a decaying offset that begins near sample ``start``.

    Parameters
    ----------
    samples : array_like, shape (n,) or (c, n)
        Instantaneous current(s) [A]; with several channels the one with the
        largest offset is used.
    samples_per_cycle : int
        Samples per nominal cycle ``N``.
    sample_rate_hz : float
        Sample rate [Hz].
    start : int
        First sample after the fault inception.

    Returns
    -------
    float or None
        ``tau`` [s], or None when the record holds less than two cycles after
        ``start`` or no measurable offset (offset under 2 % of the peak) or a
        non-decaying one.

    Notes
    -----
    The one-cycle mean of ``A cos(w0 t + phi) + C exp(-t / tau)`` is the mean
    of the exponential alone (integer harmonics and the load current average
    to zero over a cycle), so two means one cycle apart give
    ``tau = T / ln(m_1 / m_2)`` with ``T`` one cycle (common practice, no
    source).
    """
    x = np.atleast_2d(_as_samples(samples))
    n = check_samples_per_cycle(samples_per_cycle)
    if start < 0 or start + 2 * n > x.shape[-1]:
        return None
    m1 = x[:, start:start + n].mean(axis=-1)
    m2 = x[:, start + n:start + 2 * n].mean(axis=-1)
    peak = np.max(np.abs(x[:, start:start + 2 * n]), axis=-1)
    ch = int(np.argmax(np.abs(m1) / np.where(peak > 0, peak, np.inf)))
    if peak[ch] <= 0 or abs(m1[ch]) < 0.02 * peak[ch]:
        return None
    ratio = m1[ch] / m2[ch] if m2[ch] != 0 else np.inf
    if not np.isfinite(ratio) or ratio <= 1.0:
        return None
    return float(n / sample_rate_hz / np.log(ratio))


def window_phasor(samples, end_index: int, samples_per_cycle: int,
                  tau_samples: float | None = None) -> np.ndarray:
    """Full-cycle DFT phasor of the one window ending at ``end_index`` [A] or [V].

    Same value and reference as ``dft_phasors(samples, N)[..., end_index]``
    (or :func:`mimic_phasors` when ``tau_samples`` is given), computed on that
    window only.

    Parameters
    ----------
    samples : array_like, shape (..., n)
    end_index : int
        Last sample of the window (``>= N - 1``, or ``>= N`` with the mimic).
    samples_per_cycle : int
    tau_samples : float, optional
        Offset time constant [samples] for the mimic filter (Benmouyal 1995).

    Returns
    -------
    complex ndarray, shape (...)
    """
    x = _as_samples(samples)
    n = check_samples_per_cycle(samples_per_cycle)
    k = int(end_index)
    need = n if tau_samples is None else n + 1
    if k < need - 1 or k >= x.shape[-1]:
        raise SignalError(f"window ending at sample {k}: expected {need - 1} <= index < "
                          f"{x.shape[-1]}")
    m = np.arange(k - n + 1, k + 1)
    seg = x[..., k - n + 1:k + 1]
    if tau_samples is None:
        return (SQRT2 / n) * (seg @ _rotator_at(m, n))
    g = _gain(n, tau_samples)
    alpha = float(np.exp(-1.0 / tau_samples))
    y = seg - alpha * x[..., k - n:k]
    return (SQRT2 / n) * (y @ _rotator_at(m, n)) / g
