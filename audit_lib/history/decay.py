"""Lamp decay fits and replacement forecasts.

Per lamp, the output measured at a fixed place (usually the basking-area UV Index) is
fitted against lamp hours with two models, by weighted least squares
(:func:`scipy.optimize.curve_fit`):

* exponential: ``y = y0 * exp(-k * h)``  (k [h-1])
* linear:      ``y = y0 - b * h``        (b [unit h-1])

Both have two parameters, so Akaike's criterion for least squares,
``AIC = n ln(RSS / n) + 2 p`` (Burnham & Anderson 2002, *Model Selection and Multimodel
Inference*, 2nd ed., section 2.2), ranks them the same way as the residual sum of
squares; the AIC difference is reported so a reader can judge how clear the choice is
(differences under about 2 mean "no real preference"; same source, section 2.6, from
memory).

The forecast is the day the fitted output falls below the caller's threshold (the lower
end of the zone's target range) given the lamp's daily hours. Its uncertainty band comes
from drawing parameters from the fit's covariance (seeded, so the result is reproducible)
and taking the 16th and 84th percentiles of the crossing hours (a 68 % band, "one
sigma"). When the covariance rests on the scatter about the fit (no reading uncertainties
given), the draws follow a Student t distribution with the fit's degrees of freedom
instead of a normal one, so three or four audits give an honestly wide band.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from audit_lib.errors import AuditWarning, InputError
from audit_lib.history.store import find_install, lamp_hours

#: Fewest distinct lamp-hour values a fit needs (two parameters plus one degree of freedom).
MIN_POINTS = 3

#: States a lamp can be in, in the order a schedule sorts them.
STATES = ("below target", "due soon", "ok", "no decay", "not enough data", "no target")

#: A forecast this close to today (or closer) counts as "due soon" [days].
DUE_SOON_DAYS = 90


class DecayFitWarning(AuditWarning):
    """A decay fit did not converge or gave no usable uncertainty."""


def exponential_model(hours, y0, k):
    """Exponential decay ``y0 * exp(-k h)``; ``hours`` [h], ``k`` [h-1]."""
    return y0 * np.exp(-k * np.asarray(hours, dtype=float))


def linear_model(hours, y0, b):
    """Linear decay ``y0 - b h``; ``hours`` [h], ``b`` [unit h-1]."""
    return y0 - b * np.asarray(hours, dtype=float)


MODELS = {"exponential": exponential_model, "linear": linear_model}


@dataclass(frozen=True)
class ModelFit:
    """One fitted decay model.

    Attributes
    ----------
    model : str
        ``"exponential"`` or ``"linear"``.
    params : tuple of float
        ``(y0, k)`` [unit, h-1] or ``(y0, b)`` [unit, unit h-1].
    stderr : tuple of float
        One-sigma standard errors of the parameters (NaN if not estimable).
    covariance : numpy.ndarray
        2 x 2 parameter covariance.
    rss : float
        Residual sum of squares [unit2].
    aic : float
        Akaike information criterion for least squares [-].
    dof : int
        Degrees of freedom left (points minus parameters) [-].
    absolute_sigma : bool
        True if the covariance rests on given reading uncertainties, False if on the
        scatter about the fit.
    """

    model: str
    params: tuple[float, float]
    stderr: tuple[float, float]
    covariance: np.ndarray = field(repr=False)
    rss: float
    aic: float
    dof: int = 0
    absolute_sigma: bool = False

    def predict(self, hours) -> np.ndarray:
        """Fitted output at ``hours`` [h]."""
        return MODELS[self.model](hours, *self.params)

    @property
    def loss_per_1000h(self) -> float:
        """Fraction of the initial output lost per 1000 lamp hours [-]."""
        y0, rate = self.params
        if self.model == "exponential":
            return 1.0 - math.exp(-1000.0 * rate)
        return 1000.0 * rate / y0 if y0 else math.nan

    def hours_to_reach(self, threshold: float) -> float:
        """Lamp hours at which the fitted output equals ``threshold`` [h].

        0 if the start value is already at or below it; ``inf`` if the fit never reaches it.
        """
        return _crossing_hours(self.model, np.array([self.params]), threshold)[0]


@dataclass(frozen=True)
class DecayFit:
    """Both decay models fitted to one lamp's readings.

    Attributes
    ----------
    hours : numpy.ndarray
        Lamp hours of the points [h].
    values : numpy.ndarray
        Output at those hours (e.g. UV Index) [unit].
    state : str
        ``"fitted"``, ``"no decay"`` (the output does not fall) or ``"not enough data"``.
    fits : dict
        ``{"exponential": ModelFit, "linear": ModelFit}`` (empty if not enough data).
    best : str or None
        Name of the model with the lower AIC.
    delta_aic : float
        AIC of the other model minus the best one's [-].
    """

    hours: np.ndarray
    values: np.ndarray
    state: str
    fits: dict = field(default_factory=dict)
    best: str | None = None
    delta_aic: float = math.nan

    @property
    def best_fit(self) -> ModelFit | None:
        """The better-fitting model, or None."""
        return self.fits.get(self.best) if self.best else None


def _crossing_hours(model: str, params: np.ndarray, threshold: float) -> np.ndarray:
    """Crossing hours for each parameter row ``(y0, rate)`` [h]."""
    y0, rate = params[:, 0], params[:, 1]
    out = np.full(len(params), np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        if model == "exponential":
            hours = np.log(y0 / threshold) / rate
        else:
            hours = (y0 - threshold) / rate
    falling = rate > 0
    out[falling] = hours[falling]
    out[y0 <= threshold] = 0.0
    return np.maximum(out, 0.0)


def display_step(values) -> float:
    """Smallest decimal step the values were written with (0.1 for 2.3, 4.1, 3.0) [unit].

    Meters show a fixed number of decimals; readings are rounded to that step.
    Returns 1e-6 for values written with more than six decimals.
    """
    values = np.asarray(values, dtype=float)
    for k in range(7):
        scaled = values * 10.0**k
        if np.all(np.abs(scaled - np.round(scaled)) < 1e-6 * max(1.0, 10.0**k)):
            return 10.0**-k
    return 1e-6


def _jacobian(model: str, hours: np.ndarray, params) -> np.ndarray:
    y0, rate = params
    if model == "exponential":
        e = np.exp(-rate * hours)
        return np.column_stack([e, -y0 * hours * e])
    return np.column_stack([np.ones_like(hours), -hours])


def _fit_one(model: str, hours: np.ndarray, values: np.ndarray, sigma,
             min_variance: float = 0.0) -> ModelFit:
    from scipy.optimize import curve_fit

    y0 = float(values[np.argmin(hours)])
    span = float(np.ptp(hours)) or 1.0
    slope = -float(np.polyfit(hours, values, 1)[0])
    if model == "exponential":
        p0 = (y0, max(slope / max(y0, 1e-12), 1e-3 / span))
    else:
        p0 = (y0, slope)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # OptimizeWarning for an infinite covariance
        try:
            params, cov = curve_fit(MODELS[model], hours, values, p0=p0, sigma=sigma,
                                    absolute_sigma=sigma is not None, maxfev=10000)
        except RuntimeError:  # no convergence
            params, cov = None, None
    if params is None:
        warnings.warn(f"{model} decay fit did not converge", DecayFitWarning, stacklevel=3)
        nan2 = (math.nan, math.nan)
        return ModelFit(model, nan2, nan2, np.full((2, 2), np.nan), math.inf, math.inf)
    resid = values - MODELS[model](hours, *params)
    rss = float(np.sum(resid**2))
    n = len(values)
    aic = n * math.log(max(rss, 1e-300) / n) + 2 * len(params)
    dof = n - len(params)
    if sigma is None and dof > 0 and rss / dof < min_variance:
        # scatter smaller than the rounding of the readings: use the rounding variance
        jac = _jacobian(model, hours, params)
        with np.errstate(all="ignore"):
            cov = np.linalg.pinv(jac.T @ jac) * min_variance
    stderr = tuple(float(s) for s in np.sqrt(np.clip(np.diag(cov), 0, None)))
    if not np.all(np.isfinite(cov)):
        warnings.warn(f"{model} decay fit gave no parameter uncertainty", DecayFitWarning,
                      stacklevel=3)
    return ModelFit(model, tuple(float(p) for p in params), stderr, cov, rss, aic,
                    dof, sigma is not None)


def fit_decay(hours, values, *, sigma=None) -> DecayFit:
    """Fit exponential and linear decay of output against lamp hours.

    Parameters
    ----------
    hours : array_like
        Lamp hours of each reading [h].
    values : array_like
        Output at the same place at each of those hours (e.g. basking UV Index) [unit].
    sigma : array_like, optional
        One-sigma uncertainty of each value (meter uncertainty) [unit]; if given it is
        used as absolute, otherwise the scatter about the fit sets the uncertainty, but
        never below the rounding of the readings: variance q²/12 for values written to a
        step q (:func:`display_step`; rectangular distribution of a digital indication's
        resolution, JCGM 100:2008 GUM F.2.2.1, from memory). Three readings that happen to
        lie on a line therefore still get an uncertainty.

    Returns
    -------
    DecayFit
        Both fits, the better one by AIC, and a state: ``"not enough data"`` with fewer
        than :data:`MIN_POINTS` distinct hours, ``"no decay"`` if the linear slope is not
        positive (output steady or rising), else ``"fitted"``.
    """
    hours = np.asarray(hours, dtype=float)
    values = np.asarray(values, dtype=float)
    if hours.shape != values.shape or hours.ndim != 1:
        raise InputError("hours and values must be 1-D arrays of the same length",
                         field="hours")
    ok = np.isfinite(hours) & np.isfinite(values)
    hours, values = hours[ok], values[ok]
    if sigma is not None:
        sigma = np.asarray(sigma, dtype=float)[ok]
    order = np.argsort(hours, kind="stable")
    hours, values = hours[order], values[order]
    if sigma is not None:
        sigma = sigma[order]
    if len(np.unique(hours)) < MIN_POINTS:
        return DecayFit(hours, values, "not enough data")
    if np.any(values < 0):
        raise InputError("decay fit needs non-negative output values", field="values")
    min_variance = display_step(values) ** 2 / 12.0  # rounding to the display step
    fits = {name: _fit_one(name, hours, values, sigma, min_variance) for name in MODELS}
    if fits["linear"].params[1] <= 0:
        return DecayFit(hours, values, "no decay", fits)
    if np.all(values > 0) and math.isfinite(fits["exponential"].aic):
        best = min(fits, key=lambda name: fits[name].aic)
    else:
        # log of a zero output is undefined for the exponential model: keep linear.
        best = "linear"
    other = "linear" if best == "exponential" else "exponential"
    return DecayFit(hours, values, "fitted", fits, best, fits[other].aic - fits[best].aic)


@dataclass(frozen=True)
class Forecast:
    """When a lamp's fitted output falls below a threshold.

    Attributes
    ----------
    threshold : float
        Output below which the lamp should be replaced [unit].
    hours : float
        Lamp hours at the crossing (best estimate) [h]; ``inf`` if never, NaN if unknown.
    hours_low, hours_high : float
        16th and 84th percentiles of the crossing hours [h].
    date, date_early, date_late : pandas.Timestamp or NaT
        The same as days, from the install day and daily hours.
    """

    threshold: float
    hours: float
    hours_low: float
    hours_high: float
    date: pd.Timestamp
    date_early: pd.Timestamp
    date_late: pd.Timestamp


def _hours_to_date(installed_on, daily_hours: float, hours: float) -> pd.Timestamp:
    if not math.isfinite(hours) or daily_hours <= 0:
        return pd.NaT
    days = math.ceil(hours / daily_hours)
    start = pd.Timestamp(installed_on).normalize()
    if days > (pd.Timestamp.max - start).days:  # no crossing before the calendar ends
        return pd.NaT
    return start + pd.Timedelta(days=days)


def forecast_crossing(fit: DecayFit, threshold: float, *, installed_on, daily_hours: float,
                      model: str | None = None, draws: int = 4000, seed: int = 0) -> Forecast:
    """Forecast the day the fitted output falls below ``threshold``.

    Parameters
    ----------
    fit : DecayFit
        Result of :func:`fit_decay` (state ``"fitted"``).
    threshold : float
        Lowest acceptable output, e.g. the lower end of the zone's basking UV Index range
        supplied by the caller [unit].
    installed_on : date-like
        The lamp's install day.
    daily_hours : float
        Hours the lamp is on per day [h].
    model : str, optional
        Model to use; defaults to ``fit.best``.
    draws : int
        Parameter draws for the band [-].
    seed : int
        Random seed for the draws [-].

    Returns
    -------
    Forecast
        Best estimate and 68 % band, in lamp hours and as dates.
    """
    if threshold <= 0:
        raise InputError(f"threshold must be positive, got {threshold!r}", field="threshold")
    if fit.state != "fitted":
        nan = math.nan
        return Forecast(threshold, nan, nan, nan, pd.NaT, pd.NaT, pd.NaT)
    mf: ModelFit = fit.fits[model or fit.best]
    best = float(mf.hours_to_reach(threshold))
    cov = mf.covariance
    if np.all(np.isfinite(cov)):
        rng = np.random.default_rng(seed)
        sample = rng.multivariate_normal(np.zeros(2), cov, size=draws, check_valid="ignore")
        if not mf.absolute_sigma and mf.dof > 0:
            # variance estimated from the scatter: multivariate Student t with the fit's
            # degrees of freedom (GUM, JCGM 100:2008 Annex G, from memory)
            sample *= np.sqrt(mf.dof / rng.chisquare(mf.dof, size=draws))[:, None]
        sample += np.asarray(mf.params)
        crossing = _crossing_hours(mf.model, sample, threshold)
        low, high = (float(v) for v in np.percentile(crossing, [16, 84]))
    else:
        low = high = math.nan
    dates = [_hours_to_date(installed_on, daily_hours, h) for h in (best, low, high)]
    return Forecast(threshold, best, low, high, *dates)


def select_decay_points(readings: pd.DataFrame, installs: pd.DataFrame, enclosure: str,
                        lamp: str, *, quantity: str = "uvi", position: str | None = None,
                        today=None) -> pd.DataFrame:
    """Pick one lamp's readings since its current install, one point per audit day.

    Parameters
    ----------
    readings : pandas.DataFrame
        Readings (contract columns; e.g. :func:`audit_lib.history.store.read_all_readings`).
    installs : pandas.DataFrame
        Lamp installs (:func:`audit_lib.history.store.read_lamp_installs`).
    enclosure, lamp : str
        Identifiers.
    quantity : str
        Quantity fitted, ``"uvi"`` by default.
    position : str, optional
        Measuring position to use; by default ``"basking"`` if the lamp has readings
        there, else the position with most readings. Mixing positions would mix
        distances, so only one is used.
    today : date-like, optional
        Day of the schedule (default: today).

    Returns
    -------
    pandas.DataFrame
        Columns ``date``, ``hours`` [h], ``value`` (mean ``value_si`` that day),
        ``position``; empty if the lamp has no install on record.
    """
    today = pd.Timestamp.today().normalize() if today is None else pd.Timestamp(today)
    columns = ["date", "hours", "value", "position"]
    install = find_install(installs, enclosure, lamp, today)
    if install is None or readings.empty:
        return pd.DataFrame(columns=columns)
    installed_on = pd.Timestamp(install["installed_on"])
    # plain numpy on the columns: pandas string comparisons cost ~1 ms each per lamp
    dates = pd.to_datetime(readings["date"]).to_numpy("datetime64[ns]")
    keep = ((readings["enclosure"].to_numpy(object) == enclosure)
            & (readings["lamp"].to_numpy(object) == lamp)
            & (readings["quantity"].to_numpy(object) == quantity)
            & (dates >= installed_on.to_datetime64()))
    positions = np.array(["" if p is None or p != p else str(p)
                          for p in readings["position"].to_numpy(object)[keep]], dtype=object)
    dates, values = dates[keep], readings["value_si"].to_numpy(float)[keep]
    if not positions.size:
        return pd.DataFrame(columns=columns)
    if position is None:
        names, counts = np.unique(positions.astype(str), return_counts=True)
        position = "basking" if "basking" in names else str(names[np.argmax(counts)])
    at = positions == position
    days, index = np.unique(dates[at], return_inverse=True)
    means = np.bincount(index, weights=values[at]) / np.bincount(index)
    points = pd.DataFrame({"date": pd.to_datetime(days), "value": means})
    points["hours"] = [lamp_hours(installed_on, install["daily_hours"], d)
                       for d in points["date"]]
    points["position"] = position
    return points[columns]


def _threshold_for(thresholds, enclosure: str, lamp: str) -> float:
    if thresholds is None:
        return math.nan
    if isinstance(thresholds, (int, float)):
        return float(thresholds)
    for key in ((enclosure, lamp), enclosure):
        if key in thresholds:
            return float(thresholds[key])
    return math.nan


@dataclass(frozen=True)
class LampDecay:
    """One lamp's decay analysis: points, fit, forecast and state.

    Attributes
    ----------
    enclosure, lamp : str
        Identifiers.
    installed_on : pandas.Timestamp
        Install day of the lamp in place.
    daily_hours : float
        Hours on per day [h].
    hours_now : float
        Lamp hours on the day of the analysis [h].
    target : float
        Lowest acceptable output (NaN if none was given) [unit].
    points : pandas.DataFrame
        From :func:`select_decay_points`.
    fit : DecayFit
        Both models fitted to the points.
    forecast : Forecast or None
        Crossing of the target (None without a fit or a target).
    state : str
        One of :data:`STATES`.
    """

    enclosure: str
    lamp: str
    installed_on: pd.Timestamp
    daily_hours: float
    hours_now: float
    target: float
    points: pd.DataFrame = field(repr=False)
    fit: DecayFit = field(repr=False)
    forecast: Forecast | None
    state: str


def _target_at_check_position(points: pd.DataFrame, enclosure_readings, target: float,
                              quantity: str) -> float:
    """Move a basking-area target to the scale of a lamp's own check readings.

    When a lamp is checked alone at its own position (several lamps light the basking
    area), its target is ``target × check / basking`` with the check and the enclosure's
    basking reading of the latest audit day, assuming the basking UV Index scales with the
    lamp's output (true when the lamps decay alike; common practice). Unchanged when the
    points are basking readings or no basking reading shares the day.
    """
    if (enclosure_readings is None or not len(points) or not math.isfinite(target)
            or points["position"].iloc[-1] == "basking"):
        return target
    last_day = points["date"].iloc[-1]
    same_day = enclosure_readings[
        (enclosure_readings["quantity"] == quantity)
        & (enclosure_readings["position"].fillna("") == "basking")
        & (pd.to_datetime(enclosure_readings["date"]) == last_day)]
    basking = float(same_day["value_si"].mean()) if len(same_day) else math.nan
    if not (math.isfinite(basking) and basking > 0):
        return target
    return target * float(points["value"].iloc[-1]) / basking


def analyse_lamp_decay(readings: pd.DataFrame, installs: pd.DataFrame, enclosure: str,
                       lamp: str, target: float, *, today=None, quantity: str = "uvi",
                       enclosure_readings: pd.DataFrame | None = None
                       ) -> LampDecay | None:
    """Fit one lamp's decay and forecast when it falls below ``target``.

    Parameters
    ----------
    readings, installs : pandas.DataFrame
        As for :func:`select_decay_points`.
    enclosure, lamp : str
        Identifiers.
    target : float
        Lowest acceptable output, e.g. the lower end of the zone's basking UV Index range;
        NaN for none [unit].
    today : date-like, optional
        Day of the analysis (default: today).
    quantity : str
        Quantity fitted [-].
    enclosure_readings : pandas.DataFrame, optional
        The enclosure's readings with all lamps on; when the lamp's points are checks at
        its own position rather than basking readings, the target is moved to that
        position's scale (:func:`_target_at_check_position`).

    Returns
    -------
    LampDecay or None
        None if no install of the lamp is in place on ``today``. The state is "below
        target" if the fit at today's lamp hours or the latest reading is below target,
        "due soon" if the forecast lies within :data:`DUE_SOON_DAYS`, else "ok"; or the
        fit's "no decay" / "not enough data"; "no target" when no target is known.
    """
    today = pd.Timestamp.today().normalize() if today is None else pd.Timestamp(today)
    install = find_install(installs, enclosure, lamp, today)
    if install is None:
        return None
    installed_on = pd.Timestamp(install["installed_on"])
    daily = float(install["daily_hours"])
    points = select_decay_points(readings, installs, enclosure, lamp, quantity=quantity,
                                 today=today)
    fit = fit_decay(points["hours"], points["value"])
    target = _target_at_check_position(points, enclosure_readings, target, quantity)
    hours_now = lamp_hours(installed_on, daily, today)
    state, forecast = fit.state, None
    if not math.isfinite(target):
        state = "no target"
    elif fit.state == "fitted":
        forecast = forecast_crossing(fit, target, installed_on=installed_on, daily_hours=daily)
        if fit.best_fit.predict(hours_now) < target:
            state = "below target"
        elif pd.notna(forecast.date) and forecast.date <= today + pd.Timedelta(
                days=DUE_SOON_DAYS):
            state = "due soon"
        else:
            state = "ok"
    if len(points) and points["value"].iloc[-1] < target:  # a low reading overrides the fit
        state = "below target"
    return LampDecay(enclosure, lamp, installed_on, daily, hours_now, float(target), points,
                     fit, forecast, state)


def lamp_decays(readings: pd.DataFrame, installs: pd.DataFrame, thresholds, *, today=None,
                quantity: str = "uvi") -> list[tuple]:
    """Decay analyses of every lamp in place on ``today``.

    Parameters
    ----------
    readings, installs, thresholds, today, quantity
        As for :func:`replacement_schedule`.

    Returns
    -------
    list of (install row, LampDecay)
        One pair per lamp in place, in install order.
    """
    today = pd.Timestamp.today().normalize() if today is None else pd.Timestamp(today)
    current = installs[(installs["installed_on"] <= today)
                       & (installs["removed_on"].isna() | (installs["removed_on"] > today))]
    wanted = readings[readings["quantity"] == quantity]
    by_lamp = {key: group for key, group in wanted.groupby(["enclosure", "lamp"], sort=False)}
    all_lamps_on = wanted[wanted["lamp"].fillna("") == ""]
    by_enclosure = {key: group for key, group in all_lamps_on.groupby("enclosure", sort=False)}
    empty = wanted.iloc[:0]
    installs_of = {key: group for key, group in installs.groupby(["enclosure", "lamp"],
                                                                 sort=False)}
    pairs = []
    for install in current.itertuples(index=False):
        enclosure, lamp = install.enclosure, install.lamp
        result = analyse_lamp_decay(by_lamp.get((enclosure, lamp), empty),
                                    installs_of[(enclosure, lamp)], enclosure, lamp,
                                    _threshold_for(thresholds, enclosure, lamp), today=today,
                                    quantity=quantity,
                                    enclosure_readings=by_enclosure.get(enclosure))
        if result is not None:
            pairs.append((install, result))
    return pairs


def replacement_schedule(readings: pd.DataFrame, installs: pd.DataFrame, thresholds, *,
                         today=None, quantity: str = "uvi") -> pd.DataFrame:
    """Site-wide lamp replacement schedule, one row per lamp in place today.

    Parameters
    ----------
    readings : pandas.DataFrame
        Every reading of the site (contract columns).
    installs : pandas.DataFrame
        Lamp installs (:func:`audit_lib.history.store.read_lamp_installs`).
    thresholds : float or dict
        Lowest acceptable output (e.g. lower end of each enclosure's basking UV Index range):
        one number for all, or a dict keyed by ``(enclosure, lamp)`` or ``enclosure`` [unit].
    today : date-like, optional
        Day of the schedule (default: today).
    quantity : str
        Quantity fitted [-].

    Returns
    -------
    pandas.DataFrame
        See :func:`schedule_table`.
    """
    return schedule_table(lamp_decays(readings, installs, thresholds, today=today,
                                      quantity=quantity))


def schedule_table(pairs) -> pd.DataFrame:
    """The replacement schedule of :func:`lamp_decays` results.

    Returns
    -------
    pandas.DataFrame
        Columns ``enclosure``, ``lamp``, ``lamp_model``, ``installed_on``, ``hours_now`` [h],
        ``points``, ``model``, ``loss_per_1000h_pct`` [%], ``last_value``, ``target_min``,
        ``replace_by`` (forecast date), ``replace_by_early``, ``replace_by_late`` (68 %
        band), ``state`` (one of :data:`STATES`), sorted by state then date.
    """
    rows = []
    for install, result in pairs:
        fit, fc, points = result.fit, result.forecast, result.points
        rows.append({
            "enclosure": result.enclosure, "lamp": result.lamp,
            "lamp_model": install.lamp_model,
            "installed_on": install.installed_on, "hours_now": result.hours_now,
            "points": len(points), "model": fit.best or "",
            "loss_per_1000h_pct": 100.0 * fit.best_fit.loss_per_1000h if fit.best else math.nan,
            "last_value": float(points["value"].iloc[-1]) if len(points) else math.nan,
            "target_min": result.target,
            "replace_by": fc.date if fc else pd.NaT,
            "replace_by_early": fc.date_early if fc else pd.NaT,
            "replace_by_late": fc.date_late if fc else pd.NaT,
            "state": result.state,
        })
    columns = ["enclosure", "lamp", "lamp_model", "installed_on", "hours_now", "points",
               "model", "loss_per_1000h_pct", "last_value", "target_min", "replace_by",
               "replace_by_early", "replace_by_late", "state"]
    table = pd.DataFrame(rows, columns=columns)
    if table.empty:
        return table
    table["_rank"] = table["state"].map(STATES.index)
    table = table.sort_values(["_rank", "replace_by", "enclosure", "lamp"], na_position="last")
    return table.drop(columns="_rank").reset_index(drop=True)
