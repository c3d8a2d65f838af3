"""Test helpers for the signal chain: TVE and numpy-made waveforms.

Only numpy is used to make signals, so that the phasor estimators are checked
against the definition of the signal, not against eventlab.
"""

from __future__ import annotations

import numpy as np


def tve(estimate, reference):
    """Total vector error, IEEE C37.118.1-2011 clause 4.3, eq. (3) (numbering from memory).

    ``TVE = sqrt(((Xr^ - Xr)^2 + (Xi^ - Xi)^2) / (Xr^2 + Xi^2))``.
    """
    est = np.asarray(estimate, dtype=complex)
    ref = np.asarray(reference, dtype=complex)
    return np.sqrt(((est.real - ref.real) ** 2 + (est.imag - ref.imag) ** 2)
                   / (ref.real ** 2 + ref.imag ** 2))


def cosine_wave(xm, f_hz, phi_rad, fs_hz, n_samples):
    """``Xm cos(2 pi f t + phi)`` at ``t = m / fs`` (C37.118.1 clause 4.2 signal)."""
    t = np.arange(n_samples) / fs_hz
    return np.asarray(xm)[..., None] * np.cos(2 * np.pi * f_hz * t + np.asarray(phi_rad)[..., None])


def reference_phasor_at_centre(xm, f_hz, phi_rad, f0_hz, fs_hz, n_samples, window):
    """Ideal phasor of :func:`cosine_wave` for the window of ``window`` samples ending at each sample.

    IEEE C37.118.1-2011 clause 4.2: ``Xm / sqrt(2) exp(j(2 pi (f - f0) t + phi))``
    with ``t`` the window centre.
    """
    k = np.arange(n_samples)
    t_c = (k - (window - 1) / 2.0) / fs_hz
    return (np.asarray(xm)[..., None] / np.sqrt(2)
            * np.exp(1j * (2 * np.pi * (f_hz - f0_hz) * t_c + np.asarray(phi_rad)[..., None])))
