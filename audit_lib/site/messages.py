"""Where a problem sits in ``site.toml`` and how to say it.

Maps TOML key paths (``enclosures[2].lamps[0].z_m``) to line numbers, and turns pydantic's
validation errors into :class:`audit_lib.errors.InputError` records with key path, line and a
hint (the allowed keys, the closest spelling).
"""

from __future__ import annotations

import difflib
import re
from pathlib import Path

from audit_lib.errors import InputError
from audit_lib.site import schema as s
from audit_lib.site.schema import ID_PATTERN, LAMP_KINDS, Record, SiteFile

_HEADER = re.compile(r"^\s*(\[\[?)\s*([A-Za-z0-9_.\-\s\"]+?)\s*\]\]?\s*(#.*)?$")
_KEYED = re.compile(r"^\[([A-Za-z0-9_]+)\] (.*)$", re.DOTALL)
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-]+)\s*=")


def locate_keys(text: str) -> dict[str, int]:
    """Map TOML key paths (``enclosures[2].lamps[0].z_m``) to 1-based line numbers.

    Understands the subset of TOML a site file uses: ``[table]`` and ``[[array]]`` headers
    with dotted names and ``key = value`` lines; keys inside inline tables get the line of
    their parent key.
    """
    lines: dict[str, int] = {}
    counts: dict[str, int] = {}
    table = ""
    for number, line in enumerate(text.splitlines(), start=1):
        header = _HEADER.match(line)
        if header:
            parts = [p.strip().strip('"') for p in header.group(2).split(".")]
            path = ""
            for i, part in enumerate(parts):
                name = f"{path}.{part}" if path else part
                last = i == len(parts) - 1
                if last and header.group(1) == "[[":
                    counts[name] = counts.get(name, 0) + 1
                    name = f"{name}[{counts[name] - 1}]"
                elif name in counts and not last:
                    name = f"{name}[{counts[name] - 1}]"
                path = name
            table = path
            lines.setdefault(table, number)
            continue
        key = _KEY.match(line)
        if key and not line.lstrip().startswith("#"):
            lines.setdefault(f"{table}.{key.group(1)}" if table else key.group(1), number)
    return lines


def key_path(loc: tuple) -> str:
    """Join a pydantic error location into a TOML key path, dropping union tags."""
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif part in LAMP_KINDS or part.startswith("function-"):
            continue
        else:
            out += f".{part}" if out else str(part)
    return out


def line_of(path_key: str, lines: dict[str, int]) -> int | None:
    """Return the line of a key path, or of its nearest parent that has one."""
    key = path_key
    while key:
        if key in lines:
            return lines[key]
        for suffix in ("_w_m2", "_lux", "_m", "_s"):
            if key.endswith(suffix) and key[: -len(suffix)] in lines:
                return lines[key[: -len(suffix)]]
        cut = max(key.rfind("."), key.rfind("["))
        key = key[:cut] if cut > 0 else ""
    return None


def _model_at(loc: tuple) -> type[Record] | None:
    """The record class that holds the last key of ``loc`` (for 'allowed keys' hints)."""
    model: type | None = SiteFile
    for part in loc[:-1]:
        if isinstance(part, int) or model is None:
            continue
        if part in LAMP_KINDS:

            model = {"led_array": s.LedArrayModel, "tube": s.TubeModel,
                     "point": s.PointLampModel, "from_readings": s.MeasuredLampModel}[part]
            continue
        field = getattr(model, "model_fields", {}).get(part)
        model = _record_in(field.annotation) if field else None
    return model


def _record_in(annotation) -> type[Record] | None:
    if isinstance(annotation, type) and issubclass(annotation, Record):
        return annotation
    for arg in getattr(annotation, "__args__", ()):
        found = _record_in(arg)
        if found is not None:
            return found
    return None


def _hint(error: dict, loc: tuple) -> str | None:
    kind = error["type"]
    if kind == "extra_forbidden":
        model = _model_at(loc)
        if model is None:
            return "remove this key or check its spelling"
        allowed = list(model.model_fields)
        close = difflib.get_close_matches(str(loc[-1]), allowed, n=1)
        lead = f"did you mean '{close[0]}'? " if close else ""
        return lead + "allowed keys here: " + ", ".join(allowed)
    if kind == "missing":
        return "add this key"
    if kind == "string_pattern_mismatch" and ID_PATTERN in str(error.get("ctx", {})):
        return "ids are used as file names: lower-case letters, digits, '-' and '_'"
    if kind == "literal_error":
        return None  # the message already lists the choices
    if kind.endswith("_type") or kind.endswith("_parsing"):
        return "check the value's type (numbers unquoted, text in quotes, dates YYYY-MM-DD)"
    return None


def schema_problems(exc, path: Path, lines: dict[str, int]) -> list[InputError]:
    """Turn a pydantic ``ValidationError`` into InputErrors with key paths and lines."""
    problems = []
    for error in exc.errors(include_url=False):
        loc = tuple(error["loc"])
        field = key_path(loc)
        message = error["msg"].removeprefix("Value error, ")
        hint = _hint(error, loc)
        keyed = _KEYED.match(message)
        if keyed:  # raised for one key by a record-level validator: "[key] message"
            field = f"{field}.{keyed.group(1)}" if field else keyed.group(1)
            message = keyed.group(2)
        if " || " in message:  # our validators write "message || hint"
            message, _, hint = message.partition(" || ")
            hint = hint or None
        if error["type"] == "string_pattern_mismatch" and ID_PATTERN in str(error.get("ctx")):
            message = f"{error.get('input')!r} is not a safe id"
        elif error["type"] == "extra_forbidden":
            message = f"unknown key '{loc[-1]}'"
        elif error["type"] == "missing":
            message = "required key is missing"
        problems.append(InputError(message, path=path, line=line_of(field, lines),
                                   field=field, hint=hint))
    return problems
