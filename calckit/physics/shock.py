r"""Shock response spectra of sampled records, by the exact interval rule.

:func:`record_spectrum` fills a :class:`~calckit.physics.spectrum.ShockSpectrum` from a
:class:`~calckit.physics.records.TimeHistory`: for every natural frequency the response
from rest is carried through the record by the interval rule of
:mod:`calckit.physics.records` (exact for a load that is straight between samples), then

* **primary** (during the record): the largest absolute sample, refined inside the two
  intervals beside the largest sample of each of the :data:`REFINED_PEAKS` blocks of
  :data:`PEAK_BLOCK` samples with the largest tops, where the response
  is known exactly at any time (the same closed form over part of an interval,
  :data:`POINTS_PER_INTERVAL` points an interval): a peak between samples is not missed;
* **residual** (after it, the load being zero from the last sample on): the motion is the
  decaying oscillation ``Im(c e^{s_1 tau})/omega_d`` with ``c = s_1^n u_end`` for the
  ``n``-th derivative of ``z``, whose extremes lie ``pi/omega_d`` apart and shrink; its
  largest absolute value is at ``tau = 0`` or at the first extreme, found in closed form
  (A. K. Chopra, *Dynamics of Structures*, 4th ed., sec. 2.2, damped free vibration,
  from memory);
* **maximax**: the larger of the two.

Each for the relative displacement ``z``, the pseudo-velocity ``omega_n z`` and the
absolute acceleration (``-(2 zeta omega_n z' + omega_n^2 z)`` under base acceleration,
``f/m`` added under a force).
"""

from __future__ import annotations

import math

import numpy as np

from calckit.errors import ModelError
from calckit.physics.record_inputs import STEPS_PER_PERIOD, check_damping, check_frequencies, load_per_mass
from calckit.physics.records import Interval, TimeHistory, modal_states
from calckit.physics.spectrum import RESPONSES, SPECTRUM_KINDS, ShockSpectrum, log_frequencies

__all__ = [
    "PEAK_BLOCK",
    "POINTS_PER_INTERVAL",
    "REFINED_PEAKS",
    "default_frequencies",
    "record_spectrum",
    "residual_peak",
]

#: Largest samples whose neighbouring intervals are searched for the peak between samples.
REFINED_PEAKS = 8
#: Samples a block when the largest peaks are picked (one peak a block).
PEAK_BLOCK = 32
#: Points inside an interval where the exact response is evaluated when refining a peak.
POINTS_PER_INTERVAL = 64


def default_frequencies(history: TimeHistory, count: int = 100) -> np.ndarray:
    """Log-spaced natural frequencies (rad/s) from one cycle over the record to the fastest its step allows."""
    lowest = 2 * math.pi / history.duration
    highest = 2 * math.pi / (STEPS_PER_PERIOD * history.step)
    if highest <= lowest:
        raise ModelError(
            f"the record is only {history.samples} samples long, too short for a spectrum",
            where=history.source,
            do=f"Give a record of more than {STEPS_PER_PERIOD} samples, or give the natural frequencies",
        )
    return log_frequencies(lowest, highest, count)


def residual_peak(c: np.ndarray, root: np.ndarray) -> np.ndarray:
    """``max over tau >= 0 of |Im(c e^{root tau})|`` for a decaying root (``Re root <= 0``), exact.

    ``Im(c e^{s tau}) = |c| e^{-sigma tau} sin(omega_d tau + arg c)``; its extremes are where
    ``omega_d tau + arg c + arg s`` is a multiple of ``pi``, each smaller than the one
    before, so the largest is at ``tau = 0`` or at the first extreme.
    """
    c = np.asarray(c, dtype=complex)
    root = np.asarray(root, dtype=complex)
    wd, sigma = root.imag, -root.real
    tau = np.mod(-np.angle(c) - np.angle(root), math.pi) / wd
    first = np.abs(c) * np.exp(-sigma * tau) * np.abs(np.sin(wd * tau + np.angle(c)))
    return np.maximum(np.abs(c.imag), first)


def _vertex_max(y: np.ndarray) -> np.ndarray:
    """Largest of *y* along its last axis, the top of the parabola through the three points
    around the largest inner point taken (the error of a grid of P points falls from
    ``O(1/P^2)`` to ``O(1/P^3)``, below 1e-8 of the peak here)."""
    j = np.argmax(y[..., 1:-1], axis=-1)[..., None] + 1
    y0, y1, y2 = (np.take_along_axis(y, j + d, axis=-1)[..., 0] for d in (-1, 0, 1))
    curve = 2 * y1 - y0 - y2
    peak = (y1 >= y0) & (y1 >= y2) & (curve > 0)  # a true top between the two: lift <= |y2 - y0|/8
    lift = np.where(peak, (y2 - y0) ** 2 / (8 * np.where(peak, curve, 1.0)), 0.0)
    top = y1 + lift
    return np.maximum(top, y.max(axis=-1))


def _largest_in_blocks(size: np.ndarray) -> np.ndarray:
    """Indices (along the last axis) of the largest sample of each of the :data:`REFINED_PEAKS`
    blocks of :data:`PEAK_BLOCK` samples whose largest samples are the largest: the tops of
    separate peaks, not the neighbours of one (and a partial sort of a few hundred block
    maxima, not of every sample)."""
    m, N = size.shape
    blocks = -(-N // PEAK_BLOCK)
    padded = np.zeros((m, blocks * PEAK_BLOCK))
    padded[:, :N] = size
    padded = padded.reshape(m, blocks, PEAK_BLOCK)
    where = np.argmax(padded, axis=-1)  # (m, blocks)
    tops = np.take_along_axis(padded, where[..., None], axis=-1)[..., 0]
    k = min(REFINED_PEAKS, blocks)
    chosen = np.argpartition(tops, blocks - k, axis=1)[:, blocks - k :]  # (m, k)
    return np.minimum(chosen * PEAK_BLOCK + np.take_along_axis(where, chosen, axis=1), N - 1)


def _responses(u, p, wn, zeta, wd, force: bool):
    """z, absolute acceleration from the modal state u (broadcast) and the load p."""
    z = u.imag / wd
    v = u.real - zeta * wn * z
    a = -(wn**2 * z + 2 * zeta * wn * v)
    if force:
        a = a + p
    return z, a


def record_spectrum(
    history: TimeHistory,
    natural_frequencies=None,
    damping_ratio: float = 0.05,
    *,
    mass=None,
) -> ShockSpectrum:
    """Maximax, primary and residual shock response spectra of a sampled record.

    Parameters
    ----------
    history : TimeHistory
        A force (on a mass; give *mass*) or a base acceleration (under equipment).
    natural_frequencies : array_like, optional
        ``omega_n`` in rad/s; by default :func:`default_frequencies` (100, log-spaced).
    damping_ratio : float
        ``0 <= zeta < 1``, shared by every oscillator (0.05 is usual: Q = 10).
    mass : float or quantity, optional
        The mass a force acts on, kg (the spectrum is then of ``f/m``).

    Raises
    ------
    InputsError
        The record's step is longer than a tenth of the shortest natural period asked for.
    ModelError
        A damping ratio outside ``[0, 1)``, bad frequencies, a force record without a mass.

    Examples
    --------
    >>> from calckit.physics.records import TimeHistory
    >>> t = [i * 1e-3 for i in range(201)]
    >>> h = TimeHistory.from_samples(t, [min(i, 200 - i) / 100 for i in range(201)], value_unit="g_n")
    >>> s = record_spectrum(h, [20.0, 200.0], 0.05)
    >>> s.excitation, [round(float(x), 3) for x in s.values["maximax"]["absolute_acceleration"] / 9.80665]
    ('base acceleration', [1.326, 1.016])
    """
    where = "record_spectrum"
    zeta = check_damping(damping_ratio, f"{where}(damping_ratio)")
    if natural_frequencies is None:
        natural_frequencies = default_frequencies(history)
    w = check_frequencies(natural_frequencies, history, f"{where}(natural_frequencies)")
    order = np.argsort(w)
    w = w[order]
    p = load_per_mass(history, mass, where)
    force = history.kind == "force"
    interval = Interval(w, zeta, history.step)
    wd = interval.omega_d
    n, N = w.size, p.size
    primary = {r: np.empty(n) for r in ("relative_displacement", "absolute_acceleration")}
    residual = {r: np.empty(n) for r in ("relative_displacement", "absolute_acceleration")}
    theta = np.linspace(0.0, 1.0, POINTS_PER_INTERVAL + 1)[1:]  # the start is the sample
    per_chunk = max(1, 1_000_000 // N)
    for lo in range(0, n, per_chunk):
        sl = slice(lo, lo + per_chunk)
        sub = Interval(w[sl], zeta, history.step)
        u = modal_states(p, sub)  # (m, N)
        wn_c, wd_c = w[sl][:, None], wd[sl][:, None]
        z, a = _responses(u, p[None, :], wn_c, zeta, wd_c, force)
        E, g0, g1 = sub.coefficients(theta)  # (m, P): over the part theta of an interval
        for name, series in (("relative_displacement", z), ("absolute_acceleration", a)):
            size = np.abs(series)
            peak = np.max(size, axis=1)
            top = _largest_in_blocks(size)  # (m, k)
            starts = np.concatenate([top - 1, top], axis=1).clip(0, N - 2)  # (m, 2k) interval starts
            rows = np.arange(series.shape[0])[:, None]
            u0 = u[rows, starts][:, :, None]  # (m, 2k, 1)
            p0, p1 = p[starts][:, :, None], p[starts + 1][:, :, None]
            Ei, g0i, g1i = E[:, None, :], g0[:, None, :], g1[:, None, :]  # (m, 1, P)
            inside = Ei * u0 + g0i * p0 + g1i * p1
            load = p0 + (p1 - p0) * theta[None, None, :]
            zi, ai = _responses(inside, load, wn_c[:, :, None], zeta, wd_c[:, :, None], force)
            fine = _vertex_max(np.abs(zi if name == "relative_displacement" else ai)).max(axis=1)
            primary[name][sl] = np.maximum(peak, fine)
        end = u[:, -1]
        r = sub.root
        residual["relative_displacement"][sl] = residual_peak(end, r) / wd[sl]
        residual["absolute_acceleration"][sl] = residual_peak(r**2 * end, r) / wd[sl]
    values = {kind: {} for kind in SPECTRUM_KINDS}
    for name in ("relative_displacement", "absolute_acceleration"):
        values["primary"][name] = primary[name]
        values["residual"][name] = residual[name]
        values["maximax"][name] = np.maximum(primary[name], residual[name])
    for kind in SPECTRUM_KINDS:
        values[kind]["pseudo_velocity"] = w * values[kind]["relative_displacement"]
        values[kind] = {r: values[kind][r] for r in RESPONSES}
    method = (
        f"exact interval rule over the {N:,} samples of {history.source} (load straight between samples), "
        f"peaks refined between samples, residual from the free vibration after the record in closed form"
    )
    notes = ("The load is taken as zero after the last sample.",)
    if force:
        notes += ("A force record: the spectrum is of the force per unit mass, f/m.",)
    return ShockSpectrum(w, zeta, history.excitation, values, method, history.duration, notes)
