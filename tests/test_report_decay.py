"""Tests of the lamp decay figure (audit_lib.report.decay)."""

import math

import matplotlib
import numpy as np
import pandas as pd

from audit_lib.history import decay
from audit_lib.report.decay import plot_decay

matplotlib.use("Agg")


def test_figure_shows_readings_target_and_analytic_forecast(tmp_path):
    """The drawn target line sits at the threshold and the forecast line at the analytic
    crossing day of y = 4 exp(-k h) = 2.9, h = ln(4 / 2.9) / k (algebra), 12 h per day."""
    import matplotlib.dates as mdates
    import matplotlib.pyplot as plt

    hours = np.array([0.0, 2000, 4000, 6000])
    values = 4.0 * np.exp(-1e-4 * hours)
    fit = decay.fit_decay(hours, values)
    fc = decay.forecast_crossing(fit, 2.9, installed_on="2024-01-01", daily_hours=12)
    points = pd.DataFrame({"hours": hours, "value": values})
    fig = plot_decay(points, fit, installed_on="2024-01-01", daily_hours=12, threshold=2.9,
                     forecast=fc, today="2025-01-01", title="desert-1 / basking-bar")
    ax = fig.axes[0]
    labels = [line.get_label() for line in ax.get_lines()]
    assert labels[0] == "readings" and labels[2] == "linear fit"
    assert labels[1].startswith("exponential fit (better, ΔAIC")
    target = ax.get_lines()[3]
    assert set(target.get_ydata()) == {2.9}
    crossing = pd.Timestamp("2024-01-01") + pd.Timedelta(
        days=math.ceil(math.log(4 / 2.9) / 1e-4 / 12))
    forecast_x = ax.get_lines()[4].get_xdata()[0]
    if not isinstance(forecast_x, pd.Timestamp):
        forecast_x = mdates.num2date(forecast_x).replace(tzinfo=None)
    assert abs((pd.Timestamp(forecast_x) - crossing).days) <= 1
    fig.savefig(tmp_path / "decay.png")
    assert (tmp_path / "decay.png").stat().st_size > 10_000
    plt.close(fig)


def test_figure_without_fit_says_so():
    """Two readings cannot be fitted: the figure shows them and says "not enough data"
    (same rule as audit_lib.history.decay.MIN_POINTS)."""
    import matplotlib.pyplot as plt

    points = pd.DataFrame({"hours": [0.0, 1000.0], "value": [3.0, 2.8]})
    fit = decay.fit_decay(points["hours"], points["value"])
    fig = plot_decay(points, fit, installed_on="2024-01-01", daily_hours=12)
    assert "not enough data" in fig.axes[0].get_title()
    assert [line.get_label() for line in fig.axes[0].get_lines()] == ["readings"]
    plt.close(fig)


def test_plot_lamp_decay_titles_the_state():
    """The lamp figure carries enclosure, lamp and state (as computed by
    audit_lib.history.decay.analyse_lamp_decay) in its title."""
    import matplotlib.pyplot as plt

    from audit_lib.report.decay import plot_lamp_decay

    install = pd.Timestamp("2024-06-01")
    readings = pd.DataFrame({
        "date": [install + pd.Timedelta(days=d) for d in (0, 60, 120, 180)],
        "enclosure": "desert-1", "lamp": "bar", "position": "basking", "quantity": "uvi",
        "value_si": [4.0 * math.exp(-2e-4 * 12 * d) for d in (0, 60, 120, 180)]})
    installs = pd.DataFrame({"enclosure": ["desert-1"], "lamp": ["bar"],
                             "installed_on": [install], "removed_on": [pd.NaT],
                             "daily_hours": [12.0], "lamp_model": ["UVB LED bar 12x305nm"]})
    result = decay.analyse_lamp_decay(readings, installs, "desert-1", "bar", 2.9,
                                      today="2025-01-01")
    fig = plot_lamp_decay(result, today="2025-01-01")
    assert fig.axes[0].get_title() == "bar: below target"
    plt.close(fig)


def test_target_label_rounds_and_state_said_once():
    """The target line's label carries 3 significant figures, and a lamp whose state is
    "not enough data" (fewer than MIN_POINTS readings, audit_lib.history.decay) says so once."""
    import matplotlib.pyplot as plt

    points = pd.DataFrame({"hours": [0.0, 1000.0], "value": [3.0, 2.8]})
    fit = decay.fit_decay(points["hours"], points["value"])
    fig = plot_decay(points, fit, installed_on="2024-01-01", daily_hours=12,
                     threshold=2.336541, title="t5: not enough data")
    ax = fig.axes[0]
    assert ax.get_title() == "t5: not enough data"
    assert "target minimum 2.34" in [line.get_label() for line in ax.get_lines()]
    plt.close(fig)


def test_lamp_panels_one_figure():
    """Several lamps share one figure, one panel each in the given order; none gives None."""
    import matplotlib.pyplot as plt

    from audit_lib.report.decay import plot_lamp_decays

    install = pd.Timestamp("2024-06-01")
    days = (0, 60, 120, 180)
    readings = pd.DataFrame({
        "date": [install + pd.Timedelta(days=d) for d in days] * 2,
        "enclosure": "desert-1", "lamp": ["front"] * 4 + ["back"] * 4,
        "position": "basking", "quantity": "uvi",
        "value_si": [4.0 * math.exp(-2e-4 * 12 * d) for d in days] * 2})
    installs = pd.DataFrame({"enclosure": ["desert-1"] * 2, "lamp": ["front", "back"],
                             "installed_on": [install] * 2, "removed_on": [pd.NaT] * 2,
                             "daily_hours": [12.0] * 2, "lamp_model": ["T5"] * 2})
    results = [decay.analyse_lamp_decay(readings, installs, "desert-1", lamp, 2.9,
                                        today="2025-01-01") for lamp in ("front", "back")]
    fig = plot_lamp_decays(results, today="2025-01-01")
    assert [ax.get_title().split(":")[0] for ax in fig.axes] == ["front", "back"]
    assert plot_lamp_decays([]) is None
    plt.close(fig)


def test_workbook_draws_lamps_read_on_two_days_or_more():
    """A lamp read on one day only is the lamps table's latest reading: no panel for it."""
    import datetime as dt
    from types import SimpleNamespace

    import matplotlib.pyplot as plt

    from audit_lib.report.audit_figures import plot_lamp_decays

    install = pd.Timestamp("2024-06-01")
    days = {"often": (0, 60, 120, 180), "once": (180,)}
    readings = pd.DataFrame([
        {"date": install + pd.Timedelta(days=d), "enclosure": "e", "lamp": lamp,
         "position": "basking", "quantity": "uvi", "value_si": 4.0 * math.exp(-2.4e-3 * d)}
        for lamp, ds in days.items() for d in ds])
    installs = pd.DataFrame({"enclosure": ["e"] * 2, "lamp": list(days),
                             "installed_on": [install] * 2, "removed_on": [pd.NaT] * 2,
                             "daily_hours": [12.0] * 2, "lamp_model": ["T5"] * 2})
    results = [decay.analyse_lamp_decay(readings, installs, "e", lamp, 2.9, today="2025-01-01")
               for lamp in days]
    audit = SimpleNamespace(decays=results, audit_date=dt.date(2025, 1, 1))
    fig = plot_lamp_decays(audit)
    assert [ax.get_title().split(":")[0] for ax in fig.axes] == ["often"]
    plt.close(fig)
    assert plot_lamp_decays(SimpleNamespace(decays=results[1:], audit_date=None)) is None
