"""Sequence components of whole records against a textbook worked example."""

from __future__ import annotations

import numpy as np
import pytest

from eventlab.errors import SignalError
from eventlab.signals.sequence import sequence_phasors, unbalance_ratios


def _polar(mag, deg):
    return mag * np.exp(1j * np.radians(deg))


def test_grainger_stevenson_open_conductor_example():
    # J. J. Grainger, W. D. Stevenson, Power System Analysis, 1994, Example 11.1 (from memory):
    # Ia = 10/0, Ib = 10/180, Ic = 0 A  ->  Ia0 = 0, Ia1 = 5.78/-30, Ia2 = 5.78/30 A
    i012 = sequence_phasors(np.array([_polar(10, 0), _polar(10, 180), 0]))
    assert abs(i012[0]) == pytest.approx(0.0, abs=1e-12)
    assert abs(i012[1]) == pytest.approx(5.78, abs=0.01)
    assert np.degrees(np.angle(i012[1])) == pytest.approx(-30.0, abs=0.01)
    assert abs(i012[2]) == pytest.approx(5.78, abs=0.01)
    assert np.degrees(np.angle(i012[2])) == pytest.approx(30.0, abs=0.01)


def test_whole_record_invariants():
    # 3 I0 = Ia + Ib + Ic (definition of the zero sequence); balanced set has only I1
    rng = np.random.default_rng(1)
    x = rng.normal(size=(3, 50)) + 1j * rng.normal(size=(3, 50))
    s = sequence_phasors(x)
    assert s.shape == (3, 50)
    np.testing.assert_allclose(3 * s[0], x.sum(axis=0), atol=1e-12)
    bal = np.exp(1j * np.array([0.0, -2 * np.pi / 3, 2 * np.pi / 3]))[:, None] * x[0][None, :]
    r0, r2 = unbalance_ratios(sequence_phasors(bal))
    assert np.max(r0) < 1e-12 and np.max(r2) < 1e-12


def test_bad_shape():
    with pytest.raises(SignalError):
        sequence_phasors(np.zeros((2, 4)))
