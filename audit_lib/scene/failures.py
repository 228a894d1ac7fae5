"""Emitter failures: named or worst-case emitters out, and Monte Carlo over random failures.

Maps are linear in the sources, so the map of a surface with any set of emitters out is
``alive @ C`` where ``C`` holds one row per failure unit (an LED emitter; a whole tube or
point lamp is one unit). A Monte Carlo study of many trials is therefore one matrix
product per batch of trials, not one map computation per trial.

Failure probabilities may rise with temperature by the Arrhenius law
AF = exp(Ea / k_B (1/T_ref - 1/T)) (Arrhenius 1889; its use for semiconductor wear-out,
e.g. JEDEC JEP122, is common practice; activation energies of LED failure mechanisms
(about 0.4-0.9 eV) are from memory and must be given by the user). With a constant
failure rate, a unit that fails with probability p_ref over a period at T_ref fails with
p = 1 - (1 - p_ref)^AF at T.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from audit_lib.errors import InputError
from audit_lib.scene.maps import (
    Enclosure,
    SurfaceMap,
    SurfaceStatistics,
    compute_maps,
    evaluate_points,
    surface_grid,
    surface_statistics,
)

#: Boltzmann constant [eV K-1] (CODATA 2018, exact since the 2019 SI).
BOLTZMANN_EV_K = 8.617333262e-5


@dataclass(frozen=True)
class EmitterContributions:
    """One quantity's map split into failure units.

    Parameters
    ----------
    surface : str
        Surface name.
    quantity : str
        The quantity (e.g. ``"uvi"``).
    units : tuple of str
        Failure unit labels, one per row.
    matrix : numpy.ndarray
        (n_units, n_points) contribution of each unit, quantity's unit.
    x_m, y_m : numpy.ndarray
        Grid cell centres [m]; points are row-major over (y, x).
    """

    surface: str
    quantity: str
    units: tuple
    matrix: np.ndarray
    x_m: np.ndarray
    y_m: np.ndarray

    @property
    def total(self) -> np.ndarray:
        """The map with everything working, flat (n_points,)."""
        return self.matrix.sum(axis=0)


def emitter_contributions(
    enclosure: Enclosure, surface: str, quantity: str = "uvi", spacing_m=0.01, shape=None
) -> EmitterContributions:
    """Per-unit contributions to one quantity over a surface.

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    surface : str
        Surface name.
    quantity : str, optional
        Key of ``metrics.weighted_quantities``.
    spacing_m : float, optional
        Grid cell size [m].
    shape : tuple of int, optional
        (ny, nx) grid instead of ``spacing_m``.

    Returns
    -------
    EmitterContributions
    """
    s = enclosure.surface(surface)
    x, y, pts = surface_grid(s, spacing_m, shape)
    ev = evaluate_points(enclosure, pts, (quantity,), per_source=(quantity,))
    rows = ev.contributions[quantity]
    units = tuple(dict.fromkeys(ev.labels))
    if len(units) == len(ev.labels):  # one source per unit (LED arrays): rows as they are
        matrix = rows
    else:
        labels = np.array(ev.labels, dtype=object)
        matrix = np.vstack([rows[labels == u].sum(axis=0) for u in units])
    return EmitterContributions(s.name, quantity, units, matrix, x, y)


def coverage(values: np.ndarray, uvi_range) -> np.ndarray:
    """Share of points with lo <= value <= hi along the last axis [-].

    Parameters
    ----------
    values : numpy.ndarray
        (..., n_points) values.
    uvi_range : tuple of float
        (lo, hi); hi may be ``None`` or inf for "at least lo".

    Returns
    -------
    numpy.ndarray
        Shares [-], shape of the leading axes.
    """
    lo, hi = uvi_range
    inside = values >= lo
    if hi is not None and np.isfinite(hi):
        inside &= values <= hi
    return inside.mean(axis=-1)


def worst_units(contrib: EmitterContributions, k: int, uvi_range=None) -> tuple[str, ...]:
    """The k failure units whose loss hurts most.

    Without ``uvi_range``: the k units with the largest summed contribution (exact:
    the surface mean is linear in the units). With ``uvi_range``: greedy removal of the
    unit that lowers the in-range share most at each step (an approximation; exact
    search over all k-subsets grows combinatorially).

    Parameters
    ----------
    contrib : EmitterContributions
        Contributions over the surface.
    k : int
        Number of units out.
    uvi_range : tuple of float, optional
        (lo, hi) target range.

    Returns
    -------
    tuple of str
        Unit labels, worst first.
    """
    n = len(contrib.units)
    if not 0 <= k <= n:
        raise InputError(f"k must lie between 0 and {n} (the number of units), got {k}", field="k")
    if uvi_range is None:
        order = np.argsort(-contrib.matrix.sum(axis=1), kind="stable")
        return tuple(contrib.units[i] for i in order[:k])
    total = contrib.total.copy()
    left = list(range(n))
    chosen: list[int] = []
    for _ in range(k):
        trial = total[None, :] - contrib.matrix[left]
        best = left[int(np.argmin(coverage(trial, uvi_range)))]
        chosen.append(best)
        left.remove(best)
        total -= contrib.matrix[best]
    return tuple(contrib.units[i] for i in chosen)


@dataclass(frozen=True)
class FailureScenario:
    """Maps and statistics with some failure units out.

    Parameters
    ----------
    name : str
        ``"all working"``, ``"named"`` or ``"worst <k>"``.
    failed : tuple of str
        Units out.
    map : SurfaceMap
        The surface map in this scenario.
    statistics : SurfaceStatistics
        Its statistics.
    """

    name: str
    failed: tuple
    map: SurfaceMap
    statistics: SurfaceStatistics


def failure_scenarios(
    enclosure: Enclosure,
    surface: str,
    out=(),
    worst: int | None = None,
    uvi_range=None,
    refuge_below_uvi=None,
    quantities=None,
    spacing_m=0.01,
    shape=None,
) -> list[FailureScenario]:
    """Recompute a surface's maps with emitters out.

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    surface : str
        Surface name (usually the basking surface).
    out : sequence of str, optional
        Units that are out (labels ``"<lamp id>/<emitter>"`` or a lamp id).
    worst : int, optional
        Also compute the scenario with the worst ``worst`` units out
        (see :func:`worst_units`; by in-range share if ``uvi_range`` is given).
    uvi_range : tuple of float, optional
        Target UVI range [-].
    refuge_below_uvi : float, optional
        Refuge threshold [-].
    quantities : sequence of str, optional
        Map quantities (default ``metrics.MAP_QUANTITIES``).
    spacing_m : float, optional
        Grid cell size [m].
    shape : tuple of int, optional
        (ny, nx) grid instead of ``spacing_m``.

    Returns
    -------
    list of FailureScenario
        "all working" first, then "named" (if ``out``), then "worst k" (if ``worst``).
    """
    cases = [("all working", ())]
    if out:
        cases.append(("named", tuple(out)))
    if worst:
        contrib = emitter_contributions(enclosure, surface, "uvi", spacing_m, shape)
        cases.append((f"worst {worst}", worst_units(contrib, worst, uvi_range)))
    result = []
    for name, failed in cases:
        m = compute_maps(enclosure, quantities, spacing_m, [surface], shape, failed)[surface]
        stats = surface_statistics(m, uvi_range, refuge_below_uvi)
        result.append(FailureScenario(name, tuple(failed), m, stats))
    return result


def arrhenius_factor(
    temperature_c, reference_temperature_c: float, activation_energy_ev: float
) -> np.ndarray:
    """Acceleration factor AF = exp(Ea / k_B (1/T_ref - 1/T)) [-].

    Parameters
    ----------
    temperature_c : array_like
        Operating temperature [degC].
    reference_temperature_c : float
        Temperature at which the reference failure probability holds [degC].
    activation_energy_ev : float
        Activation energy Ea [eV].

    Returns
    -------
    numpy.ndarray
        AF [-]; 1 at the reference temperature.
    """
    t = np.asarray(temperature_c, float) + 273.15
    t_ref = float(reference_temperature_c) + 273.15
    if np.any(t <= 0) or t_ref <= 0 or activation_energy_ev < 0:
        raise InputError(
            "temperatures must be above absolute zero and Ea >= 0", field="activation_energy_ev"
        )
    return np.exp(activation_energy_ev / BOLTZMANN_EV_K * (1.0 / t_ref - 1.0 / t))


def failure_probability(
    reference_probability,
    temperature_c=None,
    reference_temperature_c=None,
    activation_energy_ev=None,
) -> np.ndarray:
    """Failure probability over the period, optionally at another temperature [-].

    p = 1 - (1 - p_ref)^AF with AF from :func:`arrhenius_factor` (constant failure
    rate); without temperatures p = p_ref.

    Parameters
    ----------
    reference_probability : array_like
        Probability that a unit fails over the period at the reference temperature [-].
    temperature_c : array_like, optional
        Operating temperature per unit [degC].
    reference_temperature_c : float, optional
        Reference temperature [degC].
    activation_energy_ev : float, optional
        Activation energy [eV].

    Returns
    -------
    numpy.ndarray
        Probabilities [-].
    """
    p = np.asarray(reference_probability, float)
    if np.any((p < 0) | (p > 1)):
        raise InputError("failure probabilities must lie between 0 and 1", field="probability")
    given = [temperature_c, reference_temperature_c, activation_energy_ev]
    if all(v is None for v in given):
        return p
    if any(v is None for v in given):
        raise InputError(
            "the Arrhenius factor needs temperature_c, reference_temperature_c and "
            "activation_energy_ev together",
            field="activation_energy_ev",
        )
    af = arrhenius_factor(temperature_c, reference_temperature_c, activation_energy_ev)
    return 1.0 - (1.0 - p) ** af


@dataclass(frozen=True)
class MonteCarloResult:
    """Distribution of basking coverage under random failures.

    Parameters
    ----------
    surface : str
        Surface name.
    uvi_range : tuple of float
        Range defining coverage [-].
    units : tuple of str
        Failure units.
    probabilities : numpy.ndarray
        Failure probability of each unit [-].
    coverage : numpy.ndarray
        (n_trials,) share of the surface in range per trial [-].
    n_failed : numpy.ndarray
        (n_trials,) number of units out per trial.
    baseline_coverage : float
        Coverage with everything working [-].
    coverage_threshold : float
        Threshold for ``probability_below`` [-].
    probability_below : float
        Share of trials with coverage below the threshold [-].
    seed : int or None
        Random seed used.
    """

    surface: str
    uvi_range: tuple
    units: tuple
    probabilities: np.ndarray
    coverage: np.ndarray
    n_failed: np.ndarray
    baseline_coverage: float
    coverage_threshold: float
    probability_below: float
    seed: int | None

    def quantiles(self, q=(0.05, 0.5, 0.95)) -> dict:
        """Coverage quantiles [-] keyed by the quantile."""
        return {float(v): float(np.quantile(self.coverage, v)) for v in q}


def monte_carlo_coverage(
    contrib: EmitterContributions,
    probabilities,
    uvi_range,
    n_trials: int = 10_000,
    coverage_threshold: float = 0.5,
    seed: int | None = None,
    batch_size: int = 256,
) -> MonteCarloResult:
    """Monte Carlo of random unit failures on precomputed contributions.

    Each trial draws every unit out independently with its probability; the surface
    map is ``total - out @ C`` (float32), evaluated as the sum of the rows of the units
    that are out, in batches of trials with the same number k of units out. Points that
    stay inside (or outside) the range even after losing their k largest contributions
    are decided without it; trials with nothing out need no work at all. Exact: the
    pruning only skips points whose answer cannot change.

    Parameters
    ----------
    contrib : EmitterContributions
        Per-unit UVI contributions (from :func:`emitter_contributions`).
    probabilities : float or array_like
        Failure probability per unit, or one for all [-].
    uvi_range : tuple of float
        (lo, hi) range defining coverage [-]; hi None = "at least lo".
    n_trials : int, optional
        Number of trials.
    coverage_threshold : float, optional
        Coverage below which a trial counts as failing the target [-].
    seed : int, optional
        Seed for :func:`numpy.random.default_rng`.
    batch_size : int, optional
        Trials per matrix product.

    Returns
    -------
    MonteCarloResult
    """
    n = len(contrib.units)
    p = np.broadcast_to(np.asarray(probabilities, float), (n,)).copy()
    if np.any((p < 0) | (p > 1)):
        raise InputError("failure probabilities must lie between 0 and 1", field="probability")
    if n_trials < 1:
        raise InputError("n_trials must be at least 1", field="n_trials")
    rng = np.random.default_rng(seed)
    lo, hi = uvi_range
    hi = np.inf if hi is None else float(hi)
    total = contrib.total
    # losses are bounded: with at most k units out, a point loses at most the sum of
    # its k largest contributions, so points far inside or outside the range are decided
    # without the matrix product (exact, not an approximation).
    worst_loss = np.vstack(
        [np.zeros(total.size), np.cumsum(-np.sort(-contrib.matrix, axis=0), axis=0)]
    )
    c32 = np.ascontiguousarray(contrib.matrix, dtype=np.float32)
    total32 = total.astype(np.float32)
    out = rng.random((n_trials, n)) < p
    n_failed = out.sum(axis=1)
    cov = np.empty(n_trials)
    n_points = total.size
    for k in np.unique(n_failed):  # same k, same bound: group the trials by it
        trials = np.nonzero(n_failed == k)[0]
        loss = worst_loss[k]
        always = (total <= hi) & (total - loss >= lo)
        never = (total < lo) | (total - loss > hi)
        open_ = ~(always | never)
        n_always = np.count_nonzero(always)
        if not open_.any():
            cov[trials] = n_always / n_points
            continue
        c_open, t_open = c32[:, open_], total32[open_]
        # every trial of this group has exactly k units out: subtract k gathered rows
        # (or add the n - k working ones), no dense product over all units
        use_out = k <= n - k
        for start in range(0, trials.size, batch_size):
            ids = trials[start : start + batch_size]
            chosen = out[ids] if use_out else ~out[ids]
            picked = np.nonzero(chosen)[1].reshape(ids.size, -1)
            values = np.broadcast_to(t_open, (ids.size, t_open.size)).copy()
            if not use_out:
                values[:] = 0.0
            for j in range(picked.shape[1]):
                rows = c_open[picked[:, j]]
                if use_out:
                    values -= rows
                else:
                    values += rows
            inside = values >= lo
            if np.isfinite(hi):
                inside &= values <= hi
            cov[ids] = (n_always + inside.sum(axis=1)) / n_points
    base = float(coverage(contrib.total, uvi_range))
    return MonteCarloResult(
        contrib.surface,
        tuple(uvi_range),
        contrib.units,
        p,
        cov,
        n_failed,
        base,
        float(coverage_threshold),
        float(np.mean(cov < coverage_threshold)),
        seed,
    )


def monte_carlo_failures(
    enclosure: Enclosure,
    surface: str,
    uvi_range,
    failure_probability_per_unit,
    n_trials: int = 10_000,
    coverage_threshold: float = 0.5,
    seed: int | None = None,
    temperature_c=None,
    reference_temperature_c=None,
    activation_energy_ev=None,
    spacing_m: float = 0.01,
    shape=None,
) -> MonteCarloResult:
    """Distribution of basking coverage when emitters fail at random.

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    surface : str
        Surface name (the basking surface).
    uvi_range : tuple of float
        (lo, hi) UVI range that counts as covered [-].
    failure_probability_per_unit : float, array_like or dict
        Probability that a unit fails over the period at the reference temperature
        [-]; a dict maps unit labels to probabilities (others 0).
    n_trials : int, optional
        Number of trials.
    coverage_threshold : float, optional
        Coverage below which the basking area counts as lost [-].
    seed : int, optional
        Random seed.
    temperature_c, reference_temperature_c, activation_energy_ev : optional
        Arrhenius parameters [degC], [degC], [eV] (see :func:`failure_probability`);
        ``temperature_c`` may be a dict per unit.
    spacing_m : float, optional
        Grid cell size [m].
    shape : tuple of int, optional
        (ny, nx) grid instead of ``spacing_m``.

    Returns
    -------
    MonteCarloResult
    """
    contrib = emitter_contributions(enclosure, surface, "uvi", spacing_m, shape)
    p_ref = _per_unit(failure_probability_per_unit, contrib.units, "failure probability", 0.0)
    temps = temperature_c
    if isinstance(temperature_c, dict):
        temps = _per_unit(temperature_c, contrib.units, "temperature_c", reference_temperature_c)
    p = failure_probability(p_ref, temps, reference_temperature_c, activation_energy_ev)
    return monte_carlo_coverage(contrib, p, uvi_range, n_trials, coverage_threshold, seed)


def _per_unit(value, units, what: str, default) -> np.ndarray:
    if isinstance(value, dict):
        unknown = set(value) - set(units)
        if unknown:
            raise InputError(
                f"{what} given for unknown unit(s): " + ", ".join(sorted(unknown)),
                field=what,
                hint="units: " + ", ".join(units[:8]) + (" ..." if len(units) > 8 else ""),
            )
        if default is None:
            raise InputError(f"{what} needs a value for every unit", field=what)
        return np.array([float(value.get(u, default)) for u in units])
    return np.broadcast_to(np.asarray(value, float), (len(units),)).copy()
