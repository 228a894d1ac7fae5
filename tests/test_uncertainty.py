"""Intervals of the checks and the borderline rule (audit_lib.judge.uncertainty, targets).

External checks: the combination rule follows JCGM 100:2008 (GUM) §4.3.7 (a "± a" bound
with no confidence level is rectangular, u = a / sqrt(3)) and §5.1.2 (independent relative
components of a product add in quadrature); the spread term is the prediction error of a
new observation (NIST/SEMATECH e-Handbook of Statistical Methods) with the asymptotic
variance of a median, pi / 2 times a mean's (a textbook result). Each is checked here
against a Monte Carlo simulation of the measurement, written in the test, that uses none of
the library's formulas.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from audit_lib.judge import targets
from audit_lib.judge.uncertainty import (
    METER_UNCERTAINTY_PCT,
    UNCORRECTED_METER_UNCERTAINTY_PCT,
    OutputUncertainty,
    calibration_spread_u,
    inverse_interval,
    linear_interval,
    meter_uncertainty_pct,
    share_at_or_below_interval,
)
from audit_lib.judge.verdicts import ATTENTION, MEETS, overall_state


def _simulate_true_over_model(a_pct, sigma, n, trials, rng):
    """Monte Carlo: true / calibrated-model at a new point, from the measurement itself.

    One meter with a rectangular error of +-a % reads n positions; the model's shape is off
    at each position by a log-normal error sigma; the model is scaled by the median of
    measured / modelled; a new point has its own shape error.
    """
    meter = 1.0 + rng.uniform(-a_pct / 100, a_pct / 100, size=(trials, 1))
    shape = np.exp(rng.normal(0.0, sigma, size=(trials, n)))
    scale = np.median(meter * shape, axis=1)  # measured / modelled, true scale 1
    new_point = np.exp(rng.normal(0.0, sigma, size=trials))
    return new_point / scale


def test_scale_interval_matches_a_monte_carlo_of_the_measurement():
    """90 % interval of the scale factor against a simulated meter + model (GUM, NIST)."""
    rng = np.random.default_rng(1)
    a, sigma, n = 15.0, 0.08, 9
    ratio = _simulate_true_over_model(a, sigma, n, 200_000, rng)
    u = OutputUncertainty(meter_pct=a, spread_u=sigma * math.sqrt(1 + math.pi / (2 * n)),
                          readings=n)
    low, high = u.scale_factors()
    # the figure's true value lies in value x [low, high] 90 % of the time
    assert np.mean((ratio >= low) & (ratio <= high)) == pytest.approx(0.90, abs=0.01)
    assert np.quantile(ratio, 0.05) == pytest.approx(low, rel=0.02)
    assert np.quantile(ratio, 0.95) == pytest.approx(high, rel=0.02)


def test_spread_term_estimates_the_simulated_shape_error():
    """The sample spread of many ratios recovers the simulated sigma (NIST prediction)."""
    rng = np.random.default_rng(2)
    ratios = np.exp(rng.normal(0.0, 0.1, size=4000))
    assert calibration_spread_u(ratios) == pytest.approx(0.1, rel=0.03)
    assert calibration_spread_u([1.2]) == 0.0


def test_check_intervals_match_a_monte_carlo_through_each_map():
    """Basking maximum, refuge share and keeper limit intervals: MC over the scale factor."""
    rng = np.random.default_rng(3)
    u = OutputUncertainty(meter_pct=15.0, spread_u=0.05, readings=3)
    # the scale factor's distribution that the method assumes: log-normal, written out here
    z = rng.normal(0.0, math.sqrt((0.15 / math.sqrt(3)) ** 2 + 0.05 ** 2), size=100_000)
    k = np.exp(z)
    floor = np.linspace(0.0, 2.0, 400)  # a floor map at the value's scale [UVI]
    shares = np.mean(floor[None, :] * k[:, None] <= 0.5, axis=1)
    low, high = share_at_or_below_interval(floor, 0.5, u.scale_factors())
    assert (low, high) == pytest.approx((np.quantile(shares, 0.05), np.quantile(shares, 0.95)),
                                        abs=0.003)
    lo, hi = linear_interval(6.0, u.scale_factors())
    assert (lo, hi) == pytest.approx(tuple(np.quantile(6.0 * k, [0.05, 0.95])), rel=0.01)
    k_rated = np.exp(rng.normal(0.0, 0.20 / math.sqrt(3), size=100_000))
    lo, hi = inverse_interval(32.0, u.rated_factors())
    assert (lo, hi) == pytest.approx(tuple(np.quantile(32.0 / k_rated, [0.05, 0.95])), rel=0.01)


def test_meter_defaults_are_larger_without_a_mismatch_correction():
    """A broadband meter under a lamp without correction counts more (project default)."""
    assert meter_uncertainty_pct("uv_index_meter") == \
        UNCORRECTED_METER_UNCERTAINTY_PCT["uv_index_meter"]
    assert meter_uncertainty_pct("uv_index_meter", mismatch_corrected=True) == \
        METER_UNCERTAINTY_PCT["uv_index_meter"]
    assert meter_uncertainty_pct("uv_index_meter", stated=7.0) == 7.0
    assert meter_uncertainty_pct("spectroradiometer") == METER_UNCERTAINTY_PCT["spectroradiometer"]


@pytest.mark.parametrize("low, high, state", [
    (5.0, 9.0, targets.WITHIN), (4.5, 9.5, targets.WITHIN),   # limits inclusive
    (9.0, 10.0, targets.BORDERLINE), (4.0, 5.0, targets.BORDERLINE),
    (3.0, 11.0, targets.BORDERLINE), (9.6, 12.0, targets.ABOVE), (2.0, 4.4, targets.BELOW),
])
def test_the_borderline_rule(low, high, state):
    """Within/below/above only when the whole interval is on one side (common practice)."""
    value = 0.5 * (low + high)
    assert targets.classify_interval(value, low, high, 4.5, 9.5) == state


def test_with_interval_keeps_the_value_and_explains_a_borderline():
    """A 9.4 against a limit of 9.5 with a +-15 % interval is borderline, not within."""
    zone = targets.read_zone_table()[4]
    check = targets.check_basking_max(9.4, zone)
    assert check.state == targets.WITHIN
    out = targets.with_interval(check, 8.0, 10.8)
    assert out.value == 9.4 and out.state == targets.BORDERLINE
    assert "9.5" in out.reason and "90 %" in out.reason
    assert targets.with_interval(targets.check_basking_max(6.0, zone), 5.1, 6.9).state == \
        targets.WITHIN
    with pytest.raises(ValueError, match="does not contain its value"):
        targets.with_interval(check, 9.5, 10.0)


def test_overall_state_counts_borderline_apart():
    """Out of range beats borderline; borderline alone is its own overall state."""
    zone = targets.read_zone_table()[4]
    close = targets.with_interval(targets.check_basking_max(9.4, zone), 8.0, 10.8)
    fine = targets.check_light_hours(12.0)
    out = targets.check_light_hours(20.0)
    assert overall_state([close, fine])[0] == targets.BORDERLINE
    assert overall_state([close, out])[0] == ATTENTION
    assert overall_state([fine])[0] == MEETS


def test_meter_uncertainty_pct_in_the_site_file():
    """site.toml meters take an optional uncertainty_pct in (0, 100]."""
    from pydantic import ValidationError

    from audit_lib.site.schema import Meter

    assert Meter(id="m", type="uv_index_meter", uncertainty_pct=8).uncertainty_pct == 8
    assert Meter(id="m", type="uv_index_meter").uncertainty_pct is None
    with pytest.raises(ValidationError, match="greater than 0"):
        Meter(id="m", type="uv_index_meter", uncertainty_pct=0)
