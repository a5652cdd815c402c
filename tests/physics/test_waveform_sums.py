"""The fast paths of the capture analysis against straightforward references.

Reference: for each window and each harmonic order h, the sums
``sum_n w[n]*x[n]*cos(h*theta*(n - pa))`` and ``... sin(...)`` written out directly with
numpy's cos and sin (one order at a time, no shared powers, no index splitting, no
batching), with the window weights computed sample by sample from their definition (the
overlap of [n - 1/2, n + 1/2] with [pa, pb]). The capture is shaped like a real one: a
50.02 Hz supply at 10 kS/s with harmonics, a distorted current and noise, cut at its actual
rising zero crossings (non-integer positions), so the windows in one batch differ in length.
Agreement to 1e-9 relative is asked of every sum, down to the noise-level orders.
"""

import dataclasses
import math

import numpy as np
import pytest

from commission.physics import waveform
from commission.physics.waveform import MAX_ORDER, analyse

RATE = 10_000.0
F = 50.02


def _capture(seconds, seed=3):
    rng = np.random.default_rng(seed)
    t = np.arange(int(seconds * RATE)) / RATE
    w = 2 * np.pi * F * t
    v = 325.3 * np.sin(w) + 4.0 * np.sin(3 * w + 0.3) + rng.normal(0, 0.2, t.size) + 0.4
    i = (12.4 * np.sin(w - 0.12) + 1.1 * np.sin(3 * w) + 0.5 * np.sin(5 * w)
         + 0.05 * np.sin(27 * w + 1.0) + rng.normal(0, 0.01, t.size))
    return v, i


def _reference_window(v, i, first, pa, pb, cycles, orders):
    """Direct sums of one window: (sv2, si2, svi, vh, ih) as in waveform._window_sums."""
    n_lo = math.floor(pa + 0.5)
    n_hi = math.ceil(pb - 0.5)
    length = pb - pa
    theta = 2 * math.pi * cycles / length
    sv2 = si2 = svi = 0.0
    weights = []
    for n in range(n_lo, n_hi + 1):
        weight = min(max(min(pb, n + 0.5) - max(pa, n - 0.5), 0.0), 1.0)
        weights.append(weight)
        x, y = v[n - first], i[n - first]
        sv2 += weight * x * x
        si2 += weight * y * y
        svi += weight * x * y
    w = np.array(weights)
    x = np.arange(n_lo, n_hi + 1) - pa
    seg_v = w * v[n_lo - first:n_hi + 1 - first]
    seg_i = w * i[n_lo - first:n_hi + 1 - first]
    vh, ih = [], []
    for h in range(1, orders + 1):
        c = np.cos(h * theta * x)
        s = np.sin(h * theta * x)
        vh.append(complex(seg_v @ c, -(seg_v @ s)) * 2 / length)
        ih.append(complex(seg_i @ c, -(seg_i @ s)) * 2 / length)
    return sv2, si2, svi, np.array(vh), np.array(ih)


def _reference_sums(v, i, first, pa, pb, cycles, orders):
    rows = [_reference_window(v, i, first, a, b, c, orders)
            for a, b, c in zip(pa, pb, cycles, strict=True)]
    sv2, si2, svi, vh, ih = zip(*rows, strict=True)
    return np.array(sv2), np.array(si2), np.array(svi), np.array(vh), np.array(ih)


def _crossings(start, count):
    """Sample positions of `count` successive rising zero crossings of the fundamental."""
    k = np.arange(count) + math.ceil(start * F / RATE)
    return k * RATE / F


def _close(fast, ref, rtol=1e-9):
    fast, ref = np.asarray(fast), np.asarray(ref)
    assert fast.shape == ref.shape
    err = np.abs(fast - ref) / np.abs(ref)
    assert float(err.max()) <= rtol, (float(err.max()), int(np.argmax(err)))


def test_window_sums_match_direct_sums_on_a_real_shaped_capture():
    v, i = _capture(3.0)
    first = 5000  # the buffer need not start at sample 0
    edges = _crossings(first + 10.3, 61)
    # 10-cycle windows at the crossings, one 7-cycle window and one whole-sample window
    pa = np.concatenate([edges[0:50:10], [edges[50]], [6000.0]])
    pb = np.concatenate([edges[10:60:10], [edges[57]], [10000.0]])
    cycles = np.array([10, 10, 10, 10, 10, 7, 5], dtype=float)
    assert len(set(np.ceil(pb - 0.5) - np.floor(pa + 0.5))) > 1  # lengths differ in a batch
    fast = waveform._window_sums(v[first:], i[first:], first, pa, pb, cycles, MAX_ORDER)
    ref = _reference_sums(v[first:], i[first:], first, pa, pb, cycles, MAX_ORDER)
    for got, want in zip(fast[:3], ref[:3], strict=True):
        _close(got, want, rtol=1e-12)
    _close(fast[3], ref[3])
    _close(fast[4], ref[4])
    # the 27th current harmonic put in is found (peak 0.05 A) in every 10-cycle window
    assert np.allclose(np.abs(fast[4][:5, 26]), 0.05, rtol=0.02)


def test_window_ending_at_the_last_sample():
    """A window whose last sample is the last one held (the short-capture path)."""
    v, i = _capture(0.1)
    n = v.size
    length = 4 * RATE / F
    pa = np.array([n - 0.5 - length])
    pb = np.array([n - 0.5])
    fast = waveform._window_sums(v, i, 0, pa, pb, np.array([4.0]), 25)
    ref = _reference_sums(v, i, 0, pa, pb, [4.0], 25)
    _close(fast[3], ref[3])
    _close(fast[4], ref[4])


@pytest.mark.parametrize("seconds", [0.07, 7.0])
def test_whole_analysis_with_fast_sums_matches_direct_sums(monkeypatch, seconds):
    """Every figure of the analysis, from the fast sums and from the direct ones."""
    v, i = _capture(seconds, seed=8)
    fast = analyse(RATE, v, i)
    monkeypatch.setattr(waveform, "_window_sums", _reference_sums)
    ref = analyse(RATE, v, i)
    assert fast.windows == ref.windows and fast.windows >= (1 if seconds < 1 else 30)
    for field in dataclasses.fields(fast):
        a, b = getattr(fast, field.name), getattr(ref, field.name)
        if isinstance(a, float):
            assert math.isclose(a, b, rel_tol=1e-9), (field.name, a, b)
        elif isinstance(a, tuple) and a and isinstance(a[0], float):
            _close([x for x in a if x is not None], [x for x in b if x is not None])
        else:
            assert a == b, field.name


@pytest.mark.parametrize("glitches", [0, 5])
def test_crossings_taken_together_as_one_by_one(monkeypatch, glitches):
    """The tracker takes a block's zero crossings all at once when every cycle is regular;
    one by one (the rule as written: gap within 0.8-1.25 periods, step under 5 %) must give
    the very same windows, irregular-cycle count and figures, glitches or not."""
    v, i = _capture(12.0, seed=11)
    rng = np.random.default_rng(glitches)
    for k in rng.integers(1000, v.size - 1000, glitches):
        v[k:k + 40] = 0.0  # a dropout of 4 ms
    fast = analyse(RATE, v, i)

    def one_by_one(self, positions):
        for pos in positions.tolist():
            self._crossing(pos)

    monkeypatch.setattr(waveform.CaptureAccumulator, "_crossings", one_by_one)
    slow = analyse(RATE, v, i)
    assert (fast.irregular_cycles > 0) == (glitches > 0)
    assert dataclasses.asdict(fast) == dataclasses.asdict(slow)


def test_frequency_grid_of_the_sine_fit_matches_direct_cosines():
    """The sine fit's coarse search builds the sines of its evenly spaced trial frequencies
    by multiplication; the explained energies must be those of numpy's cos and sin of
    every frequency and time (the straightforward form), to 1e-12."""
    v, _ = _capture(0.25, seed=4)
    t = np.arange(v.size) / RATE
    t -= t.mean()
    x = v - v.mean()
    grid = np.arange(40.0, 70.0 + 0.125, 0.25)
    for k in range(0, grid.size, 64):
        freqs = grid[k:k + 64]
        fast = waveform._grid_explained(t, x, freqs, 0.25)
        direct = []
        for f in freqs:
            c, s = np.cos(2 * np.pi * f * t), np.sin(2 * np.pi * f * t)
            basis = np.column_stack([c, s, np.ones_like(t)])
            coef = np.linalg.lstsq(basis, x, rcond=None)[0]
            direct.append(float((basis @ coef) @ x))
        assert np.allclose(fast, direct, rtol=1e-9, atol=1e-12 * float(x @ x))
    assert abs(grid[np.argmax(np.concatenate([waveform._grid_explained(
        t, x, grid[k:k + 64], 0.25) for k in range(0, grid.size, 64)]))] - F) <= 0.125
