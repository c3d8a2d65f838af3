"""Frequency estimation and frequency tracking.

The frequency comes from the rotation of the positive-sequence voltage
phasor: with a nominal-rate DFT the phasor of a signal at ``f`` turns at
``2 pi (f - f0)`` rad/s, and for a balanced set the images that the fixed
window leaks into the negative frequency form a negative-sequence set, which
the positive-sequence transform removes (A. G. Phadke, J. S. Thorp and
M. G. Adamiak, "A new measurement technique for tracking voltage phasors,
local system frequency, and rate of change of frequency", IEEE Trans.
PAS-102(5), 1983).

Tracking resamples the waveforms to a whole number of samples per *actual*
cycle (cubic spline), estimates phasors there, and refers them back to the
nominal-frequency reference and the original time grid, so that off-nominal
frequency does not bias magnitude or angle.
"""

from __future__ import annotations

import numpy as np
from scipy.interpolate import CubicSpline

from eventlab.errors import SignalError
from eventlab.signals.phasors import FilterKind, dft_phasors, window_length
from eventlab.signals.sequence import sequence_phasors


def frequency_from_phasor(phasor, sample_rate_hz: float, nominal_hz: float,
                          start: int | None = None, stop: int | None = None) -> float:
    """Frequency [Hz] from the rotation of one phasor series over samples ``start:stop``.

    Parameters
    ----------
    phasor : complex array, shape (n,)
        Phasors from :func:`~eventlab.signals.phasors.dft_phasors` (NaN allowed
        and ignored).
    sample_rate_hz, nominal_hz : float
        Sample rate and nominal frequency [Hz].
    start, stop : int, optional
        Sample range to use (default: all finite values).

    Notes
    -----
    ``f = f0 + (1 / 2 pi) d(arg X)/dt``; the slope is the least-squares line
    through the unwrapped angle (Phadke, Thorp and Adamiak 1983).
    """
    p = np.asarray(phasor, dtype=complex)[start:stop]
    ok = np.isfinite(p) & (np.abs(p) > 0)
    if ok.sum() < 3:
        raise SignalError("frequency estimate: fewer than 3 valid phasors in the window; "
                          "expected at least one cycle of voltage")
    k = np.nonzero(ok)[0].astype(float)
    ang = np.unwrap(np.angle(p[ok]))
    slope = np.polyfit(k / float(sample_rate_hz), ang, 1)[0]          # [rad/s]
    return float(nominal_hz + slope / (2.0 * np.pi))


def estimate_frequency(v_abc, samples_per_cycle: int, sample_rate_hz: float,
                       nominal_hz: float, start: int = 0, stop: int | None = None,
                       iterations: int = 2) -> float:
    """System frequency [Hz] from three phase voltages.

    Parameters
    ----------
    v_abc : array_like, shape (3, n)
        Instantaneous phase-to-ground voltages A, B, C [V].
    samples_per_cycle : int
        Samples per nominal cycle.
    sample_rate_hz, nominal_hz : float
        [Hz].
    start, stop : int
        Sample range of a steady stretch (e.g. the pre-fault part).
    iterations : int
        Refinements with tracking at the last estimate (each removes most of
        the residual leakage of an unbalanced set).

    Notes
    -----
    ``V1 = (Va + a Vb + a^2 Vc) / 3`` from the DFT phasors (Fortescue, via
    :mod:`eventlab.symmetrical`), then :func:`frequency_from_phasor`.
    """
    v = np.asarray(v_abc, dtype=float)
    if v.ndim != 2 or v.shape[0] != 3:
        raise SignalError(f"v_abc shape {v.shape}: expected (3, n) phase voltages")
    stop = v.shape[-1] if stop is None else stop
    seg = v[:, start:stop]
    n = int(samples_per_cycle)
    if seg.shape[-1] < 2 * n:
        raise SignalError(f"frequency estimate: {seg.shape[-1]} samples; expected at "
                          f"least two cycles ({2 * n})")
    v1 = sequence_phasors(dft_phasors(seg, n))[1]
    f = frequency_from_phasor(v1, sample_rate_hz, nominal_hz)
    for _ in range(max(0, int(iterations))):
        if abs(f - nominal_hz) < 1e-6 * nominal_hz:
            break
        ph = tracked_phasors(seg, sample_rate_hz, f, nominal_hz, samples_per_cycle=n)
        v1 = sequence_phasors(ph)[1]
        # tracked phasors are referred to the nominal reference: their rotation
        # still measures f - f0, now without leakage ripple
        f = frequency_from_phasor(v1, sample_rate_hz, nominal_hz)
    return f


def tracked_phasors(samples, sample_rate_hz: float, frequency_hz: float, nominal_hz: float,
                    samples_per_cycle: int | None = None,
                    kind: FilterKind = "full") -> np.ndarray:
    """Phasors with the window fitted to the actual frequency, on the original time grid.

    Parameters
    ----------
    samples : array_like, shape (..., n)
        Instantaneous values [V] or [A] sampled at ``sample_rate_hz``.
    sample_rate_hz : float
        [Hz]; need not be a whole multiple of the nominal frequency.
    frequency_hz : float
        Actual frequency [Hz] (from :func:`estimate_frequency`).
    nominal_hz : float
        [Hz].
    samples_per_cycle : int, optional
        Samples per actual cycle after resampling (default: the nominal rate
        rounded, at least 16).
    kind : {"full", "half", "cosine"}

    Returns
    -------
    complex ndarray, shape (..., n)
        RMS phasor of the window ending at each original sample ``t_k``,
        referred to the nominal-frequency reference at the time tag
        ``t_c = t_k - (L0 - 1) / (2 fs)``, the centre of the window
        (``L0`` samples) a nominal-rate filter of the same kind would use
        (IEEE C37.118.1-2011 clause 4.2 with the record's first sample as the
        time origin): ``Xm / sqrt(2) exp(j(2 pi (f - f0) t_c + phi))`` for
        ``Xm cos(2 pi f t + phi)``.  NaN while the first window fills.

    Notes
    -----
    Resample by cubic spline to ``fs' = N f``; ``X'_j = DFT_j`` is then
    stationary for the signal at ``f``; interpolate ``X'`` (slowly varying) to
    the original window ends and multiply by ``exp(j 2 pi (f - f0) t_c)``.
    """
    x = np.asarray(samples, dtype=float)
    fs = float(sample_rate_hz)
    f = float(frequency_hz)
    if not (np.isfinite(f) and 0.5 * nominal_hz < f < 1.5 * nominal_hz):
        raise SignalError(f"frequency {frequency_hz!r} Hz: expected within 50 % of the "
                          f"nominal {nominal_hz} Hz")
    n = int(samples_per_cycle) if samples_per_cycle else max(16, int(round(fs / nominal_hz)))
    L = window_length(n, kind)
    n_t = x.shape[-1]
    t = np.arange(n_t) / fs
    fs_r = n * f
    n_r = int(np.floor(t[-1] * fs_r)) + 1 if n_t > 1 else 0
    out = np.full(x.shape, np.nan, dtype=complex)
    if n_r < L or n_t < 4:
        return out
    t_r = np.arange(n_r) / fs_r
    xr = CubicSpline(t, x, axis=-1)(t_r)
    ph_r = dft_phasors(xr, n, kind)                       # stationary at f, window end t_r
    # window end -> centre of the window a nominal-rate filter of this kind
    # would use, so that tracked and fixed-window phasors of the same sample
    # carry the same time tag (a stationary X' makes the choice exact)
    span_cycles = {"full": 1.0, "half": 0.5, "cosine": 1.25}[kind]
    half = span_cycles / (2.0 * nominal_hz) - 1.0 / (2.0 * fs)
    ok = t >= t_r[L - 1]
    t_end = t[ok]
    re = _interp_last(t_end, t_r[L - 1:], ph_r[..., L - 1:].real)
    im = _interp_last(t_end, t_r[L - 1:], ph_r[..., L - 1:].imag)
    t_c = t_end - half
    out[..., ok] = (re + 1j * im) * np.exp(2j * np.pi * (f - nominal_hz) * t_c)
    return out


def _interp_last(x_new, x, y):
    """Linear interpolation along the last axis of ``y`` (any leading shape)."""
    idx = np.clip(np.searchsorted(x, x_new) - 1, 0, x.size - 2)
    w = (x_new - x[idx]) / (x[idx + 1] - x[idx])
    return y[..., idx] * (1.0 - w) + y[..., idx + 1] * w
