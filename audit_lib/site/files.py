"""Every file a site names: where it is, and whether the audit's own reader can read it.

``site.toml`` names files relative to the site folder: lamp spectra, screen transmission
spectra, meter spectral responses and a logo. :func:`file_problems` checks each of them up
front, with the very reader the audit uses later, so that a corrupt file is reported by
``light-audit check`` instead of failing in the middle of a batch. A path that leaves the
site folder is refused and never opened (one problem); a missing file is one problem; an
unreadable file is one problem carrying the reader's own message and hint.
"""

from __future__ import annotations

import mimetypes
import warnings
from collections.abc import Callable
from pathlib import Path

from audit_lib.errors import InputError
from audit_lib.light.meters import read_meter_response
from audit_lib.light.spectra import read_spectrum, read_transmittance
from audit_lib.site.messages import line_of
from audit_lib.site.schema import SiteFile

#: Image types a report can embed as its logo, and the largest logo file [bytes].
LOGO_TYPES = ("image/png", "image/jpeg", "image/gif", "image/svg+xml")
LOGO_MAX_BYTES = 2_000_000


def read_logo(path: str | Path) -> tuple[str, bytes]:
    """Read a logo image for embedding in reports.

    Parameters
    ----------
    path : str or Path
        PNG, JPEG, GIF or SVG file of at most :data:`LOGO_MAX_BYTES`.

    Returns
    -------
    (str, bytes)
        The MIME type and the file's bytes.

    Raises
    ------
    InputError
        Another image type, or a file too large.
    """
    path = Path(path)
    mime = mimetypes.guess_type(path.name)[0] or ""
    if mime not in LOGO_TYPES:
        raise InputError(f"logo must be a PNG, JPEG, GIF or SVG image, not {mime or 'unknown'!r}",
                         path=path, hint="save the logo as .png, .jpg, .gif or .svg")
    data = path.read_bytes()
    if len(data) > LOGO_MAX_BYTES:
        raise InputError(f"logo is {len(data)} bytes; the limit is {LOGO_MAX_BYTES}", path=path,
                         hint="save a smaller image (a few hundred pixels wide is enough)")
    return mime, data


#: What each kind of named file is called in messages, and the audit's reader for it.
READERS: dict[str, tuple[str, Callable]] = {
    "spectrum": ("spectrum", read_spectrum),
    "transmission_spectrum": ("transmission spectrum", read_transmittance),
    "spectral_response": ("meter response", read_meter_response),
    "logo": ("logo", read_logo),
}


def named_files(site: SiteFile) -> list[tuple[str, str, str]]:
    """Every file ``site.toml`` names: ``(key path, file name, kind)`` in file order.

    ``kind`` is a key of :data:`READERS`. Items that failed the schema (None in a partial
    site, see :func:`audit_lib.site.checks.partial_site`) are skipped.
    """
    found = []
    if site.site is not None and site.site.logo:
        found.append(("site.logo", site.site.logo, "logo"))
    for i, meter in enumerate(site.meters):
        if meter is not None and meter.spectral_response:
            found.append((f"meters[{i}].spectral_response", meter.spectral_response,
                          "spectral_response"))
    for i, model in enumerate(site.lamp_models):
        if model is not None and model.spectrum:
            found.append((f"lamp_models[{i}].spectrum", model.spectrum, "spectrum"))
    for i, enc in enumerate(site.enclosures):
        for j, screen in enumerate(enc.screens if enc is not None else ()):
            if screen.transmission_spectrum:
                found.append((f"enclosures[{i}].screens[{j}].transmission_spectrum",
                              screen.transmission_spectrum, "transmission_spectrum"))
    return found


def inside_folder(root: Path, name: str) -> Path | None:
    """The file ``name`` of the site folder ``root``, or None if the path leaves the folder."""
    target = (root / name).resolve()
    return target if root.resolve() in target.parents else None


def file_problems(site: SiteFile, root: Path, path: Path, lines: dict[str, int]
                  ) -> list[InputError]:
    """Check every file the site names; return one problem per bad file.

    Parameters
    ----------
    site : SiteFile
        The records (possibly partial).
    root : Path
        The site folder.
    path : Path
        ``site.toml`` (where the problems are reported).
    lines : dict
        Key path -> line of ``site.toml`` (:func:`audit_lib.site.messages.locate_keys`).
    """
    problems = []
    for key, name, kind in named_files(site):
        what, reader = READERS[kind]
        where = {"path": path, "line": line_of(key, lines), "field": key}
        target = inside_folder(root, name)
        if target is None:
            problems.append(InputError(f"file {name!r} lies outside the site folder", **where,
                                       hint="give a path relative to the site folder, "
                                            "without '..'"))
        elif not target.is_file():
            problems.append(InputError(f"file {name!r} does not exist", **where,
                                       hint="paths are relative to the site folder"))
        else:
            problems += _read_problem(reader, target, name, what, where)
    return problems


def _read_problem(reader, target: Path, name: str, what: str, where: dict) -> list[InputError]:
    """Read one file with the audit's reader; its error becomes one problem (hint once)."""
    try:
        with warnings.catch_warnings():  # the audit shows the reader's warnings, not check
            warnings.simplefilter("ignore")
            reader(target)
    except InputError as exc:
        place = name + (f":{exc.line}" if exc.line is not None else "")
        field = f"{exc.field}: " if exc.field else ""
        return [InputError(f"cannot read {what}: {place}: {field}{exc.message}", **where,
                           hint=exc.hint)]
    except (OSError, ValueError) as exc:  # UnicodeDecodeError is a ValueError
        return [InputError(f"cannot read {what}: {name}: {exc}", **where,
                           hint="save the file again, as UTF-8 text")]
    return []
