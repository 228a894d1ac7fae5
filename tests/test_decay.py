"""Tests of lamp decay fits and replacement forecasts (audit_lib.history.decay)."""

import math

import numpy as np
import pandas as pd
import pytest

from audit_lib.errors import InputError
from audit_lib.history import decay

HOURS = np.array([0.0, 1000, 2000, 3000, 4500, 6000, 8000])


def test_exponential_fit_recovers_synthetic_parameters():
    """Synthetic data from y = 4.0 exp(-2e-4 h) with 1 % seeded noise: the fit returns the
    generating parameters within 3 standard errors, and the exponential model wins on AIC
    (Burnham & Anderson 2002, section 2.2). Noise-free data must match numpy.polyfit of
    ln y against h (an independent log-linear least-squares estimate)."""
    rng = np.random.default_rng(1)
    clean = 4.0 * np.exp(-2e-4 * HOURS)
    noisy = clean * (1 + 0.01 * rng.standard_normal(HOURS.size))
    fit = decay.fit_decay(HOURS, noisy)
    assert fit.state == "fitted" and fit.best == "exponential" and fit.delta_aic > 2
    (y0, k), (s_y0, s_k) = fit.best_fit.params, fit.best_fit.stderr
    assert abs(y0 - 4.0) < 3 * s_y0 and abs(k - 2e-4) < 3 * s_k
    assert 0 < s_k < 0.1 * k

    exact = decay.fit_decay(HOURS, clean).fits["exponential"]
    slope, intercept = np.polyfit(HOURS, np.log(clean), 1)
    assert exact.params[0] == pytest.approx(math.exp(intercept), rel=1e-6)
    assert exact.params[1] == pytest.approx(-slope, rel=1e-6)
    # 1 - exp(-0.2) of the output is lost per 1000 h
    assert exact.loss_per_1000h == pytest.approx(1 - math.exp(-0.2), rel=1e-6)


def test_linear_fit_recovers_synthetic_parameters():
    """Synthetic y = 3.0 - 1.5e-4 h with seeded noise: the linear model wins and its slope
    agrees with numpy.polyfit (ordinary least squares) to 1e-6."""
    rng = np.random.default_rng(2)
    values = 3.0 - 1.5e-4 * HOURS + 0.01 * rng.standard_normal(HOURS.size)
    fit = decay.fit_decay(HOURS, values)
    assert fit.best == "linear"
    slope, intercept = np.polyfit(HOURS, values, 1)
    assert fit.fits["linear"].params == pytest.approx((intercept, -slope), rel=1e-6)
    assert fit.fits["linear"].loss_per_1000h == pytest.approx(-1000 * slope / intercept)


def test_forecast_of_noise_free_exponential_is_analytic():
    """Crossing hours h = ln(y0 / T) / k for y0 exp(-k h) = T (algebra); date = install day
    + ceil(h / daily hours) days."""
    values = 4.0 * np.exp(-2e-4 * HOURS)
    fit = decay.fit_decay(HOURS, values)
    fc = decay.forecast_crossing(fit, 2.9, installed_on="2024-01-01", daily_hours=12)
    expected_h = math.log(4.0 / 2.9) / 2e-4
    assert fc.hours == pytest.approx(expected_h, rel=1e-6)
    assert fc.date == pd.Timestamp("2024-01-01") + pd.Timedelta(days=math.ceil(expected_h / 12))
    assert fc.hours_low <= fc.hours <= fc.hours_high


def test_forecast_band_matches_delta_method_for_linear_model():
    """For the linear model h = (y0 - T) / b; first-order error propagation (delta method,
    JCGM 100:2008 GUM section 5.2, from memory) of the fit covariance gives a standard
    deviation; with the variance estimated from 8 points (6 degrees of freedom) the 68 %
    half-width is that times Student's t quantile t(0.84, 6) (GUM Annex G, from memory;
    quantile from scipy.stats.t). The parameter draws reproduce it within 15 %."""
    from scipy.stats import t as student_t

    rng = np.random.default_rng(3)
    hours = np.linspace(0, 6000, 8)
    values = 3.0 - 1.5e-4 * hours + 0.03 * rng.standard_normal(hours.size)
    fit = decay.fit_decay(hours, values)
    mf = fit.fits["linear"]
    fc = decay.forecast_crossing(fit, 2.0, installed_on="2024-01-01", daily_hours=12,
                                 model="linear", draws=20000)
    (y0, b), cov = mf.params, mf.covariance
    grad = np.array([1 / b, -(y0 - 2.0) / b**2])
    sd = math.sqrt(grad @ cov @ grad)
    assert mf.dof == 6
    half_width = sd * student_t.ppf(0.84, 6)
    assert (fc.hours_high - fc.hours_low) / 2 == pytest.approx(half_width, rel=0.15)
    assert fc.date_early <= fc.date <= fc.date_late


def test_not_enough_data_and_no_decay():
    """Two parameters need at least three distinct points (one degree of freedom left);
    an output that does not fall is reported as such, with no forecast (common practice)."""
    few = decay.fit_decay([0, 1000, 1000], [4.0, 3.8, 3.9])
    assert few.state == "not enough data" and few.best is None
    fc = decay.forecast_crossing(few, 2.9, installed_on="2024-01-01", daily_hours=12)
    assert math.isnan(fc.hours) and pd.isna(fc.date)
    steady = decay.fit_decay([0, 1000, 2000, 3000], [3.0, 3.1, 3.05, 3.2])
    assert steady.state == "no decay" and steady.best is None
    with pytest.raises(InputError, match="threshold must be positive"):
        decay.forecast_crossing(few, 0.0, installed_on="2024-01-01", daily_hours=12)


def _readings(rows):
    return pd.DataFrame.from_records([
        {"date": pd.Timestamp(d), "enclosure": e, "lamp": lamp, "position": pos,
         "quantity": "uvi", "value_si": v, "source_file": "r.csv", "source_line": i + 2}
        for i, (d, e, lamp, pos, v) in enumerate(rows)])


def _installs(rows):
    frame = pd.DataFrame.from_records(rows, columns=["enclosure", "lamp", "installed_on",
                                                     "removed_on", "daily_hours", "lamp_model"])
    frame["installed_on"] = pd.to_datetime(frame["installed_on"])
    frame["removed_on"] = pd.to_datetime(frame["removed_on"])
    return frame


def test_replacement_schedule_states():
    """Schedule states follow from the fitted output against the target: a lamp whose
    exponential decay (k = 2e-4 h-1, 12 h/day) reaches 2.9 from 4.0 after
    ln(4/2.9)/k = 1608 h = 134 days is below target a year on; a slower lamp is "ok";
    two audits are "not enough data"; readings of a replaced lamp are not used."""
    today = "2025-06-01"
    install = pd.Timestamp("2024-06-01")
    days = [0, 60, 120, 180]
    fast = [(install + pd.Timedelta(days=d), "desert-1", "bar", "basking",
             4.0 * math.exp(-2e-4 * 12 * d)) for d in days]
    slow = [(install + pd.Timedelta(days=d), "forest-2", "tube", "basking",
             2.0 * math.exp(-1e-5 * 12 * d)) for d in days]
    old = [("2023-01-01", "forest-2", "tube", "basking", 0.1)]  # previous tube, replaced
    new = [("2025-01-10", "swamp-3", "spot", "basking", 1.5),
           ("2025-05-10", "swamp-3", "spot", "basking", 1.4)]
    readings = _readings(fast + slow + old + new)
    installs = _installs([
        ("desert-1", "bar", "2024-06-01", None, 12, "UVB LED bar 12x305nm"),
        ("forest-2", "tube", "2022-01-01", "2024-06-01", 12, "T5 UVB tube 6%"),
        ("forest-2", "tube", "2024-06-01", None, 12, "T5 UVB tube 6%"),
        ("swamp-3", "spot", "2025-01-01", None, 10, "UVB point lamp"),
    ])
    table = decay.replacement_schedule(readings, installs, {"desert-1": 2.9, "forest-2": 1.0,
                                                            "swamp-3": 0.7}, today=today)
    states = dict(zip(table["enclosure"], table["state"], strict=True))
    assert states == {"desert-1": "below target", "forest-2": "ok",
                      "swamp-3": "not enough data"}
    row = table.set_index("enclosure").loc["desert-1"]
    assert row["model"] == "exponential"
    expected = install + pd.Timedelta(days=math.ceil(math.log(4 / 2.9) / 2e-4 / 12))
    assert abs((row["replace_by"] - expected).days) <= 1
    assert row["loss_per_1000h_pct"] == pytest.approx(100 * (1 - math.exp(-0.2)), rel=1e-4)
    assert table.set_index("enclosure").loc["forest-2", "points"] == 4
    assert list(table["state"]) == sorted(table["state"], key=decay.STATES.index)


def test_exponential_fit_failure_falls_back_to_linear(monkeypatch):
    """If scipy's least squares does not converge (curve_fit raises RuntimeError, as its
    documentation says), the exponential fit is marked failed with a warning and the
    linear fit is used."""
    import scipy.optimize

    real = scipy.optimize.curve_fit

    def failing(f, *args, **kwargs):
        if f is decay.exponential_model:
            raise RuntimeError("Optimal parameters not found")
        return real(f, *args, **kwargs)

    monkeypatch.setattr(scipy.optimize, "curve_fit", failing)
    with pytest.warns(decay.DecayFitWarning, match="exponential decay fit did not converge"):
        fit = decay.fit_decay(HOURS, 3.0 - 1e-4 * HOURS)
    assert fit.best == "linear" and math.isinf(fit.fits["exponential"].aic)


def test_analyse_lamp_decay_without_target_says_so():
    """Without a target there is nothing to forecast against: state "no target", no
    forecast, but the fit is still made (the loss per 1000 h is still known)."""
    install = pd.Timestamp("2024-06-01")
    rows = [(install + pd.Timedelta(days=d), "desert-1", "bar", "basking",
             4.0 * math.exp(-2e-4 * 12 * d)) for d in (0, 60, 120, 180)]
    installs = _installs([("desert-1", "bar", "2024-06-01", None, 12, "UVB LED bar 12x305nm")])
    result = decay.analyse_lamp_decay(_readings(rows), installs, "desert-1", "bar", math.nan,
                                      today="2025-01-01")
    assert result.state == "no target" and result.forecast is None
    assert result.fit.best == "exponential"
    assert result.fit.best_fit.loss_per_1000h == pytest.approx(1 - math.exp(-0.2), rel=1e-6)
    assert decay.analyse_lamp_decay(_readings(rows), installs, "desert-1", "bar", 2.9,
                                    today="2024-01-01") is None  # not installed yet


def test_three_audits_give_a_student_t_band():
    """Three audits leave one degree of freedom: the 68 % half-width is the delta-method
    standard deviation times t(0.84, 1) = 1.82 (Student's t, scipy.stats.t; GUM Annex G,
    from memory), almost twice the normal-theory width."""
    from scipy.stats import t as student_t

    hours = np.array([100.0, 4500, 8900])
    values = 3.0 - 1.5e-4 * hours + np.array([0.01, -0.02, 0.01])
    fit = decay.fit_decay(hours, values)
    mf = fit.fits["linear"]
    assert mf.dof == 1
    fc = decay.forecast_crossing(fit, 2.0, installed_on="2024-01-01", daily_hours=12,
                                 model="linear", draws=40000)
    (y0, b), cov = mf.params, mf.covariance
    grad = np.array([1 / b, -(y0 - 2.0) / b**2])
    sd = math.sqrt(grad @ cov @ grad)
    assert student_t.ppf(0.84, 1) == pytest.approx(1.82, abs=0.01)
    half_width = (fc.hours_high - fc.hours_low) / 2
    assert half_width == pytest.approx(sd * student_t.ppf(0.84, 1), rel=0.2)


def test_exact_fit_keeps_the_rounding_uncertainty():
    """0.9, 0.8, 0.7 UVI lie exactly on a line, but a meter showing one decimal rounds to
    0.1: variance 0.1²/12 (GUM F.2.2.1, from memory). The slope's standard error is then
    the ordinary least-squares one, sqrt(σ² / Σ(h - mean h)²) (any regression text), and
    the forecast band is not empty."""
    hours = np.array([0.0, 4000.0, 8000.0])
    fit = decay.fit_decay(hours, [0.9, 0.8, 0.7])
    assert decay.display_step([0.9, 0.8, 0.7]) == pytest.approx(0.1)
    assert decay.display_step([2.25, 3.0]) == pytest.approx(0.01)
    linear = fit.fits["linear"]
    assert linear.rss == pytest.approx(0.0, abs=1e-20)
    expected = math.sqrt((0.1**2 / 12) / np.sum((hours - hours.mean()) ** 2))
    assert linear.stderr[1] == pytest.approx(expected, rel=1e-6)
    fc = decay.forecast_crossing(fit, 0.6, installed_on="2024-01-01", daily_hours=12,
                                 model="linear")
    assert fc.date_early < fc.date < fc.date_late


def test_lamp_check_target_scaled_to_basking_share():
    """Several lamps light one basking area and each is checked alone on its axis: the
    basking target T moves to the check's scale as T x check/basking (proportional scaling
    of superposed irradiance; common practice). Checks 2.7 and 2.8 with basking 5.2 and
    T = 4.5 give 2.337 and 2.423: both lamps are fine, as the basking reading is."""
    import pandas as pd

    from audit_lib.history.decay import replacement_schedule

    day = pd.Timestamp("2026-03-10")
    rows = [("rh-08", "", "basking", 5.2), ("rh-08", "a", "", 2.7), ("rh-08", "b", "", 2.8)]
    readings = pd.DataFrame({
        "date": [day] * 3, "enclosure": [r[0] for r in rows], "lamp": [r[1] for r in rows],
        "position": [r[2] for r in rows], "quantity": ["uvi"] * 3,
        "value_si": [r[3] for r in rows]})
    installs = pd.DataFrame({
        "enclosure": ["rh-08", "rh-08"], "lamp": ["a", "b"], "lamp_model": ["t5", "t5"],
        "installed_on": [pd.Timestamp("2025-06-01")] * 2, "removed_on": [pd.NaT] * 2,
        "daily_hours": [12.0, 12.0]})
    table = replacement_schedule(readings, installs, {"rh-08": 4.5}, today=day)
    targets = dict(zip(table["lamp"], table["target_min"], strict=True))
    assert targets["a"] == pytest.approx(4.5 * 2.7 / 5.2)
    assert targets["b"] == pytest.approx(4.5 * 2.8 / 5.2)
    assert "below target" not in set(table["state"])
