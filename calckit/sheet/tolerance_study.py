"""A sheet's checks over its inputs' tolerance bands: worst case, sensitivities, sampled study.

When some input on a sheet has a band (:mod:`calckit.core.tolerances`), each check whose
value is a result of the sheet's chain of formula steps is evaluated over the box of the
bands of the inputs its result depends on (:func:`calckit.sheet.chain.composed` gives the
result as one sympy expression of those inputs):

* **worst case**: the check's margin (:func:`calckit.sheet.blocks.check_margin`, written
  as an expression) at every corner of the box, and inside it where the margin is not
  monotonic: from a grid over the box (21 points an input for up to three inputs, 4000
  seeded points for more) the lowest point is polished by ``scipy.optimize.minimize``
  (L-BFGS-B within the box, the gradient from the margin's symbolic derivative). The
  lowest margin found governs; the point is named, and said to be a corner or inside.
* **sensitivities**: the elasticity of the checked result with respect to each input,
  ``(x / R) dR/dx`` at the nominal values from the symbolic derivative (percent change
  of the result per percent change of the input), and the result at each end of the
  input's band with the others nominal (the bars of the tornado chart); the input with
  the widest swing decides.
* **sampled study** (when asked, :meth:`Tolerances.sample_study`): samples drawn over the
  box with a stated distribution and seed, every check's margin evaluated on compiled
  expressions (``sympy.lambdify`` to numpy, all samples at once), and the fraction that
  passes.

A check whose value is not from a formula chain (a derivation's peak, a procedure's
result, a value the sheet cannot trace) says so in words and is not evaluated.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import sympy as sp

from calckit.errors import InputsError
from calckit.sheet.chain import Untraced, composed, input_symbol, si_float

__all__ = [
    "DISTRIBUTIONS",
    "FEWEST_SAMPLES",
    "MOST_SAMPLES",
    "BandedCheck",
    "SampleRequest",
    "Sensitivity",
    "ToleranceStudy",
    "Tolerances",
    "study_of",
]

DISTRIBUTIONS = ("uniform", "normal")
"""The distributions a sampled study draws from: uniform over each band, or normal with the band as ``k`` sigma."""
FEWEST_SAMPLES = 100
"""The fewest samples a sampled study draws (:func:`sample_request`; an inputs file's ``[sampling]`` too)."""
MOST_SAMPLES = 10_000_000
"""The most samples a sampled study draws (every sample is held in memory at once)."""

_CORNERS_AT_MOST = 12  # 4096 corners; above that the corners are not all visited and the sheet says so
_GRID_POINTS = 21
_SCATTER_POINTS = 4000


@dataclass(frozen=True)
class SampleRequest:
    """A sampled study asked for: ``n`` samples, the ``distribution``, its ``seed`` and (normal) ``k`` sigma in a band."""

    n: int
    distribution: str
    seed: int
    k: float = 3.0

    @property
    def stated(self) -> str:
        """The distribution in words, as the sheet states it."""
        if self.distribution == "uniform":
            return f"{self.n:,} samples, each input uniform over its band, independent, seed {self.seed}"
        return (
            f"{self.n:,} samples, each input normal about its value with the half-band as {self.k:g} sigma "
            f"(each side of an unequal band its own), not truncated, independent, seed {self.seed}"
        )


@dataclass(frozen=True)
class Sensitivity:
    """How one checked result moves with one input: elasticity, and the result at the band's ends."""

    input: str
    elasticity: float | None  # % change of the result per % change of the input; None where the result is 0
    at_low: (
        float  # the result (in the check's unit) with the input at the low end of its band, others nominal
    )
    at_high: float

    @property
    def swing(self) -> float:
        return abs(self.at_high - self.at_low)


@dataclass(frozen=True)
class BandedCheck:
    """One check over the bands: nominal and worst-case verdicts, the point that governs, the sensitivities."""

    name: str
    evaluated: bool
    reason: str = ""  # why not evaluated, in words
    result: str = ""  # the result the check's value is
    unit: str = ""
    relation: str = "<="
    nominal_value: float = math.nan
    nominal_met: bool = True
    worst_value: float = math.nan
    worst_limit: float = math.nan
    worst_margin: float = math.nan
    worst_met: bool = True
    governing: tuple[
        tuple[str, float], ...
    ] = ()  # input -> its value (in the input's unit) where the check is worst
    inside: bool = False  # the worst point lies inside the box, not at a corner
    inputs: tuple[str, ...] = ()  # the toleranced inputs the result depends on
    sensitivities: tuple[Sensitivity, ...] = ()
    pass_fraction: float | None = None
    corners: int = 0

    @property
    def decider(self) -> str:
        """The input whose band moves the result most (widest swing); ``""`` when none does."""
        moving = [s for s in self.sensitivities if s.swing > 0]
        return max(moving, key=lambda s: s.swing).input if moving else ""


@dataclass(frozen=True)
class ToleranceStudy:
    """The bands on a sheet and its checks over them."""

    bands: tuple[Any, ...]  # calckit.core.tolerances.Tolerance, in input order
    checks: tuple[BandedCheck, ...]
    sampling: SampleRequest | None = None
    method: str = ""
    units: dict = field(default_factory=dict)  # input -> the unit its band is shown in

    def as_dict(self) -> dict:
        """The study as the sheet's record holds it."""

        def number(x):
            return None if x is None or not math.isfinite(x) else round(float(x), 9)

        checks = []
        for c in self.checks:
            entry = {"name": c.name, "evaluated": c.evaluated}
            if not c.evaluated:
                entry["reason"] = c.reason
            else:
                entry.update(
                    result=c.result,
                    unit=c.unit,
                    nominal_value=number(c.nominal_value),
                    nominal_verdict="met" if c.nominal_met else "not met",
                    worst_value=number(c.worst_value),
                    worst_limit=number(c.worst_limit),
                    worst_margin=number(c.worst_margin),
                    worst_verdict="met" if c.worst_met else "not met",
                    governing={name: number(v) for name, v in c.governing},
                    governing_point="inside the box" if c.inside else "a corner",
                    decider=c.decider,
                    sensitivities=[
                        {"input": s.input, "elasticity": number(s.elasticity), "at_low": number(s.at_low),
                         "at_high": number(s.at_high)}
                        for s in c.sensitivities
                    ],
                )  # fmt: skip
                if c.pass_fraction is not None:
                    entry["pass_fraction"] = number(c.pass_fraction)
            checks.append(entry)
        data = {"method": self.method, "checks": checks}
        if self.sampling is not None:
            s = self.sampling
            data["samples"] = {"n": s.n, "distribution": s.distribution, "seed": s.seed, "k": s.k}
        return data


def sample_request(n: Any, distribution: Any, seed: Any, k: Any) -> SampleRequest:
    """A checked :class:`SampleRequest`.

    Raises
    ------
    InputsError
        An unknown distribution, a number of samples that is not a whole number from
        :data:`FEWEST_SAMPLES` to :data:`MOST_SAMPLES`, a seed that is not a whole number, or ``k`` not above zero.
    """
    where = "sample_study"
    if distribution not in DISTRIBUTIONS:
        raise InputsError(
            f"the distribution {distribution!r} is not one the kit samples from",
            where=where,
            do=f'Give distribution="uniform" (over each band) or "normal" (the band as k sigma, k={k!r})',
        )
    if isinstance(n, bool) or not isinstance(n, int) or not FEWEST_SAMPLES <= n <= MOST_SAMPLES:
        raise InputsError(
            f"n={n!r} is not a number of samples from {FEWEST_SAMPLES:,} to {MOST_SAMPLES:,}",
            where=where,
            do="Give a whole number, e.g. n=100_000",
        )
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputsError(
            f"seed={seed!r} is not a whole number of zero or more",
            where=where,
            do="Give the seed the study is drawn with, e.g. seed=2026, so that it can be redrawn",
        )
    if isinstance(k, bool) or not isinstance(k, int | float) or not math.isfinite(k) or k <= 0:
        raise InputsError(
            f"k={k!r} is not a number of sigma above zero",
            where=where,
            do="Give e.g. k=3 (the band as 3 sigma)",
        )
    return SampleRequest(n, distribution, seed, float(k))


class Tolerances:
    """The tolerance study of a sheet (a part of :class:`calckit.sheet.sheet.Sheet`)."""

    def sample_study(
        self, n: int = 100_000, distribution: str = "uniform", seed: int = 0, *, k: float = 3.0
    ) -> SampleRequest:
        """Ask for a sampled study over the inputs' bands: the fraction of samples that pass each check.

        ``distribution`` is ``"uniform"`` (each input uniform over its band) or ``"normal"``
        (normal about its value, the half-band as ``k`` sigma); inputs independent, drawn
        with numpy's default generator from ``seed``. The study is on the sheet's tolerance
        section, beside the worst case.

        Raises
        ------
        InputsError
            An unknown distribution, or a number of samples, seed or ``k`` out of range.
        """
        self.sampling = sample_request(n, distribution, seed, k)
        return self.sampling

    def tolerance_study(self) -> ToleranceStudy | None:
        """The checks over the inputs' bands (:class:`ToleranceStudy`); None when no input has a band."""
        return study_of(self)


def study_of(sheet: Any) -> ToleranceStudy | None:
    """The tolerance study of *sheet* as it stands (kept until a block is added or the sampling changes)."""
    bands = tuple(rec.tolerance for rec in sheet.inputs.values() if rec.tolerance is not None)
    if not bands:
        return None
    key = (len(sheet.blocks), sheet.sampling, tuple(id(b) for b in bands), id(sheet.units))
    kept = getattr(sheet, "_study_kept", None)
    if kept is not None and kept[0] == key:
        return kept[1]
    memo: dict = {}
    samples = _draw(bands, sheet.sampling) if sheet.sampling is not None else None
    checks = tuple(_guarded(sheet, check, bands, memo, samples) for check in sheet.checks)
    corners = max((c.corners for c in checks), default=0)
    method = (
        "every corner of the box of the bands"
        + (f" ({corners} corners at most)" if corners else "")
        + f", and inside the box from a grid ({_GRID_POINTS} points an input up to three inputs, "
        f"{_SCATTER_POINTS} seeded points for more) polished by scipy.optimize.minimize (L-BFGS-B within "
        "the box, the gradient from the symbolic derivative of the margin); the composed chain is unrounded"
    )
    study = ToleranceStudy(bands, checks, sheet.sampling, method)
    sheet._study_kept = (key, study)
    return study


def _guarded(sheet: Any, check: Any, bands: tuple, memo: dict, samples: dict | None) -> BandedCheck:
    """The check over the bands; one whose composed result numpy cannot evaluate says so, and the sheet is kept."""
    try:
        return _over_bands(sheet, check, bands, memo, samples)
    except (
        ArithmeticError,
        TypeError,
        ValueError,
        NameError,
        KeyError,
    ) as exc:  # lambdify of an odd function
        return BandedCheck(
            check.name,
            False,
            f"its composed result could not be evaluated in numbers ({type(exc).__name__}: {exc})",
        )


def _draw(bands: tuple, request: SampleRequest) -> dict[str, np.ndarray]:
    """The samples of every input with a band, in SI base units, drawn in input order from the request's seed."""
    rng = np.random.default_rng(request.seed)
    drawn = {}
    for band in bands:
        low, nominal, high = band.si()
        if request.distribution == "uniform":
            drawn[band.name] = rng.uniform(low, high, request.n)
        else:
            z = rng.standard_normal(request.n)
            drawn[band.name] = nominal + np.where(z < 0, (nominal - low), (high - nominal)) / request.k * z
    return drawn


def _unit_factor(value: Any, unit: str) -> float:
    """The factor from *value*'s SI base units to the check's *unit*."""
    from calckit.core.units import Q_

    if hasattr(value, "units"):
        base = value.to_base_units()
        return float(Q_(1.0, base.units).to(unit or "dimensionless").magnitude)
    return 100.0 if unit == "percent" else 1.0


def _origin_value(sheet: Any, name: str) -> Any:
    return sheet.results[name] if name in sheet.results else sheet.inputs[name].value


def _over_bands(sheet: Any, check: Any, bands: tuple, memo: dict, samples: dict | None) -> BandedCheck:
    from calckit.sheet.checking import holds

    def refused(reason: str) -> BandedCheck:
        return BandedCheck(check.name, False, reason)

    if not check.value_from:
        return refused(
            "its value is not traced to a result on the sheet (sheet.check(..., result=name) names it)"
        )
    try:
        value = composed(sheet, check.value_from, memo)
        limit = composed(sheet, check.limit_from, memo) if check.limit_from else None
    except Untraced as exc:
        return refused(exc.reason)
    v_factor = _unit_factor(_origin_value(sheet, check.value_from), check.unit)
    value_c = value * v_factor
    if limit is not None:
        limit_c = limit * _unit_factor(_origin_value(sheet, check.limit_from), check.unit)
    else:
        limit_c = sp.Float(check.limit)
    by_name = {band.name: band for band in bands}
    free = (value_c.free_symbols | limit_c.free_symbols) if limit is not None else value_c.free_symbols
    names = [b.name for b in bands if input_symbol(b.name) in free]
    untraced_inputs = sorted(s.name[4:] for s in free if s.name[4:] not in by_name)
    symbols = [input_symbol(n) for n in names]
    nominal_all = {input_symbol(rec.name): si_float(rec.value) for rec in sheet.inputs.values()}
    fixed = {s: nominal_all[s] for s in free if s.name[4:] not in by_name}
    if any(v is None for v in fixed.values()):
        return refused(f"the inputs {', '.join(untraced_inputs)} of {check.value_from} have no number")
    frame = _Frame(symbols, fixed, _keepable((value_c, limit_c)))  # the other inputs: symbols, numbers passed in
    nominal = [by_name[n].si()[1] for n in names]
    value_f = frame.one(value_c)
    limit_f = frame.one(limit_c)
    at_nominal = float(value_f(*nominal))
    if not math.isclose(at_nominal, check.value, rel_tol=2e-2, abs_tol=1e-12 * max(1.0, abs(check.value))):
        return refused(
            f"the chain of {check.value_from} composed back to the inputs gives {at_nominal:.6g}, not the "
            f"{check.value:.6g} the check shows, so it is not evaluated over the bands"
        )
    gap = (limit_c - value_c) if check.relation in ("<=", "<") else (value_c - limit_c)
    margin = gap if check.unit == "percent" else gap / sp.Abs(limit_c) * 100
    common = dict(
        result=check.value_from, unit=check.unit, relation=check.relation, nominal_value=check.value,
        nominal_met=check.met, inputs=tuple(names),
    )  # fmt: skip
    if not names:
        return BandedCheck(
            check.name, True, "", worst_value=check.value, worst_limit=check.limit,
            worst_margin=check.margin_percent, worst_met=check.met, **common,
        )  # fmt: skip
    lows = np.array([by_name[n].si()[0] for n in names])
    highs = np.array([by_name[n].si()[2] for n in names])
    point, worst, inside, corners = _worst_point(frame, margin, lows, highs)
    worst_value, worst_limit = float(value_f(*point)), float(limit_f(*point))
    sensitivities = _sensitivities(names, frame, value_c, value_f, nominal, lows, highs)
    governing = tuple(
        (n, float(x) * _unit_factor(by_name[n].nominal, f"{by_name[n].nominal.units}"))
        for n, x in zip(names, point, strict=True)
    )
    fraction = None
    if samples is not None:
        fraction = _pass_fraction(frame, names, value_c, limit_c, check.relation, samples)
    return BandedCheck(
        check.name, True, "", worst_value=worst_value, worst_limit=worst_limit, worst_margin=float(worst),
        worst_met=bool(holds(worst_value, worst_limit, check.relation)), governing=governing, inside=inside,
        sensitivities=sensitivities, pass_fraction=fraction, corners=corners, **common,
    )  # fmt: skip


@functools.lru_cache(maxsize=256)
def _lambdified(args: tuple, exprs: tuple, many: bool):
    """``sympy.lambdify`` of *exprs* in *args* to numpy: one function returning all of them (*many*) or the one.

    Kept between a batch's cases (:data:`calckit.workflow.kernel_state.KEPT_CACHES`): it depends on the
    expressions alone, and a case's numbers are arguments (:class:`_Frame`), so the cases of one template
    share their compiled margins.
    """
    return sp.lambdify(list(args), list(exprs) if many else exprs[0], "numpy")


@functools.lru_cache(maxsize=256)
def _derivatives(expr: sp.Expr, wrt: tuple) -> tuple:
    """The symbolic derivatives of *expr* by each symbol of *wrt* (kept as :func:`_lambdified` is)."""
    return tuple(sp.diff(expr, s) for s in wrt)


def _keepable(exprs: tuple) -> bool:
    """Whether the expressions name no function of a case's own (``implemented_function``), which a kept
    compiled function would carry into the next case."""
    from sympy.core.function import AppliedUndef

    return not any(sp.sympify(e).atoms(AppliedUndef) for e in exprs)


class _Frame:
    """The arguments of a check's compiled expressions: the inputs with a band, then the other inputs
    the result depends on (sorted by name), whose nominal values in SI are passed with every call.

    *keep*: whether what is made from the check's expressions may be kept between cases
    (:func:`_keepable` of its value and limit; their margin and derivatives name no other function).
    """

    def __init__(self, symbols: list, fixed: dict, keep: bool = True) -> None:
        self.symbols = list(symbols)
        extra = sorted(fixed, key=lambda s: s.name)
        self.values = [fixed[s] for s in extra]
        self.args = tuple(self.symbols + extra)
        self.compile = _lambdified if keep else _lambdified.__wrapped__
        self.differentiate = _derivatives if keep else _derivatives.__wrapped__

    def _function(self, exprs: tuple, many: bool):
        return self.compile(self.args, exprs, many)

    def derivatives(self, expr: sp.Expr) -> tuple:
        """*expr*'s derivative by each input with a band."""
        return self.differentiate(expr, tuple(self.symbols))

    def one(self, expr: sp.Expr):
        """*expr* compiled, a function of the banded inputs returning arrays of the shape of its arguments."""
        compiled, values = self._function((expr,), False), self.values

        def call(*args):
            with np.errstate(all="ignore"):
                out = compiled(*args, *values)
            return np.broadcast_to(np.asarray(out, dtype=float), np.broadcast(*args).shape if args else ())

        return call

    def many(self, exprs: list):
        """All of *exprs* compiled in one function of the banded inputs (scalars in, a list out)."""
        compiled, values = self._function(tuple(exprs), True), self.values

        def call(*args):
            with np.errstate(all="ignore"):
                return compiled(*args, *values)

        return call


def _worst_point(frame: _Frame, margin: sp.Expr, lows: np.ndarray, highs: np.ndarray):
    """``(point, lowest margin, inside, corners visited)`` over the box ``lows``..``highs`` (SI)."""
    from scipy.optimize import minimize

    n = len(frame.symbols)
    f = frame.one(margin)
    # the margin and its gradient in one compiled function: one call a step of the search
    with_gradient = frame.many([margin, *frame.derivatives(margin)])
    span = highs - lows

    def values(points: np.ndarray) -> np.ndarray:
        out = f(*points.T)
        return np.where(np.isfinite(out), out, np.inf)

    if n <= _CORNERS_AT_MOST:
        corner_points = np.array(list(itertools.product(*zip(lows, highs, strict=True))), dtype=float)
    else:
        rng = np.random.default_rng(0)
        corner_points = np.where(rng.random((4096, n)) < 0.5, lows, highs)
    corner_margins = values(corner_points)
    best_corner = int(np.argmin(corner_margins))
    if n <= 3:
        axes = [np.linspace(lo, hi, _GRID_POINTS) for lo, hi in zip(lows, highs, strict=True)]
        grid = np.array(list(itertools.product(*axes)), dtype=float)
    else:
        grid = lows + np.random.default_rng(0).random((_SCATTER_POINTS, n)) * span
    grid_margins = values(grid)

    def objective(u: np.ndarray):
        x = lows + u * span
        out = with_gradient(*x)
        value = float(out[0])
        gradient = np.array([float(g) for g in out[1:]], dtype=float) * span
        if not math.isfinite(value) or not np.all(np.isfinite(gradient)):
            return 1e300, np.zeros(n)
        return value, gradient

    starts = [grid[int(np.argmin(grid_margins))], corner_points[best_corner], (lows + highs) / 2]
    best_x, best = corner_points[best_corner], float(corner_margins[best_corner])
    for start in starts:
        found = minimize(
            objective, (start - lows) / span, jac=True, method="L-BFGS-B", bounds=[(0.0, 1.0)] * n
        )
        x = lows + np.clip(found.x, 0.0, 1.0) * span
        value = float(values(x[None, :])[0])
        if value < best - 1e-9 * max(1.0, abs(best)):
            best_x, best = x, value
    at_bound = np.isclose(best_x, lows, rtol=1e-9, atol=0) | np.isclose(best_x, highs, rtol=1e-9, atol=0)
    inside = not bool(np.all(at_bound))
    return best_x, best, inside, len(corner_points)


def _sensitivities(names, frame, value_c, value_f, nominal, lows, highs) -> tuple[Sensitivity, ...]:
    at_nominal = float(value_f(*nominal))
    slopes = [float(d) for d in frame.many(list(frame.derivatives(value_c)))(*nominal)]  # one compile for all
    rows = []
    for i, name in enumerate(names):
        slope = slopes[i]
        elasticity = (
            slope * nominal[i] / at_nominal * 1.0 if at_nominal != 0 and math.isfinite(slope) else None
        )
        low, high = list(nominal), list(nominal)
        low[i], high[i] = lows[i], highs[i]
        rows.append(Sensitivity(name, elasticity, float(value_f(*low)), float(value_f(*high))))
    return tuple(rows)


def _pass_fraction(frame, names, value_c, limit_c, relation, samples) -> float:
    columns = [samples[n] for n in names]
    v = frame.one(value_c)(*columns)
    lim = frame.one(limit_c)(*columns)
    close = np.isclose(v, lim, rtol=1e-12, atol=0.0)
    if relation in ("<=", "<"):
        passed = v < lim
    else:
        passed = v > lim
    passed = np.where(close, relation in ("<=", ">="), passed) & np.isfinite(v)
    return float(np.mean(passed))
