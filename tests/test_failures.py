"""Emitter failures: superposition of per-unit maps, worst-k, Monte Carlo, Arrhenius."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants, stats

from audit_lib.errors import InputError
from audit_lib.scene.failures import (
    arrhenius_factor,
    coverage,
    emitter_contributions,
    failure_probability,
    failure_scenarios,
    monte_carlo_coverage,
    monte_carlo_failures,
    worst_units,
)
from audit_lib.scene.maps import Enclosure, PlacedLamp, Surface, compute_maps
from audit_lib.sources.emitters import EmitterType
from audit_lib.sources.lamps import LedArray, line_of_emitters


def _scene():
    uvb = EmitterType("uvb", 305, 12, 0.004, beam_angle_deg=60)
    bar = LedArray("bar", (uvb,), line_of_emitters(["uvb"] * 8, 0.03, rows=2, row_pitch_m=0.03))
    basking = Surface("basking", 0.25, 0.45, 0.75, 0.2, 0.4)
    return Enclosure("box", 1.2, 0.6, 0.6, (PlacedLamp(bar, 0.6, 0.3, 0.55),), (basking,))


def test_contributions_add_up_to_the_map():
    """Superposition: per-unit maps sum to the full map, and a map with units out equals the
    full map minus their rows (irradiances of incoherent sources add)."""
    enc = _scene()
    c = emitter_contributions(enc, "basking", "uvi", spacing_m=0.02)
    full = compute_maps(enc, ("uvi",), 0.02, ["basking"])["basking"].values["uvi"].ravel()
    np.testing.assert_allclose(c.total, full, rtol=1e-6)  # float32 fast path, summed two ways
    assert len(c.units) == 16 and c.units[0] == "bar/uvb-1"
    out = ["bar/uvb-3", "bar/uvb-12"]
    less = compute_maps(enc, ("uvi",), 0.02, ["basking"], failed=out)["basking"]
    rows = [c.units.index(u) for u in out]
    expected = full - c.matrix[rows].sum(0)
    np.testing.assert_allclose(less.values["uvi"].ravel(), expected, rtol=1e-6)


def test_worst_units_by_mean_are_the_largest_contributors():
    enc = _scene()
    c = emitter_contributions(enc, "basking", "uvi", spacing_m=0.02)
    worst = worst_units(c, 3)
    sums = dict(zip(c.units, c.matrix.sum(1), strict=True))
    assert sorted(sums.values(), reverse=True)[:3] == pytest.approx([sums[u] for u in worst])
    # greedy by coverage never does better than removing nothing
    base = float(coverage(c.total, (2.0, 20.0)))
    greedy = worst_units(c, 2, (2.0, 20.0))
    rows = [c.units.index(u) for u in greedy]
    assert float(coverage(c.total - c.matrix[rows].sum(0), (2.0, 20.0))) <= base
    with pytest.raises(InputError, match="k must lie between 0 and 16"):
        worst_units(c, 17)


def test_failure_scenarios_order_and_effect():
    enc = _scene()
    sc = failure_scenarios(
        enc, "basking", out=["bar/uvb-1"], worst=4, uvi_range=(1, 6), spacing_m=0.02
    )
    assert [s.name for s in sc] == ["all working", "named", "worst 4"]
    means = [s.statistics.mean["uvi"] for s in sc]
    assert means[0] > means[1] > means[2]
    assert len(sc[2].failed) == 4


def test_monte_carlo_matches_brute_force_and_binomial():
    """The pruned Monte Carlo equals a brute-force per-trial computation with the same random
    draws; the number of failed units follows Binomial(n, p) (scipy.stats, 99.9 % interval)."""
    enc = _scene()
    c = emitter_contributions(enc, "basking", "uvi", spacing_m=0.02)
    p, trials, rng_seed = 0.15, 2000, 11
    res = monte_carlo_coverage(c, p, (2.5, 6.0), trials, 0.6, seed=rng_seed, batch_size=128)
    rng = np.random.default_rng(rng_seed)
    brute = []
    for start in range(0, trials, 128):
        out = rng.random((min(128, trials - start), len(c.units))) < p
        brute.extend(coverage((~out).astype(float) @ c.matrix, (2.5, 6.0)))
    np.testing.assert_allclose(res.coverage, brute, atol=1e-12)
    lo, hi = stats.binom.interval(0.999, len(c.units) * trials, p)
    assert lo <= res.n_failed.sum() <= hi
    assert res.probability_below == pytest.approx(np.mean(np.array(brute) < 0.6))
    q = res.quantiles()
    assert q[0.05] <= q[0.5] <= q[0.95]  # failures may raise coverage where UVI was too high


def test_monte_carlo_edge_probabilities():
    enc = _scene()
    none = monte_carlo_failures(
        enc, "basking", (1.0, 50.0), 0.0, n_trials=50, seed=1, spacing_m=0.02
    )
    assert np.all(none.coverage == none.baseline_coverage) and none.baseline_coverage > 0
    every = monte_carlo_failures(
        enc, "basking", (1.0, 50.0), 1.0, n_trials=50, seed=1, spacing_m=0.02
    )
    assert np.all(every.coverage == 0) and every.probability_below == 1.0
    one = monte_carlo_failures(
        enc, "basking", (1.0, 50.0), {"bar/uvb-2": 1.0}, n_trials=20, seed=1, spacing_m=0.02
    )
    assert np.all(one.n_failed == 1)
    with pytest.raises(InputError, match="failure probability given for unknown unit"):
        monte_carlo_failures(enc, "basking", (1, 5), {"bar/uvb-99": 0.1}, spacing_m=0.02)
    with pytest.raises(InputError, match="must lie between 0 and 1"):
        monte_carlo_coverage(emitter_contributions(enc, "basking", spacing_m=0.05), 1.5, (1, 5))


def test_arrhenius_factor_against_scipy_constants():
    """AF = exp(Ea / k_B (1/T_ref - 1/T)) (Arrhenius law) with k_B from scipy.constants
    (CODATA); AF = 1 at the reference temperature; p = 1 - (1 - p_ref)^AF for a constant
    failure rate (exponential life distribution)."""
    k_ev = constants.k / constants.e
    expected = math.exp(0.7 / k_ev * (1 / 298.15 - 1 / 358.15))
    assert arrhenius_factor(85.0, 25.0, 0.7) == pytest.approx(expected, rel=1e-9)
    assert arrhenius_factor(40.0, 40.0, 0.9) == pytest.approx(1.0)
    p = failure_probability(0.1, 85.0, 25.0, 0.7)
    assert p == pytest.approx(1 - 0.9**expected)
    rate = -math.log(0.9)  # constant hazard over the period
    assert p == pytest.approx(1 - math.exp(-rate * expected))
    assert failure_probability(0.1) == pytest.approx(0.1)
    with pytest.raises(InputError, match="needs temperature_c, reference_temperature_c and"):
        failure_probability(0.1, 85.0)
    enc = _scene()
    hot = monte_carlo_failures(
        enc,
        "basking",
        (1.0, 50.0),
        0.05,
        n_trials=400,
        seed=3,
        temperature_c=85.0,
        reference_temperature_c=25.0,
        activation_energy_ev=0.7,
        spacing_m=0.02,
    )
    assert hot.probabilities == pytest.approx(np.full(16, 1 - 0.95**expected))
