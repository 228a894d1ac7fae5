import datetime as dt

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

from audit_lib.day.dose import monthly_table, uvi_series  # noqa: E402
from audit_lib.day.photoperiod import OnOffSchedule, daily_profile  # noqa: E402
from audit_lib.judge.targets import read_zone_table  # noqa: E402
from audit_lib.light.sun import clear_sky_uvi_day  # noqa: E402
from audit_lib.report.daily import (  # noqa: E402
    plot_daily_uvi,
    plot_monthly_doses,
    sun_scale_for_zone,
)
from audit_lib.report.style import PALETTE  # noqa: E402


def test_daily_figure_has_bands_sun_and_curves():
    """The sun's clear-sky curve (Madronich 2007) is scaled so that its peak sits at the
    middle of the zone's maximum range (zone 3: (2.9 + 7.4) / 2 = 5.15, Ferguson et al. 2010,
    from memory); curves use Okabe & Ito (2008) colours and differ by line style too."""
    import matplotlib.pyplot as plt

    zone = read_zone_table()[3]
    profile = daily_profile(OnOffSchedule(on="08:00", off="20:00", ramp_up_min=60,
                                          ramp_down_min=60))
    curves = {"basking": uvi_series(4.0, profile), "floor": uvi_series(1.0, profile)}
    sun = clear_sky_uvi_day(10.0, 0.0, dt.date(2026, 4, 1))
    ax = plot_daily_uvi(curves, zone=zone, sun=sun, sun_label="sun 10 N")
    lines = {ln.get_label(): ln for ln in ax.get_lines()}
    sun_line = next(v for k, v in lines.items() if k.startswith("sun 10 N (scaled x"))
    assert np.max(sun_line.get_ydata()) == pytest.approx(5.15)
    assert sun_scale_for_zone(sun["uvi"], zone) == pytest.approx(5.15 / sun["uvi"].max())
    assert matplotlib.colors.to_hex(lines["basking"].get_color()).upper() == PALETTE["blue"]
    assert lines["basking"].get_linestyle() != lines["floor"].get_linestyle()
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "zone 3 maximum 2.9-7.4 (from memory)" in labels
    assert "zone 3 mean 1-2.6 (from memory)" in labels
    assert ax.get_xlim() == (0.0, 24.0)
    plt.close(ax.figure)


def test_monthly_figure_has_twelve_bars():
    """Month table (dose.monthly_table) drawn as 12 bars with the clear-sky reference line;
    the bar heights are the SED column (CIE S 007 unit)."""
    import matplotlib.pyplot as plt

    table = monthly_table(1.0, OnOffSchedule(on="09:00", off="17:00"), 2026,
                          reference_latitude_deg=30.0)
    ax = plot_monthly_doses(table)
    (bars,) = ax.collections  # the twelve bars are one collection
    heights = [float(np.ptp(path.vertices[:, 1])) for path in bars.get_paths()]
    assert len(heights) == 12
    assert heights == pytest.approx([8 * 0.9] * 12)
    assert ax.get_ylim()[1] >= max(8 * 0.9, table["sun_clear_sky_sed"].max())
    plt.close(ax.figure)


def test_dataframe_columns_become_curves():
    """A table of UV Index columns indexed by hour draws one line per column (pandas
    DataFrame semantics); without a zone the sun is drawn unscaled (Madronich 2007 values)."""
    import matplotlib.pyplot as plt
    import pandas as pd

    sun = clear_sky_uvi_day(0.0, 0.0, dt.date(2026, 3, 20), step_s=600.0)
    table = pd.DataFrame({"basking": np.linspace(0, 3, 144), "floor": np.linspace(0, 1, 144)},
                         index=pd.Index(sun["time_h"].to_numpy(), name="time_h"))
    ax = plot_daily_uvi(table, sun=sun)
    labels = [ln.get_label() for ln in ax.get_lines()]
    assert labels == ["sun, clear sky", "basking", "floor"]
    assert np.max(ax.get_lines()[0].get_ydata()) == pytest.approx(sun["uvi"].max())
    plt.close(ax.figure)
