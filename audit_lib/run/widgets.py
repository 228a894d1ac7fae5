"""The what-if panel for JupyterLab: controls bound to a :class:`WhatIfPlanner`.

All computation is the planner's (:mod:`audit_lib.pipeline.planner`, which calls the library); this
module only turns control changes into ``planner.update(...)`` calls and draws the result.
Figures are drawn once; each update changes their artists (``set_data``, ``set_clim``,
contours replaced) and renders them to PNG for an image widget, so nothing is rebuilt.

Open it with :func:`open_panel` (``workbooks/what_if.ipynb`` does).
"""

from __future__ import annotations

import html
import io
import time

from audit_lib.errors import AuditError, AuditWarning, InputError
from audit_lib.pipeline.plan import find_plan
from audit_lib.pipeline.planner import DEFAULT_SHAPE, PlanResult, WhatIfPlanner
from audit_lib.pipeline.scenarios import UV_PEAK_LIMIT_NM
from audit_lib.report.daily import sun_scale_for_zone
from audit_lib.report.style import MAP_COLORMAP, PALETTE
from audit_lib.report.verdicts import verdict_html
from audit_lib.site.folder import load_site

__all__ = ["MapView", "DailyView", "WhatIfPanel", "WhatIfPlanner", "open_panel"]

_DPI = 80


def _nice_top(value: float) -> float:
    """Round an axis top up to 1, 1.5, 2, 3, 5 or 7.5 times a power of ten (fewer redraws)."""
    import math

    value = max(float(value), 1e-9)
    base = 10 ** math.floor(math.log10(value))
    return next(m * base for m in (1, 1.5, 2, 3, 5, 7.5, 10) if m * base >= value)


class _Blitter:
    """Render a figure to PNG, redrawing only its changing artists over a kept background.

    The static part (axes, ticks, labels, colour bar) is drawn once and kept; each frame
    restores it and draws the given artists on top (the usual matplotlib blitting).
    ``full=True`` redraws everything (after axis limits or colour limits changed).
    """

    def __init__(self, fig):
        self.fig = fig
        self.background = None

    def render(self, dynamic, *, full: bool = False) -> bytes:
        from PIL import Image

        canvas = self.fig.canvas
        dynamic = [a for a in dynamic if a is not None]
        if full or self.background is None:
            for a in dynamic:
                a.set_visible(False)
            canvas.draw()
            self.background = canvas.copy_from_bbox(self.fig.bbox)
            for a in dynamic:
                a.set_visible(True)
        canvas.restore_region(self.background)
        renderer = canvas.get_renderer()
        for a in dynamic:
            a.draw(renderer)
        image = Image.frombuffer("RGBA", canvas.get_width_height(), canvas.buffer_rgba(),
                                 "raw", "RGBA", 0, 1)
        buf = io.BytesIO()
        image.save(buf, format="PNG", compress_level=1)
        return buf.getvalue()


class MapView:
    """Floor and surface UV Index maps with the zone's maximum-range contours.

    Parameters
    ----------
    result : PlanResult
        The first result (fixes the surfaces and their extents).
    scene : audit_lib.scene.maps.Enclosure
        The planned enclosure (for the outline).
    """

    def __init__(self, result: PlanResult, scene):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure


        self.fig = Figure(figsize=(6.4, 4.4), dpi=_DPI)
        self.fig.subplots_adjust(left=0.1, right=0.98, bottom=0.25, top=0.92)
        FigureCanvasAgg(self.fig)
        self.blitter = _Blitter(self.fig)
        self._full = True
        ax = self.ax = self.fig.add_subplot()
        order = sorted(result.maps.values(), key=lambda m: m.surface.z_m)
        self.images = {}
        for m in order:
            s = m.surface
            self.images[s.name] = ax.imshow(
                m.values["uvi"], origin="lower", cmap=MAP_COLORMAP, interpolation="nearest",
                extent=(s.x_min_m, s.x_max_m, s.y_min_m, s.y_max_m), vmin=0.0, vmax=1.0)
            if s.kind != "floor":
                ax.add_patch(_rectangle(s, PALETTE["black"]))
                ax.annotate(s.name, (s.x_min_m, s.y_max_m), fontsize="x-small",
                            xytext=(2, 2), textcoords="offset points")
        ax.set_xlim(0, scene.width_m)
        ax.set_ylim(0, scene.depth_m)
        ax.set_aspect("equal")
        ax.set_xlabel("across, x [m]")
        ax.set_ylabel("front to back, y [m]")
        self.colorbar = self.fig.colorbar(next(iter(self.images.values())), ax=ax, shrink=0.85,
                                          extend="max",
                                          label="UV Index [-] (at each surface's height)")
        (self.lamp_marker,) = ax.plot([], [], marker="s", color=PALETTE["orange"],
                                      markeredgecolor="black", linestyle="none",
                                      label="lamp centre")
        (self.peak_marker,) = ax.plot([], [], marker="*", markersize=11,
                                      color=PALETTE["vermillion"], markeredgecolor="black",
                                      linestyle="none", label="basking maximum")
        self.contours = []
        self.legend = ax.legend(loc="upper left", bbox_to_anchor=(0.0, -0.19), ncol=2,
                                fontsize="x-small", frameon=False)
        ax.set_title("UV Index at each surface's height; lines: zone maximum range",
                     fontsize="small")
        self.update(result, scene)

    def update(self, result: PlanResult, scene) -> None:
        """Change the artists to show ``result`` (images, colour limits, contours, markers)."""
        if result.zone is not None:  # one colour scale per zone: colours stay comparable
            top = _nice_top(result.zone.max_uvi_high * 1.25)
        else:
            top = _nice_top(max(1.0, *(float(m.values["uvi"].max())
                                       for m in result.maps.values())))
        for name, image in self.images.items():
            image.set_data(result.maps[name].values["uvi"])
            if image.get_clim()[1] != top:
                image.set_clim(0.0, top)
                self._full = True
        for c in self.contours:
            c.remove()
        self.contours = []
        if result.zone is not None:
            levels = [result.zone.max_uvi_low, result.zone.max_uvi_high]
            for m in result.maps.values():
                v = m.values["uvi"]
                if v.shape[0] > 1 and v.shape[1] > 1 and v.min() < levels[1] and \
                        v.max() > levels[0]:
                    self.contours.append(self.ax.contour(
                        m.x_m, m.y_m, v, levels=levels, colors=["white", "black"],
                        linestyles=["--", "-"], linewidths=1.0))
        lamp = next(p for p in scene.lamps if p.id == result.config.lamp)
        self.lamp_marker.set_data([lamp.x_m], [lamp.y_m])
        self.peak_marker.set_data([result.peak_point_m[0]], [result.peak_point_m[1]])

    def png(self) -> bytes:
        """The figure rendered to PNG (only the changing artists are redrawn)."""
        dynamic = [*self.images.values(), *self.ax.patches, *self.ax.texts, *self.contours,
                   self.lamp_marker, self.peak_marker, *self.ax.spines.values()]
        full, self._full = self._full, False
        return self.blitter.render(dynamic, full=full)


def _rectangle(surface, colour):
    from matplotlib.patches import Rectangle

    return Rectangle((surface.x_min_m, surface.y_min_m), surface.x_max_m - surface.x_min_m,
                     surface.y_max_m - surface.y_min_m, fill=False, edgecolor=colour,
                     linewidth=1.2)


class DailyView:
    """UV Index at the basking maximum through the day, with the zone's bands and the sun.

    The legend sits outside the axes and never changes, so it stays in the kept background;
    the two bands are moved, not replaced.
    """

    def __init__(self, result: PlanResult):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure


        self.fig = Figure(figsize=(6.4, 3.0), dpi=_DPI)
        self.fig.subplots_adjust(left=0.1, right=0.7, bottom=0.16, top=0.95)
        FigureCanvasAgg(self.fig)
        self.blitter = _Blitter(self.fig)
        self._full = True
        ax = self.ax = self.fig.add_subplot()
        self.bands = [
            ax.axhspan(0, 0, facecolor=PALETTE["sky blue"], alpha=0.18, hatch="//",
                       edgecolor=PALETTE["sky blue"], linewidth=0,
                       label="zone's maximum range"),
            ax.axhspan(0, 0, facecolor=PALETTE["bluish green"], alpha=0.25, hatch="..",
                       edgecolor=PALETTE["bluish green"], linewidth=0,
                       label="zone's mean range"),
        ]
        (self.sun_line,) = ax.plot([], [], color=PALETTE["black"], linestyle=(0, (5, 3)),
                                   linewidth=1.2, label="sun, clear sky\n(peak scaled to the\n"
                                   "middle of the maximum)")
        (self.lamp_line,) = ax.plot([], [], color=PALETTE["blue"], linewidth=2.0,
                                    label="basking maximum")
        ax.set_xlim(0, 24)
        ax.set_xticks(range(0, 25, 3))
        ax.set_xlabel("local time [h]")
        ax.set_ylabel("UV Index [-]")
        ax.grid(True, color="#dddddd", linewidth=0.6)
        self.legend = ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize="x-small",
                                frameon=False)
        self.update(result)

    def update(self, result: PlanResult) -> None:
        """Move the target bands and change the curves."""
        top = 1.0
        zone = result.zone
        spans = ((zone.max_uvi_low, zone.max_uvi_high), (zone.mean_uvi_low, zone.mean_uvi_high)) \
            if zone is not None else ((0.0, 0.0), (0.0, 0.0))
        for band, (low, high) in zip(self.bands, spans, strict=True):
            band.set_y(low)
            band.set_height(high - low)
            band.set_visible(zone is not None)
        if zone is not None:
            top = zone.max_uvi_high
        sun = result.sun
        scale = sun_scale_for_zone(sun["uvi"], zone) if zone is not None else 1.0
        self.sun_line.set_data(sun["time_h"].to_numpy(), sun["uvi"].to_numpy() * scale)
        top = max(top, float(sun["uvi"].max()) * scale)
        if result.daily is not None:
            self.lamp_line.set_data(result.daily.index.to_numpy(), result.daily.to_numpy())
            top = max(top, float(result.daily.max()))
        else:
            self.lamp_line.set_data([], [])
        top = _nice_top(top * 1.1)
        if self.ax.get_ylim()[1] != top:
            self.ax.set_ylim(0, top)
            self._full = True

    def png(self) -> bytes:
        """The figure rendered to PNG (only the changing artists are redrawn)."""
        dynamic = [b for b in self.bands if b.get_visible()]
        dynamic += [self.sun_line, self.lamp_line, *self.ax.spines.values()]
        full, self._full = self._full, False
        return self.blitter.render(dynamic, full=full)


def _summary_html(r: PlanResult) -> str:
    def num(x, fmt="{:.2f}"):
        return "-" if x is None else fmt.format(x)

    rows = [
        ("Lamp height above the floor [m]", f"{r.config.z_m:.2f}"),
        ("Basking maximum UV Index",
         f"{r.basking_max_uvi:.2f} on {html.escape(r.basking_surface)}"),
        ("Share of the floor at or below the refuge UV Index", f"{r.refuge_share:.0%}"),
        ("Animal's mean UV Index while active", num(r.mean_uvi)),
        ("Hours of light", num(r.light_hours, "{:.1f}")),
        ("Daily dose at the basking maximum [SED]", num(
            None if r.dose is None else float(r.dose.sed))),
        ("Keeper limit at the working distance [min]", num(
            None if r.keeper_limit_s is None else r.keeper_limit_s / 60, "{:.0f}")),
    ]
    body = "".join(f"<tr><th style='text-align:left'>{a}</th><td>{b}</td></tr>" for a, b in rows)
    return f"<table>{body}</table>"


class WhatIfPanel:
    """ipywidgets controls bound to a planner, with the live map, day curve and verdict.

    Parameters
    ----------
    planner : WhatIfPlanner
        The planner to drive.
    notes : list of str, optional
        Caveats to show under the panel (e.g. warnings raised while loading the site).
    """

    def __init__(self, planner: WhatIfPlanner, notes=()):
        import ipywidgets as w

        self.planner = planner
        result = planner.result or planner.update()
        c = planner.config
        rec = planner.record
        self._busy = False
        lay = w.Layout(width="400px")
        style = {"description_width": "190px"}

        def control(cls, description, **kw):
            if cls in (w.FloatSlider, w.IntSlider):
                kw["continuous_update"] = False  # recompute on release, not on every pixel
            return cls(description=description, layout=lay, style=style, **kw)

        models = planner.lamp_models()
        self.controls = {
            "lamp": control(w.Dropdown, "Lamp to plan", options=planner.placed_lamps(),
                            value=c.lamp),
            "lamp_model": control(w.Dropdown, "Lamp",
                                  options=[(f"{n} ({k})", k) for k, n in models.items()],
                                  value=c.lamp_model),
            "z_m": control(w.FloatSlider, "Height above floor (m)", min=0.05,
                           max=round(rec.height_m + 0.3, 2), step=0.01, value=c.z_m),
            "x_m": control(w.FloatSlider, "Across, x (m)", min=0.0, max=rec.width_m,
                           step=0.01, value=min(max(c.x_m, 0.0), rec.width_m)),
            "y_m": control(w.FloatSlider, "Front to back, y (m)", min=0.0, max=rec.depth_m,
                           step=0.01, value=min(max(c.y_m, 0.0), rec.depth_m)),
            "uv_per_row": control(w.IntSlider, "UV emitters per row", min=1, max=40,
                                  value=self._per_row()),
            "uv_beam_angle_deg": control(w.FloatSlider, "UV beam angle (deg)", min=10,
                                         max=180, step=5, value=self._beam()),
            "failed_emitters": control(w.SelectMultiple, "Emitters out", rows=5,
                                       options=self._emitter_options(), value=()),
            "screen": control(w.Dropdown, "Screen or mesh", options=planner.screens(),
                              value=c.screen),
            "own_times": control(w.Checkbox, "Own light times", value=False),
            "on": control(w.Text, "Lights on (HH:MM)", value="08:00"),
            "off": control(w.Text, "Lights off (HH:MM)", value="20:00"),
            "ramp_minutes": control(w.IntSlider, "Dawn and dusk ramp (min)", min=0, max=120,
                                    value=0),
            "species": control(w.Dropdown, "Species",
                               options=[(v, k) for k, v in planner.species().items()],
                               value=c.species or None),
            "output_share": control(w.FloatSlider, "Lamp output (share of new)", min=0.2,
                                    max=1.2, step=0.05, value=c.output_share),
        }
        self.scenario_name = control(w.Text, "Scenario name", value="my-plan")
        self.save_button = w.Button(description="Save as scenario", icon="save")
        self.plan_button = w.Button(description="Apply the plan", icon="check",
                                    tooltip="the smallest set of changes that brings every "
                                    "check within range")
        self.plan = None
        self.status = w.HTML()
        self.map_view = MapView(result, planner.scene())
        self.daily_view = DailyView(result)
        self.map_image = w.Image(format="png")
        self.daily_image = w.Image(format="png")
        self.summary = w.HTML()
        self.verdict = w.HTML()
        self.recommendation = w.HTML()
        self._load_notes = list(notes)
        self.notes = w.HTML()
        for key, widget in self.controls.items():
            widget.observe(lambda change, key=key: self._changed(key, change["new"]),
                           names="value")
        self.save_button.on_click(lambda _: self.save())
        self.plan_button.on_click(lambda _: self.apply_plan())
        self._enable()
        self.show(result)
        left = w.VBox([*self.controls.values(), w.HBox([self.scenario_name]),
                       self.save_button, self.plan_button, self.status])
        right = w.VBox([self.map_image, self.daily_image, self.summary])
        self.widget = w.VBox([w.HBox([left, right]),
                              w.HTML("<h4>Recommended changes</h4>"), self.recommendation,
                              self.verdict, self.notes])

    # --- binding --------------------------------------------------------------------------

    def _per_row(self) -> int:

        c = self.planner.config
        if c.uv_per_row is not None:
            return int(c.uv_per_row)
        model = self.planner.site.lamp_model(c.lamp_model)
        if model.kind != "led_array":
            return 1
        uv = {e.id for e in model.emitters if e.peak_nm < UV_PEAK_LIMIT_NM}
        return next((g.columns for g in model.grids if g.emitter in uv), 1)

    def _beam(self) -> float:

        c = self.planner.config
        if c.uv_beam_angle_deg is not None:
            return float(c.uv_beam_angle_deg)
        model = self.planner.site.lamp_model(c.lamp_model)
        if model.kind != "led_array":
            return 120.0
        return next((e.beam_angle_deg for e in model.emitters if e.peak_nm < UV_PEAK_LIMIT_NM),
                    120.0)

    def _emitter_options(self):
        return [(f"{k}: {name}", k) for k, name in
                enumerate(self.planner.emitter_labels(), start=1)]

    def _enable(self) -> None:
        led = self.planner.is_led_array()
        for key in ("uv_per_row", "uv_beam_angle_deg", "failed_emitters"):
            self.controls[key].disabled = not led
        own = self.controls["own_times"].value
        for key in ("on", "off", "ramp_minutes"):
            self.controls[key].disabled = not own

    def _changes(self, key, value) -> dict:
        ctl = self.controls
        if key in ("own_times", "on", "off", "ramp_minutes"):
            if not ctl["own_times"].value:
                return {"on": None, "off": None, "ramp_minutes": 0.0}
            return {"on": ctl["on"].value.strip(), "off": ctl["off"].value.strip(),
                    "ramp_minutes": float(ctl["ramp_minutes"].value)}
        if key == "failed_emitters":
            return {key: tuple(value)}
        return {key: value}

    def _changed(self, key, value) -> None:
        if self._busy:
            return
        try:
            self.apply(**self._changes(key, value))
        except AuditError as exc:
            self.status.value = f"<span style='color:#D55E00'>{html.escape(str(exc))}</span>"
        if key in ("lamp", "lamp_model", "uv_per_row", "own_times"):
            self._refresh_controls(everything=key == "lamp")

    def _refresh_controls(self, everything: bool = False) -> None:
        self._busy = True
        try:
            ctl = self.controls
            c = self.planner.config
            if everything:
                for key in ("lamp_model", "z_m", "x_m", "y_m", "screen", "output_share"):
                    ctl[key].value = getattr(c, key)
            ctl["failed_emitters"].options = self._emitter_options()
            ctl["failed_emitters"].value = tuple(self.planner.config.failed_emitters)
            ctl["uv_per_row"].value = self._per_row()
            ctl["uv_beam_angle_deg"].value = self._beam()
            self._enable()
        finally:
            self._busy = False

    # --- actions --------------------------------------------------------------------------

    def apply(self, **changes) -> dict:
        """Update the planner and redraw; returns ``{"compute_ms", "redraw_ms"}``."""
        t0 = time.perf_counter()
        result = self.planner.update(**changes)
        t1 = time.perf_counter()
        self.show(result)
        t2 = time.perf_counter()
        self.status.value = (f"Updated in {1e3 * (t1 - t0):.0f} ms, drawn in "
                             f"{1e3 * (t2 - t1):.0f} ms.")
        return {"compute_ms": 1e3 * (t1 - t0), "redraw_ms": 1e3 * (t2 - t1)}

    def apply_plan(self):
        """Search the plan from the present settings, apply it and show it; returns the plan.

        The search (:func:`audit_lib.pipeline.plan.find_plan`) leaves the planner at the
        plan; the controls follow it and the status line says what the plan achieves.
        """
        try:
            self.plan = find_plan(self.planner)
        except AuditError as exc:
            self.status.value = f"<span style='color:#D55E00'>{html.escape(str(exc))}</span>"
            return None
        result = self.planner.result
        self._busy = True
        try:
            c = self.planner.config
            if c.on is not None:
                self.controls["own_times"].value = True
                for key in ("on", "off"):
                    self.controls[key].value = getattr(c, key)
                self.controls["ramp_minutes"].value = int(c.ramp_minutes)
        finally:
            self._busy = False
        self._refresh_controls(everything=True)
        self.show(result)
        steps = " ".join(a.text for a in self.plan.actions)
        self.status.value = html.escape(f"{self.plan.reason} {steps}".strip())
        return self.plan

    def show(self, result: PlanResult) -> None:
        """Redraw every output for ``result`` (artists updated, figures kept)."""
        self.map_view.update(result, self.planner.scene())
        self.daily_view.update(result)
        self.map_image.value = self.map_view.png()
        self.daily_image.value = self.daily_view.png()
        self.summary.value = _summary_html(result)
        if result.verdicts:
            self.verdict.value = "".join(verdict_html(v) for v in result.verdicts)
        else:
            self.verdict.value = "<p>No species with a known zone is chosen.</p>"
        self.recommendation.value = f"<p>{html.escape(result.recommendation)}</p>"
        shown = {n for v in result.verdicts for n in v.notes}  # in the verdict block above
        notes = dict.fromkeys(n for n in [*self._load_notes, *result.notes] if n not in shown)
        self.notes.value = "".join(f"<p><strong>Note:</strong> {html.escape(n)}</p>"
                                   for n in notes)

    def save(self, name: str | None = None, note: str = ""):
        """Save the plan as a scenario of the site; returns the written path (or None)."""
        name = name or self.scenario_name.value.strip()
        try:
            path = self.planner.save_scenario(name, note)
        except InputError as exc:
            self.status.value = f"<span style='color:#D55E00'>{html.escape(str(exc))}</span>"
            return None
        self.status.value = (f"Saved scenario {html.escape(name)} "
                             f"(scenarios/{html.escape(path.name)} in the site folder).")
        return path

    def _ipython_display_(self):
        from IPython.display import display

        display(self.widget)


def open_panel(site_dir, enclosure_id: str = "", *, lamp: str = "", shape=DEFAULT_SHAPE,
               audit_date=None) -> WhatIfPanel:
    """Load a site and open the what-if panel on one enclosure (or a blank one).

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder.
    enclosure_id : str
        Enclosure id; empty for a blank enclosure.
    lamp : str
        Placed lamp to plan (default the enclosure's first).
    shape : tuple of int
        (ny, nx) floor map grid [-].
    audit_date : str, optional
        Day of the schedules and the sun's curve (default the site's latest audit day).

    Returns
    -------
    WhatIfPanel
        Display it (it is the last expression of a cell) to see the controls.
    """
    import warnings


    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AuditWarning)
        site = load_site(site_dir)
        if enclosure_id:
            site.enclosure(enclosure_id)  # a clear error for an unknown id
        planner = WhatIfPlanner(site, enclosure_id, lamp=lamp, shape=shape,
                                audit_date=audit_date)
    notes = []
    for w in caught:
        if issubclass(w.category, AuditWarning):
            notes.append(str(w.message))
        else:
            warnings.showwarning(w.message, w.category, w.filename, w.lineno)
    return WhatIfPanel(planner, notes=list(dict.fromkeys(notes)))
