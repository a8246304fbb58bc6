"""Figures of a piecewise solution integrated exactly, segment by segment.

Between two events the circuit is linear and every output (an element's current or voltage)
is a finite sum of exponentials on the segment ``[t0, t1]``:

    y(t) = Re( sum_m alpha_m exp(mu_m (t - t0)) ) + g,

the modes of the segment's state matrix (``mu = lambda``, ``alpha`` from the modal
coefficients) and the harmonics of the source (``mu = j k w``, ``alpha`` from the
particular solution at ``t0``). Integrals of such sums and of their products have closed
forms built on ``phi1(z) = (exp(z) - 1) / z``:

    int_0^d exp(mu tau) dtau = d phi1(mu d),

so the harmonic phasors (``int y exp(-j h w t) dt``), the rms (``int y^2 dt``), the mean power
(``int v i dt``) and the mean of a sample cell are exact: no narrow pulse depends on a time
grid. Peaks are found on each segment (a dense start, where a transient decays from the
event, and an even spread) and refined by golden-section search.

:class:`Expansion` holds these sums for a trajectory and some outputs; :class:`Figures`
holds the exact figures of one current and the voltage it is referred to.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from ..waveform import Waveform
from .kernels import (
    rows_at,
    rows_fourier,
    rows_integral_to,
    seg_at,
    seg_integral_to,
    seg_mean_products,
    seg_peak,
)
from .network import CH_ONE, CH_SOURCE

__all__ = ["Expansion", "Figures", "SolvedWaveform", "expand", "figures", "phi1",
           "MAX_ORDER"]

#: highest harmonic order of the exact phasors (the project's spectra go to 50)
MAX_ORDER = 50
#: points per segment of the peak search before refinement: an even spread and a geometric
#: one from the segment's start (a transient decays from the event that starts a segment)
PEAK_EVEN, PEAK_GEOM = 12, 16


def phi1(z: np.ndarray) -> np.ndarray:
    """``(exp(z) - 1) / z`` elementwise, its series below ``|z| = 1e-8``."""
    small = np.abs(z) < 1e-8
    zs = np.where(small, 1.0, z)
    return np.where(small, 1.0 + 0.5 * z, np.expm1(zs) / zs)


@dataclass(frozen=True)
class Expansion:
    """Outputs ``r`` of a trajectory, segment ``s`` at ``t0[s] <= t <= t1[s]``:
    ``y = Re(sum_m alpha[s, r, m] exp(mu[s, m] (t - t0[s]))) + g[s, r]`` [A or V]."""

    t0: np.ndarray  # (S,) [s]
    t1: np.ndarray  # (S,) [s]
    mu: np.ndarray  # (S, M) complex [1/s]
    alpha: np.ndarray  # (S, R, M) complex
    g: np.ndarray  # (S, R)
    period_s: float
    #: mean products computed so far, by (row, row) ascending (see :meth:`mean_product`)
    _products: dict[tuple[int, int], float] = field(default_factory=dict, compare=False,
                                                    repr=False)

    @property
    def dt(self) -> np.ndarray:
        return self.t1 - self.t0

    def _row(self, r: int):
        return (np.ascontiguousarray(self.alpha[:, r, :]), self.mu,
                np.ascontiguousarray(self.g[:, r]), self.t0, self.t1)

    def at(self, r: int, ts: np.ndarray) -> np.ndarray:
        """Point values of output ``r`` at the ascending times ``ts``."""
        a, mu, g, t0, t1 = self._row(r)
        return seg_at(a, mu, g, t0, t1, np.ascontiguousarray(ts, dtype=float))

    def integral_to(self, r: int, ts: np.ndarray) -> np.ndarray:
        """``int_0^t y_r dt`` at the ascending times ``ts`` in ``[0, period]``."""
        a, mu, g, t0, t1 = self._row(r)
        return seg_integral_to(a, mu, g, t0, t1, np.ascontiguousarray(ts, dtype=float))

    def segment_integrals(self, r: int) -> np.ndarray:
        """``int y_r dt`` over each segment: (S,)."""
        a, mu, g, t0, t1 = self._row(r)
        d = (t1 - t0)[:, None]
        return np.real(np.sum(a * d * phi1(mu * d), axis=1)) + g * (t1 - t0)

    def cell_means(self, n: int, rows: int | None = None) -> np.ndarray:
        """Mean of outputs ``0..rows-1`` (all without ``rows``) over the ``n`` cells
        ``[(k - 1/2) dt, (k + 1/2) dt]`` of the period (``dt = period / n``; cell 0 wraps
        round the period's end): (rows, n)."""
        T = self.period_s
        edges = np.append((np.arange(n) + 0.5) * (T / n), T)
        nr = self.g.shape[1] if rows is None else rows
        G = rows_integral_to(np.ascontiguousarray(self.alpha[:, :nr, :]), self.mu,
                             np.ascontiguousarray(self.g[:, :nr]), self.t0, self.t1, edges)
        out = np.empty((G.shape[0], n))
        out[:, 1:] = np.diff(G[:, :n], axis=1)
        out[:, 0] = G[:, 0] + G[:, n] - G[:, n - 1]
        return out * (n / T)

    def at_rows(self, first: int, count: int, ts: np.ndarray) -> np.ndarray:
        """Point values of outputs ``first..first+count-1`` at the ascending times ``ts``."""
        return rows_at(np.ascontiguousarray(self.alpha[:, first:first + count, :]), self.mu,
                       np.ascontiguousarray(self.g[:, first:first + count]), self.t0, self.t1,
                       np.ascontiguousarray(ts, dtype=float))

    def fourier(self, omega: float, max_order: int = MAX_ORDER,
                rows: int | None = None) -> np.ndarray:
        """``(1 / T) int_0^T y exp(-j h w t) dt`` for orders ``h = 0..max_order`` of the
        mains frequency ``w`` [rad/s], outputs ``0..rows-1`` (all without ``rows``):
        (rows, max_order + 1) complex."""
        nr = self.g.shape[1] if rows is None else rows
        return rows_fourier(np.ascontiguousarray(self.alpha[:, :nr, :]), self.mu,
                            np.ascontiguousarray(self.g[:, :nr]), self.t0, self.t1,
                            float(omega), int(max_order)) / self.period_s

    def mean_product(self, r1: int, r2: int) -> float:
        """``(1 / T) int_0^T y_r1 y_r2 dt`` (a mean square or a mean power); kept, with
        those :meth:`mean_products` computed ahead."""
        key = (min(r1, r2), max(r1, r2))
        if key not in self._products:
            self.mean_products([key])
        return self._products[key]

    def mean_products(self, pairs: list[tuple[int, int]]) -> None:
        """Compute the mean products of several pairs of outputs at once (they share each
        segment's pair integrals, :func:`~pqcalc.circuits.kernels.seg_mean_products`) and
        keep them for :meth:`mean_product`."""
        todo = list(dict.fromkeys((min(a, b), max(a, b)) for a, b in pairs
                                  if (min(a, b), max(a, b)) not in self._products))
        if not todo:
            return
        rows = sorted({r for pr in todo for r in pr})
        at = {r: i for i, r in enumerate(rows)}
        got = seg_mean_products(np.ascontiguousarray(self.alpha[:, rows, :]), self.mu,
                                np.ascontiguousarray(self.g[:, rows]), self.t0, self.t1,
                                np.array([[at[a], at[b]] for a, b in todo], dtype=np.int64))
        for pr, v in zip(todo, got.tolist(), strict=True):
            self._products[pr] = v / self.period_s

    def peak(self, r: int) -> float:
        """Largest ``|y_r|`` over the period."""
        a, mu, g, t0, t1 = self._row(r)
        return float(seg_peak(a, mu, g, t0, t1, PEAK_EVEN, PEAK_GEOM))


def expand(eng, tr, rows: list[int]) -> Expansion:
    """The exponential sums of the rows ``rows`` of the modes' output matrices ``Q`` (an
    element's current ``index`` or voltage ``n_e + index``) over the recorded trajectory
    ``tr`` of the engine ``eng``."""
    net, src = eng.net, eng.src
    nx = net.n_x
    t0, t1, (Q, V, P, p0, lam, consts), idx, C = tr.segment_table()
    kw = 1j * src.omega * src.orders  # (K,)
    S = t0.size
    Qr = Q[:, rows, :]  # (modes, R, nx + nu)
    Qx = Qr[:, :, :nx]
    modal = Qx @ V  # (modes, R, n)
    harm = Qx @ P + Qr[:, :, nx + CH_SOURCE][:, :, None] * src.amplitudes  # (modes, R, K)
    gm = (Qx @ p0[:, :, None])[:, :, 0] + Qr[:, :, nx + CH_ONE] + \
        Qr[:, :, nx + CH_SOURCE] * src.dc_v
    for k, cs in enumerate(consts):
        for ch, val in cs:
            gm[k] = gm[k] + Qr[k, :, nx + ch] * val
    alpha = np.concatenate([modal[idx] * C[:, None, :],
                            harm[idx] * np.exp(np.outer(t0, kw))[:, None, :]], axis=2)
    mu = np.concatenate([lam[idx], np.broadcast_to(kw, (S, kw.size))], axis=1)
    return Expansion(t0, t1, np.ascontiguousarray(mu, dtype=complex),
                     np.ascontiguousarray(alpha, dtype=complex),
                     np.ascontiguousarray(gm[idx], dtype=float), float(t1[-1]))


#: a figure given as its value or as a function that computes it when first read
Lazy = float | Callable[[], float]


class _Figure:
    """A figure of :class:`Figures`, computed on first read and kept."""

    def __init__(self, doc: str):
        self.__doc__ = doc

    def __set_name__(self, owner: type, name: str) -> None:
        self.name = name

    def __get__(self, obj: Figures | None, owner: type | None = None):
        return self if obj is None else obj._get(self.name)


class Figures:
    """Exact figures of one current and the voltage it is referred to, over one period.

    Phasors follow :mod:`pqcalc.spectrum`: RMS, sine basis, time origin at the
    positive-going zero crossing of the voltage's fundamental; index = order 0..MAX_ORDER,
    index 0 the (real) mean.

    The rms values, the power and the peaks are computed when first read (each is an
    integral or a search over every segment of the solution, and a caller such as an
    installation study reads two of the seven): pass a value or a function of no argument.
    Pickling computes what was not read yet, so a copy in another process is whole.
    """

    __slots__ = ("current_phasors_a", "voltage_phasors_v", "frequency_hz", "_v")
    _NAMES = ("i_rms_a", "v_rms_v", "p_w", "i_peak_a", "v_peak_v")

    def __init__(self, current_phasors_a: np.ndarray, voltage_phasors_v: np.ndarray,
                 i_rms_a: Lazy, v_rms_v: Lazy, p_w: Lazy, i_peak_a: Lazy, v_peak_v: Lazy,
                 frequency_hz: float):
        self.current_phasors_a = current_phasors_a  # [A rms]
        self.voltage_phasors_v = voltage_phasors_v  # [V rms]
        self.frequency_hz = frequency_hz
        self._v: dict[str, Lazy] = dict(zip(self._NAMES, (i_rms_a, v_rms_v, p_w, i_peak_a,
                                                          v_peak_v), strict=True))

    def _get(self, name: str) -> float:
        v = self._v[name]
        if callable(v):
            v = float(v())
            self._v[name] = v
        return v

    i_rms_a = _Figure("[A]")
    v_rms_v = _Figure("[V]")
    p_w = _Figure("Mean of v i [W].")
    i_peak_a = _Figure("Largest |i| [A].")
    v_peak_v = _Figure("Largest |v| [V].")

    def resolve(self) -> Figures:
        """Compute every figure not read yet (and drop what they were computed from)."""
        for n in self._NAMES:
            self._get(n)
        return self

    def __getstate__(self) -> dict:
        return {"current_phasors_a": self.current_phasors_a,
                "voltage_phasors_v": self.voltage_phasors_v,
                "frequency_hz": self.frequency_hz,
                "_v": {n: self._get(n) for n in self._NAMES}}

    def __setstate__(self, state: dict) -> None:
        for k, v in state.items():
            object.__setattr__(self, k, v)

    def __repr__(self) -> str:
        return (f"Figures(i_rms_a={self.i_rms_a!r}, p_w={self.p_w!r}, "
                f"frequency_hz={self.frequency_hz!r})")

    def scaled(self, factor: float) -> Figures:
        """The figures of ``factor`` identical currents in parallel (same voltage)."""
        k = abs(factor)
        return Figures(self.current_phasors_a * factor, self.voltage_phasors_v,
                       lambda: self.i_rms_a * k, lambda: self.v_rms_v,
                       lambda: self.p_w * factor, lambda: self.i_peak_a * k,
                       lambda: self.v_peak_v, self.frequency_hz)

    def spectrum(self, max_order: int = MAX_ORDER, label: str = ""):
        """As a :class:`pqcalc.spectrum.Spectrum` (orders 0..``max_order`` <= MAX_ORDER)."""
        from ..errors import InputError
        from ..spectrum import Spectrum

        if not 1 <= max_order <= MAX_ORDER:
            raise InputError(f"max_order: expected 1 to {MAX_ORDER}, got {max_order}")
        k = max_order + 1
        return Spectrum(self.current_phasors_a[:k].copy(), self.frequency_hz, self.i_rms_a,
                        self.i_peak_a, self.voltage_phasors_v[:k].copy(), self.v_rms_v,
                        self.v_peak_v, self.p_w, "voltage", label)


def to_phasors(c: np.ndarray, psi1: float) -> np.ndarray:
    """Complex Fourier coefficients ``(1/T) int y exp(-j h w t) dt`` (h = 0..) as RMS
    sine-basis phasors on a reference whose fundamental has sine phase ``psi1`` [rad]."""
    h = np.arange(c.shape[-1])
    p = np.sqrt(2) * np.abs(c) * np.exp(1j * (np.angle(c) + np.pi / 2 - h * psi1))
    p[..., 0] = c[..., 0].real
    return p


def reference_phase(cv: np.ndarray) -> float:
    """Sine phase of the voltage's fundamental from its Fourier coefficients [rad] (0 when
    there is no fundamental: the record's own origin)."""
    return 0.0 if abs(cv[1]) == 0 else float(np.angle(cv[1])) + np.pi / 2


def figures(ex: Expansion, ri: int, rv: int, cv: np.ndarray, ci: np.ndarray,
            frequency_hz: float, v_peak_v: Lazy, scale: float = 1.0,
            v_rms_v: Lazy | None = None) -> Figures:
    """Exact figures of output ``ri`` (a current, times ``scale``) against output ``rv``
    (its voltage), from the expansion and their Fourier coefficients ``ci``, ``cv``;
    ``v_rms_v`` when the voltage's is known already (several currents on one voltage).
    The integrals and the peak search run when their figure is first read."""
    psi1 = reference_phase(cv)
    k = abs(scale)

    def i_rms() -> float:
        return float(np.sqrt(max(ex.mean_product(ri, ri), 0.0))) * k

    def v_rms() -> float:
        return float(np.sqrt(max(ex.mean_product(rv, rv), 0.0)))

    return Figures(to_phasors(ci, psi1) * scale, to_phasors(cv, psi1), i_rms,
                   v_rms if v_rms_v is None else v_rms_v,
                   lambda: ex.mean_product(ri, rv) * scale, lambda: ex.peak(ri) * k, v_peak_v,
                   float(frequency_hz))


def corrected_samples(means: np.ndarray, coeffs: np.ndarray, cycles: int) -> np.ndarray:
    """Cell means whose DFT at the orders of ``coeffs`` (bins ``h * cycles``) is made equal
    to those exact coefficients: the cell average's own small filtering (``sinc`` of the
    cell, ``1 - (pi h / N)^2 / 6``) and the aliasing of content above half the sample rate
    are removed at those orders by adding the difference as sinusoids."""
    n = means.shape[-1]
    X = np.fft.rfft(means, axis=-1) / n
    bins = np.arange(coeffs.shape[-1]) * cycles
    delta = np.zeros_like(X)
    delta[..., bins] = coeffs - X[..., bins]
    return means + np.fft.irfft(delta * n, n, axis=-1)


@dataclass(frozen=True)
class SolvedWaveform(Waveform):
    """A solved current and its voltage on a uniform grid, for plots and CSV, that carries
    the exact :class:`Figures` of the piecewise solution.

    Which number comes from where:

    - ``current_a``, ``voltage_v``: the mean of the solution over each sample's cell
      ``[(k - 1/2) dt, (k + 1/2) dt]`` (a narrow pulse keeps its charge, whatever its
      position on the grid), plus small sinusoids of orders 0..MAX_ORDER (measured on the
      six models behind each dimmer kind: at most 0.5 % of the fundamental's peak, at a
      30 deg leading-edge cut) that make the samples' DFT at those orders equal to the
      exact phasors:
      :func:`pqcalc.spectrum.spectrum` of this waveform gives ``figures``' phasors.
    - ``i_rms_a``, ``v_rms_v``, ``p_w``: exact (``figures``), not from the samples (a cell
      mean smooths a pulse narrower than the cell, and would understate the rms).
    - ``i_peak_a``, ``v_peak_v``: exact (``figures``); the largest sample is a cell mean,
      below the peak of a pulse narrower than a cell.
    - :meth:`scaled` keeps the exact figures; :meth:`shifted`, ``+`` and :meth:`cycle`
      give plain waveforms whose figures come from their samples.
    """

    figures: Figures | None = field(default=None, compare=False, repr=False)

    @property
    def i_rms_a(self) -> float:
        """Current RMS of the solution [A] (exact)."""
        return super().i_rms_a if self.figures is None else self.figures.i_rms_a

    @property
    def v_rms_v(self) -> float | None:
        """Voltage RMS of the solution [V] (exact)."""
        return super().v_rms_v if self.figures is None else self.figures.v_rms_v

    @property
    def p_w(self) -> float | None:
        """Active power of the solution [W] (exact)."""
        return super().p_w if self.figures is None else self.figures.p_w

    @property
    def i_peak_a(self) -> float:
        """Largest absolute current of the solution [A] (exact, not a sample)."""
        if self.figures is None:
            return float(np.max(np.abs(self.current_a)))
        return self.figures.i_peak_a

    @property
    def v_peak_v(self) -> float | None:
        """Largest absolute voltage of the solution [V] (exact, not a sample)."""
        if self.figures is None:
            return None if self.voltage_v is None else float(np.max(np.abs(self.voltage_v)))
        return self.figures.v_peak_v

    def scaled(self, factor: float) -> SolvedWaveform:
        """``factor`` identical currents (lamps) at the same voltage; exact figures kept."""
        return replace(self, current_a=self.current_a * factor, meta=dict(self.meta),
                       figures=None if self.figures is None else self.figures.scaled(factor))
