"""The uncertainty of a check's figure: a 90 % interval from the meter, the model and decay.

Every UV figure of an enclosure (basking maximum, the animal's mean, the refuge share) is
the model's map times one scale factor: the calibration to the audit day's readings, or a
plan's output share (the maps are linear in lamp output). The figure's uncertainty is
therefore the uncertainty of that one factor, carried through each figure's own map:

* the meter: its stated ``uncertainty_pct`` (``site.toml``, per meter) or the project default
  of its type (:data:`METER_UNCERTAINTY_PCT`; larger for a broadband meter whose readings
  are not corrected for its spectral mismatch under the lamp,
  :data:`UNCORRECTED_METER_UNCERTAINTY_PCT`). A "± a %" specification with no confidence level
  is read as a rectangular distribution of half-width ``a``: standard uncertainty
  ``a / sqrt(3)`` (JCGM 100:2008, GUM §4.3.7);
* the calibration's spread: the ratios measured / modelled at the positions scatter because
  the model's shape is not perfect; a figure elsewhere in the enclosure is a new point, so
  its standard uncertainty is the prediction error ``s * sqrt(1 + pi / (2 n))`` with ``s`` the
  sample standard deviation of ln(ratio) over ``n`` positions (``pi / 2``: the variance of a
  median of normal data over that of a mean; prediction interval of a new observation:
  NIST/SEMATECH e-Handbook of Statistical Methods). Fewer than two ratios give no spread;
* without readings: the lamp model's rated output, good to :data:`RATED_OUTPUT_PCT`
  (project default, rectangular);
* for a forecast (a lamp output at a future age): the decay fit's 68 % band, taken as one
  standard uncertainty of the output.

The components are independent and relative, so they add in quadrature on the logarithm
of the factor (GUM §5.1.2, sensitivity 1 for every component of a product); the 90 %
interval of the factor is ``exp(-z u)`` to ``exp(z u)`` with ``z`` the normal 95th percentile
(:data:`Z90`), which always contains the value itself. The keeper limit is computed at the
lamps' rated output (:mod:`audit_lib.pipeline.findings`), so only the rated-output component
applies to it, inversely (limit = 30 J m-2 / E_S).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Two-sided 90 % interval: the standard normal's 95th percentile [-].
Z90 = 1.6448536269514722

#: Project defaults, "± %" of a meter type's reading against its calibration source when the
#: site gives none (common practice for handheld instruments, from memory; set the meter's
#: ``uncertainty_pct`` in site.toml from its calibration certificate) [%].
METER_UNCERTAINTY_PCT = {
    "uv_index_meter": 10.0,
    "uvb_meter": 10.0,
    "uva_meter": 10.0,
    "lux_meter": 5.0,
    "spectroradiometer": 8.0,
}
#: Project defaults for a broadband meter whose readings are not corrected for its spectral
#: mismatch under the lamp (no ``spectral_response`` in site.toml): a narrowband or
#: sun-unlike lamp is weighted differently from the calibration source [%].
UNCORRECTED_METER_UNCERTAINTY_PCT = {
    "uv_index_meter": 15.0,
    "uvb_meter": 20.0,
    "uva_meter": 15.0,
}
#: Project default: a lamp model's rated output, from one reference reading, "± %" [%].
RATED_OUTPUT_PCT = 20.0


def meter_uncertainty_pct(meter_type: str, *, stated: float | None = None,
                          mismatch_corrected: bool = False) -> float:
    """The "± %" of one meter's readings: the stated value, else the project default [%].

    Parameters
    ----------
    meter_type : str
        The meter's type (``uv_index_meter``, ...).
    stated : float, optional
        The site's ``uncertainty_pct`` for this meter [%].
    mismatch_corrected : bool
        Whether its readings are corrected for spectral mismatch (broadband meters).
    """
    if stated is not None:
        return float(stated)
    if not mismatch_corrected and meter_type in UNCORRECTED_METER_UNCERTAINTY_PCT:
        return UNCORRECTED_METER_UNCERTAINTY_PCT[meter_type]
    return METER_UNCERTAINTY_PCT.get(meter_type, max(METER_UNCERTAINTY_PCT.values()))


def rectangular_u(half_width_pct: float) -> float:
    """Relative standard uncertainty of a "± a %" bound, a / sqrt(3) (GUM §4.3.7) [-]."""
    return float(half_width_pct) / 100.0 / math.sqrt(3.0)


def calibration_spread_u(ratios) -> float:
    """Standard uncertainty of the scaled model at a new point from the ratios' spread [-].

    ``s * sqrt(1 + pi / (2 n))``, ``s`` the sample standard deviation of ln(ratio); 0 for
    fewer than two ratios (no spread to estimate).

    Parameters
    ----------
    ratios : array-like
        Measured / modelled UV Index at the positions used for the calibration [-].
    """
    r = np.asarray(ratios, dtype=float)
    r = r[np.isfinite(r) & (r > 0)]
    if r.size < 2:
        return 0.0
    s = float(np.std(np.log(r), ddof=1))
    return s * math.sqrt(1.0 + math.pi / (2.0 * r.size))


@dataclass(frozen=True)
class OutputUncertainty:
    """Relative standard uncertainties of one enclosure's model scale factor.

    Attributes
    ----------
    meter_pct : float
        "± %" of the meter(s) behind the calibration (0 without readings) [%].
    spread_u : float
        The calibration's spread at a new point (:func:`calibration_spread_u`) [-].
    rated_pct : float
        "± %" of the rated output, used without readings and for the keeper limit [%].
    decay_u : float
        A forecast output's 68 % band as a share of the output (0 on the audit day) [-].
    readings : int
        Number of measured / modelled ratios behind the calibration [-].
    """

    meter_pct: float = 0.0
    spread_u: float = 0.0
    rated_pct: float = RATED_OUTPUT_PCT
    decay_u: float = 0.0
    readings: int = 0

    @property
    def scale_u(self) -> float:
        """Combined relative standard uncertainty of the scale factor [-]."""
        first = rectangular_u(self.meter_pct) if self.readings else rectangular_u(self.rated_pct)
        return math.sqrt(first ** 2 + self.spread_u ** 2 + self.decay_u ** 2)

    def scale_factors(self) -> tuple[float, float]:
        """The 90 % interval of the scale factor as multiples of its value [-]."""
        return factor_interval(self.scale_u)

    def rated_factors(self) -> tuple[float, float]:
        """The 90 % interval of a lamp's rated output as multiples of it [-]."""
        return factor_interval(rectangular_u(self.rated_pct))


def factor_interval(u: float) -> tuple[float, float]:
    """``(exp(-z u), exp(z u))``: 90 % interval of a factor with relative uncertainty u [-]."""
    return math.exp(-Z90 * u), math.exp(Z90 * u)


def linear_interval(value, factors) -> tuple:
    """Interval of a figure proportional to the scale factor: value x (low, high) [unit]."""
    if value is None or not math.isfinite(value):
        return (None, None) if value is None else (value, value)
    return value * factors[0], value * factors[1]


def inverse_interval(value, factors) -> tuple:
    """Interval of a figure inversely proportional to the factor (a time limit) [unit]."""
    if value is None or not math.isfinite(value):
        return (None, None) if value is None else (value, value)
    return value / factors[1], value / factors[0]


def share_at_or_below_interval(values, threshold: float, factors) -> tuple[float, float]:
    """Interval of the share of ``values`` x factor at or below a threshold (vectorised) [-].

    A higher factor lowers the share, so the low end is the share at the high factor.

    Parameters
    ----------
    values : array-like
        A map at the scale factor's value [unit].
    threshold : float
        E.g. the refuge UV Index [unit].
    factors : (float, float)
        :meth:`OutputUncertainty.scale_factors`.
    """
    v = np.asarray(values, dtype=float)
    return (float(np.mean(v * factors[1] <= threshold)),
            float(np.mean(v * factors[0] <= threshold)))
