"""The ``light-audit`` command: a thin wrapper over library calls.

Each subcommand has a ``_add_<name>_parser(subparsers)`` function that registers it and a
handler that calls one library function. Bad input exits with status 2 and one message
naming the file, line and field; never a traceback.
"""

from __future__ import annotations

import argparse
import functools
import os
import shlex
import subprocess
import sys
import warnings
from pathlib import Path

from audit_lib import __version__
from audit_lib.errors import AuditError, AuditWarning, InputError, InputErrors
from audit_lib.light.metrics import format_metrics_table, spectrum_metrics
from audit_lib.light.spectra import read_spectrum
from audit_lib.light.sun import sun_summary
from audit_lib.pipeline.field import expected_readings
from audit_lib.pipeline.forecast import (
    format_schedule,
    import_site_readings,
    site_replacement_schedule,
)
from audit_lib.report.field_sheet import field_sheet_html, readings_template_csv
from audit_lib.run.batch import run_batch, run_scenario
from audit_lib.run.notebooks import jupyterlab_command, register_kernel, write_what_if_workbook
from audit_lib.run.pdf import find_chromium, html_to_pdf
from audit_lib.site.dates import parse_date
from audit_lib.site.folder import load_site, new_site, summarise_site
from audit_lib.site.schema import parse_quantity
from audit_lib.sources.emitters import fit_line_shape


def _date_option(text: str):
    """Parse a date option before any work (argparse then exits 2 with the message)."""
    try:
        return parse_date(text)
    except InputError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def _add_spectrum_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "spectrum",
        help="weighted quantities of one measured spectrum (UV Index, vitamin D, bands, lux, ...)",
    )
    p.add_argument("file", help="spectrum file (CSV, TSV or TXT): wavelength [nm] and irradiance")
    p.add_argument(
        "--unit",
        help="unit of the irradiance column if the header does not say it, e.g. 'uW/cm^2/nm'",
    )
    p.add_argument("--distance", metavar="LENGTH",
                   help="lamp-to-sensor distance of the measurement, e.g. '30 cm' or 0.3 (m): "
                   "needed for the indicative IEC 62471 risk group, stated at 200 mm")
    p.add_argument("--json", action="store_true", help="print one JSON object (SI units)")
    p.set_defaults(handler=_run_spectrum)


def _distance_m(text: str | None) -> float | None:
    """A length from the command line: a number in metres or '<number> <unit>'."""
    if text is None:
        return None
    try:
        return float(text)
    except ValueError:
        pass
    try:
        return parse_quantity(text, "length")
    except InputError as exc:
        raise InputError(exc.message, field="--distance", hint="e.g. '30 cm' or 0.3") from None


def _risk_group_note(result: dict) -> str:
    """One line saying on what the risk group rests, or why there is none."""
    if result["risk_group"] is None:
        return ("note: no risk group: IEC 62471 states it at 200 mm, and the measurement "
                "distance is unknown; give it with --distance")
    return (f"note: risk group at 200 mm (indicative; IEC 62471 limits from memory): the "
            f"spectrum measured at {result['measurement_distance_m']:g} m is moved to 200 mm "
            "by the inverse-square law, an assumption that overstates extended lamps "
            f"(E_S {result['actinic_w_m2_at_distance']:.3g} W/m², E_UVA "
            f"{result['uva_w_m2_at_distance']:.3g} W/m² at 200 mm)")


def _run_spectrum(args) -> int:
    import json

    spectrum = read_spectrum(args.file, unit=args.unit)
    result = spectrum_metrics(spectrum, distance_m=_distance_m(args.distance))
    if args.json:
        print(json.dumps(result, indent=2, allow_nan=False))
    else:
        print(format_metrics_table(result, title=spectrum.name))
        print(_risk_group_note(result))
    return 0


def _add_check_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "check", help="validate a site folder and list every problem (exit status 2 if any)"
    )
    p.add_argument("site", help="the site folder (holding site.toml)")
    p.set_defaults(handler=_run_check)


def _run_check(args) -> int:

    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", AuditWarning)
            site = load_site(args.site)
    except InputErrors as exc:
        for problem in exc.problems:
            print(problem, file=sys.stderr)
        print(f"{len(exc.problems)} problem(s) found; nothing was computed", file=sys.stderr)
        return 2
    for warning in caught:
        print(f"warning: {warning.message}", file=sys.stderr)
    print(summarise_site(site) + (f"; {len(caught)} warning(s) to attend to" if caught else ""))
    return 0


def _add_new_site_parser(subparsers) -> None:
    p = subparsers.add_parser("new-site", help="write a commented starting site folder")
    p.add_argument("dir", help="the new site folder (created if needed)")
    p.set_defaults(handler=_run_new_site)


def _run_new_site(args) -> int:

    path = new_site(args.dir)
    print(f"wrote {path}; edit it, then run 'light-audit check {args.dir}'")
    return 0


def _add_run_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "run", help="audit every enclosure of a site: HTML reports, index.html, results.json/csv"
    )
    p.add_argument("site", help="the site folder (holding site.toml)")
    p.add_argument("--out", required=True, help="output folder for reports and results")
    p.add_argument("--jobs", type=int, default=None, help="worker processes (default: CPUs)")
    p.add_argument("--only", nargs="+", metavar="ID", help="audit only these enclosure ids")
    p.add_argument("--audit-date", type=_date_option,
                   help="audit date passed to the workbooks (YYYY-MM-DD)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--scenario", metavar="NAME",
                   help="report a saved what-if scenario (SITE/scenarios/NAME.toml) instead")
    p.add_argument("--pdf", action="store_true",
                   help="also write a PDF beside each report, the overview and the index "
                        "(needs the system's 'chromium')")
    p.add_argument("--keep-notebooks", action="store_true",
                   help="keep the executed workbooks (reports/<id>.ipynb) and link them from "
                        "the index; they hold this machine's folder paths")
    p.set_defaults(handler=_run_run)


def _run_run(args) -> int:
    if args.pdf:
        find_chromium()  # a missing browser is bad input: exit 2 before any work
    if args.scenario:

        result = run_scenario(args.site, args.scenario, args.out, jobs=args.jobs,
                              audit_date=args.audit_date, progress=not args.quiet,
                              pdf=args.pdf, keep_notebooks=args.keep_notebooks)
    else:
        result = run_batch(args.site, args.out, jobs=args.jobs, only=args.only,
                           audit_date=args.audit_date, progress=not args.quiet,
                           pdf=args.pdf, keep_notebooks=args.keep_notebooks)
    if args.quiet:  # with the progress bar each failure was printed as it happened
        for failed in result.failures:
            print(f"could not audit {failed.id}: {failed.error}", file=sys.stderr)
    elif result.failures:
        print(f"{len(result.failures)} workbook(s) could not be run (listed above); the index "
              "lists them too", file=sys.stderr)
    for page, error in result.pdf_errors.items():
        print(f"could not print {page} to PDF: {error}", file=sys.stderr)
    print(result.index_path)
    return 1 if result.failures or result.pdf_errors else 0


def _add_import_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "import", help="import a site's readings and lamp installs into its history database"
    )
    p.add_argument("site", help="the site folder (holding site.toml)")
    p.add_argument("files", nargs="*", help="readings files (default: every file in SITE/readings)")
    p.add_argument("--db", help="history database (default: SITE/history.sqlite)")
    p.add_argument("--replace", action="store_true",
                   help="a corrected file replaces the readings of its earlier import")
    p.set_defaults(handler=_run_import)


def _run_import(args) -> int:

    for s in import_site_readings(args.site, args.files, db_path=args.db, replace=args.replace):
        state = "already imported" if s.already_imported else f"{s.rows_added} added"
        if s.rows_removed:
            state += f", {s.rows_removed} of the earlier import removed"
        print(f"{s.source_file}: {s.rows_in_input} readings, {state}, "
              f"{s.rows_already_stored} already stored")
    return 0


def _add_forecast_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "forecast", help="lamp decay fits and replacement dates from a site's history"
    )
    p.add_argument("site", help="the site folder (holding site.toml)")
    p.add_argument("--db", help="history database (default: SITE/history.sqlite)")
    p.add_argument("--date", type=_date_option,
                   help="day of the schedule, YYYY-MM-DD (default: today)")
    p.add_argument("--target-uvi", type=float,
                   help="one basking UV Index threshold for all lamps (default: zone ranges)")
    p.add_argument("--csv", help="also write the schedule to this CSV file")
    p.add_argument("--raw", action="store_true",
                   help="fit raw meter readings (no spectral mismatch correction)")
    p.set_defaults(handler=_run_forecast)


def _run_forecast(args) -> int:
    site = load_site(args.site, today=args.date)  # once: the schedule syncs its history
    table = site_replacement_schedule(site, db_path=args.db, today=args.date,
                                      target_uvi=args.target_uvi, correct_meters=not args.raw)
    print(format_schedule(table))
    if args.csv:
        table.to_csv(args.csv, index=False, date_format="%Y-%m-%d")
    return 0


def _add_field_sheet_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "field-sheet",
        help="printable sheet of positions and expected UV Index for the audit day, and a "
        "readings template to fill in",
    )
    p.add_argument("site", help="the site folder (holding site.toml)")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the sheet and template")
    p.add_argument("--date", type=_date_option,
                   help="day of the readings, YYYY-MM-DD (default: today)")
    p.add_argument("--pdf", action="store_true", help="also print the sheet to PDF (Chromium)")
    p.set_defaults(handler=_run_field_sheet)


def _run_field_sheet(args) -> int:
    if args.pdf:
        find_chromium()  # a clear exit 2 before any work when Chromium is missing
    sheet = expected_readings(load_site(args.site), args.date)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    stem = sheet.date.isoformat()
    html_path = out / f"field-sheet-{stem}.html"
    csv_path = out / f"readings-template-{stem}.csv"
    html_path.write_text(field_sheet_html(sheet), encoding="utf-8")
    csv_path.write_text(readings_template_csv(sheet), encoding="utf-8")
    written = [html_path, csv_path]
    if args.pdf:
        written.insert(1, html_to_pdf(html_path, out / f"field-sheet-{stem}.pdf"))
    for path in written:
        print(path)
    return 0


def _add_sun_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "sun", help="sunrise, sunset, day length and clear-sky UV Index of a day at a place"
    )
    p.add_argument("--latitude", type=float, required=True, help="degrees, north positive")
    p.add_argument("--longitude", type=float, default=0.0, help="degrees, east positive")
    p.add_argument("--date", type=_date_option, required=True, help="the day, YYYY-MM-DD")
    p.add_argument("--utc-offset", type=float, default=None,
                   help="local time minus UTC in hours, e.g. 1 for summer time in London "
                   "(default: times in UTC)")
    p.add_argument("--time-zone", default=None, metavar="NAME",
                   help="IANA time zone, e.g. Europe/London: local times with summer time "
                   "(instead of --utc-offset)")
    p.add_argument("--ozone", type=float, default=300.0, help="total ozone column [DU]")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(handler=_run_sun)


def _run_sun(args) -> int:
    import json


    summary = sun_summary(args.latitude, args.longitude, args.date, utc_offset_h=args.utc_offset,
                          time_zone=args.time_zone, ozone_du=args.ozone)
    print(json.dumps(summary, indent=2) if args.json else format_sun_summary(summary))
    return 0


def _clock_with_zone(summary: dict, key: str) -> str:
    """``"06:12 Europe/London (UTC+01:00)"``, ``"06:12 UTC"`` or the polar-day text."""
    if not summary[key]:
        return "none (polar day or night)"
    stamp = summary[f"{key}_iso"]
    offset = "UTC" + stamp[-6:] if stamp[-6] in "+-" else "UTC"
    zone = summary["time_zone"]
    if zone.startswith("UTC"):
        return f"{summary[key]} {zone}"
    return f"{summary[key]} {zone} ({offset})"


def format_sun_summary(summary: dict) -> str:
    """Plain-text table of :func:`audit_lib.light.sun.sun_summary` for the command line."""
    minutes = int(round(summary["day_length_h"] * 60))
    rows = [
        ("date", summary["date"]),
        ("place", f"{summary['latitude_deg']:g} deg N, {summary['longitude_deg']:g} deg E"),
        ("sunrise", _clock_with_zone(summary, "sunrise")),
        ("solar noon", _clock_with_zone(summary, "solar_noon")),
        ("sunset", _clock_with_zone(summary, "sunset")),
        ("day length", f"{minutes // 60} h {minutes % 60:02d} min"),
        ("clear-sky UV Index at noon",
         f"{summary['peak_uvi']:.1f} (ozone {summary['ozone_du']:g} DU)"),
        ("clear-sky daily dose", f"{summary['daily_sed']:.1f} SED"),
    ]
    width = max(len(k) for k, _ in rows)
    lines = [f"{k.ljust(width)}  {v}" for k, v in rows]
    lines.append(
        "Sources: solar position from the Meeus/NOAA solar equations (within a minute of "
        "NREL SPA); Madronich 2007 clear-sky UV Index (no cloud, aerosol, altitude or snow)."
    )
    return "\n".join(lines)


def _add_fit_emitter_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "fit-emitter",
        help="fit peak, FWHM and asymmetry of an emission line to a measured spectrum",
    )
    p.add_argument("file", help="spectrum file (CSV, TSV or TXT): wavelength [nm] and irradiance")
    p.add_argument("--unit", help="irradiance unit if the header does not say it")
    p.add_argument("--shape", default="gaussian",
                   help="gaussian (default), lorentzian, sigmoid_gaussian or sigmoid_lorentzian")
    p.add_argument("--from-nm", type=float, default=250.0, help="start of the fitted range [nm]")
    p.add_argument("--to-nm", type=float, default=420.0, help="end of the fitted range [nm]")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(handler=_run_fit_emitter)


def _run_fit_emitter(args) -> int:
    import dataclasses
    import json


    fit = fit_line_shape(read_spectrum(args.file, unit=args.unit), shape=args.shape,
                         lo_nm=args.from_nm, hi_nm=args.to_nm)
    if args.json:
        print(json.dumps(dataclasses.asdict(fit), indent=2))
    else:
        print(f"shape              {fit.shape}")
        print(f"peak               {fit.peak_nm:.2f} nm")
        print(f"FWHM               {fit.fwhm_nm:.2f} nm")
        print(f"asymmetry          {fit.asymmetry:.3f} (short-side / long-side half width)")
        print(f"peak value         {fit.amplitude:.4g} W/m²/nm")
        print(f"fit residual (RMS) {fit.residual_rms:.3g} W/m²/nm "
              f"({100 * fit.relative_residual:.2f} % of the peak)")
    return 0


def _add_what_if_parser(subparsers) -> None:
    p = subparsers.add_parser(
        "what-if",
        help="copy the what-if workbook for a site into a folder and open it in JupyterLab",
    )
    p.add_argument("site", nargs="?", default=".",
                   help="the site folder (holding site.toml; default: this folder)")
    p.add_argument("--enclosure", metavar="ID", default="",
                   help="enclosure to plan (default: a blank enclosure)")
    p.add_argument("--out", metavar="DIR", default=".",
                   help="folder for the workbook copy (default: this folder)")
    p.add_argument("--no-launch", action="store_true",
                   help="only write the copy and print the command that opens it")
    p.set_defaults(handler=_run_what_if)


def _run_what_if(args) -> int:
    site = load_site(args.site)  # every problem of the site, before anything is written
    if args.enclosure:
        site.enclosure(args.enclosure)  # a clear error for an unknown id
    path, written = write_what_if_workbook(args.site, args.enclosure, args.out)
    print(f"wrote {path}" if written else f"kept the earlier copy {path} (delete it for a new one)")
    kernel = register_kernel()
    if kernel is not None:
        print(f"registered the Jupyter kernel 'Python (audit-lib)' in {kernel}")
    command = jupyterlab_command(path)
    if args.no_launch:
        print(shlex.join(command))
        return 0
    print("starting JupyterLab (Ctrl+C twice to stop it)")
    try:
        return subprocess.call(command, cwd=path.parent)
    except KeyboardInterrupt:
        return 130


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser with every subcommand registered."""
    parser = argparse.ArgumentParser(
        prog="light-audit",
        description="Audit the UV and visible lighting of reptile and amphibian enclosures.",
    )
    parser.add_argument("--version", action="version", version=f"%(prog)s {__version__}")
    subparsers = parser.add_subparsers(dest="command", required=True)
    for add in (_add_spectrum_parser, _add_check_parser, _add_new_site_parser, _add_run_parser,
                _add_import_parser, _add_forecast_parser, _add_field_sheet_parser,
                _add_sun_parser,
                _add_fit_emitter_parser, _add_what_if_parser):
        add(subparsers)
    return parser


def _show_warning(message, category, filename, lineno, file=None, line=None, *,
                  shown: set) -> None:
    text = f"warning: {message}"
    if text not in shown:  # a site loaded twice (e.g. sync, then forecast) warns once
        shown.add(text)
        print(text, file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    """Run ``light-audit``; return the exit status (2 for bad input)."""
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:  # usage errors (2, bad dates included) and --help (0)
        return int(exc.code or 0)
    with warnings.catch_warnings():
        warnings.simplefilter("always", AuditWarning)
        warnings.showwarning = functools.partial(_show_warning, shown=set())
        try:
            return int(args.handler(args) or 0)
        except (InputError, InputErrors) as exc:
            print(f"error: {exc}", file=sys.stderr)
            return 2
        except AuditError as exc:
            print(f"error: {exc}", file=sys.stderr)
            return 1
        except BrokenPipeError:
            # output piped into `head` and closed early: not an error of ours
            sys.stdout = open(os.devnull, "w")  # noqa: SIM115 - silence the flush at exit
            return 0


if __name__ == "__main__":
    sys.exit(main())
