"""Periodic piecewise-linear waveforms: exact average, RMS and Fourier coefficients.

Every current in a flyback power stage is, to the accuracy of the model, piecewise linear over
one switching period (ramps while a winding conducts, flat zero while nothing does, jumps at
the switching instants).  This module holds such a waveform as breakpoints and integrates it
exactly, so that tests can check the engine's closed-form RMS values against direct integration
and the capacitor-bank model can split current harmonic by harmonic.

References
----------
Fourier coefficients of a linear segment by integration by parts: any text on Fourier series,
e.g. Erickson & Maksimovic, *Fundamentals of Power Electronics*, 2nd ed., appendix on averaging
and harmonics (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class PiecewiseLinear:
    """One period of a periodic piecewise-linear waveform.

    Attributes
    ----------
    t:
        Breakpoint times, non-decreasing, ``t[0] == 0`` and ``t[-1] == period``. [s]
        A jump is two breakpoints at the same time.
    y:
        Values at the breakpoints, linear in between. [unit of the quantity, e.g. A]
    """

    t: np.ndarray
    y: np.ndarray

    def __post_init__(self) -> None:
        t = np.asarray(self.t, dtype=float)
        y = np.asarray(self.y, dtype=float)
        if t.ndim != 1 or t.shape != y.shape or t.size < 2:
            raise ValueError("t and y must be 1-D arrays of the same length, at least 2")
        if np.any(np.diff(t) < 0):
            raise ValueError("breakpoint times must not decrease")
        if t[0] != 0.0 or t[-1] <= 0.0:
            raise ValueError("a period runs from t = 0 to t = period > 0")
        object.__setattr__(self, "t", t)
        object.__setattr__(self, "y", y)

    @property
    def period(self) -> float:
        """Length of one period. [s]"""
        return float(self.t[-1])

    def _segments(self):
        dt = np.diff(self.t)
        keep = dt > 0
        return self.t[:-1][keep], self.t[1:][keep], self.y[:-1][keep], self.y[1:][keep]

    def mean(self) -> float:
        """Average over one period."""
        t0, t1, y0, y1 = self._segments()
        return float(np.sum((t1 - t0) * (y0 + y1) / 2.0) / self.period)

    def rms(self) -> float:
        """Root-mean-square over one period (exact for linear segments)."""
        t0, t1, y0, y1 = self._segments()
        return float(np.sqrt(np.sum((t1 - t0) * (y0 * y0 + y0 * y1 + y1 * y1) / 3.0) / self.period))

    def ac_rms(self) -> float:
        """RMS of the waveform without its average: sqrt(rms² − mean²)."""
        return float(np.sqrt(max(self.rms() ** 2 - self.mean() ** 2, 0.0)))

    def peak(self) -> float:
        """Largest value."""
        return float(np.max(self.y))

    def fourier(self, n_harmonics: int) -> np.ndarray:
        """Complex Fourier coefficients c_k, k = 1..n_harmonics, of y(t) = c0 + 2·Re Σ c_k e^{jkω0t}.

        The RMS of harmonic k is ``sqrt(2)·|c_k|``.
        """
        t0, t1, y0, y1 = self._segments()
        k = np.arange(1, n_harmonics + 1, dtype=float)[:, None]
        w = 2.0 * np.pi * k / self.period
        e0 = np.exp(-1j * w * t0)
        e1 = np.exp(-1j * w * t1)
        slope = (y1 - y0) / (t1 - t0)
        # ∫ (y0 + s(t − t0)) e^{−jωt} dt over [t0, t1], by parts.
        integral = 1j * (y1 * e1 - y0 * e0) / w + slope * (e1 - e0) / (w * w)
        return integral.sum(axis=1) / self.period

    def harmonic_rms(self, n_harmonics: int) -> np.ndarray:
        """RMS value of each harmonic k = 1..n_harmonics."""
        return np.sqrt(2.0) * np.abs(self.fourier(n_harmonics))

    def sample(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``n`` evenly spaced samples over one period (for plots and numerical checks)."""
        ts = np.linspace(0.0, self.period, n, endpoint=False)
        return ts, self.at(ts)

    def at(self, ts: np.ndarray) -> np.ndarray:
        """Values at times ``ts`` (folded into one period); right-continuous at jumps."""
        ts = np.mod(np.asarray(ts, dtype=float), self.period)
        idx = np.searchsorted(self.t, ts, side="right") - 1
        idx = np.clip(idx, 0, self.t.size - 2)
        # Skip zero-length segments (jumps): take the last breakpoint at that time.
        t0, t1 = self.t[idx], self.t[idx + 1]
        y0, y1 = self.y[idx], self.y[idx + 1]
        span = np.where(t1 > t0, t1 - t0, 1.0)
        return y0 + (y1 - y0) * np.clip((ts - t0) / span, 0.0, 1.0)

    def scaled(self, factor: float) -> "PiecewiseLinear":
        """The same waveform multiplied by ``factor``."""
        return PiecewiseLinear(self.t, self.y * factor)


def harmonics_needed(wave: PiecewiseLinear, rel_tol: float = 1e-3, n_max: int = 2000) -> int:
    """Smallest harmonic count whose AC RMS is within ``rel_tol`` of the exact AC RMS.

    Parseval: ac_rms² = Σ harmonic_rms².  Waveforms with jumps converge as 1/k, so about
    1/(rel_tol·π²) harmonics are needed for a jump-dominated waveform.
    """
    exact = wave.ac_rms()
    if exact == 0.0:
        return 1
    cumulative = np.sqrt(np.cumsum(wave.harmonic_rms(n_max) ** 2))
    ok = np.nonzero(cumulative >= exact * (1.0 - rel_tol))[0]
    return int(ok[0] + 1) if ok.size else n_max
