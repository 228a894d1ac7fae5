"""Client-clean text: no absolute path of the auditor's machine in a page handed to a client.

Known folders are replaced by what the reader knows them as (the site folder by its name, the
output folder by nothing, so paths read relative to it); any other absolute path left in a
message (a traceback's library file, a temporary folder) is cut to its file name.
"""

from __future__ import annotations

import os
import re

# absolute POSIX paths under the usual top-level folders, and Windows drive paths; a path
# must start a token, so base64 data and URLs ("file:///...", "https://...") are left alone
_ABSOLUTE = re.compile(
    r"(?<![\w.:/=+-])(?:/(?:home|root|work|tmp|var|opt|usr|mnt|srv|private|Users|Volumes|media"
    r"|data|scratch)(?:/[\w.@%+~-]+)+|[A-Za-z]:\\(?:[\w.@%+~ -]+\\)*[\w.@%+~-]+)")


def strip_machine_paths(text: str, known: dict | None = None) -> str:
    """Return ``text`` with every absolute machine path made relative or cut to its name.

    Parameters
    ----------
    text : str
        A page, a message or a note.
    known : dict of str to str, optional
        Folder (absolute) to what it is shown as: e.g. ``{"/data/a/sites/park": "park",
        "/data/a/out": ""}``. A path inside a known folder keeps its part below it
        (``park/readings/2026.csv``, ``reports/rh-01.html``).
    """
    for folder, label in sorted((known or {}).items(), key=lambda kv: -len(str(kv[0]))):
        folder = os.fspath(folder).rstrip("/\\")
        if not folder:
            continue
        for sep in ("/", "\\"):
            text = text.replace(folder + sep, f"{label}{sep}" if label else "")
        text = re.sub(re.escape(folder) + r"(?![\w.-])", label or ".", text)
    return _ABSOLUTE.sub(lambda m: re.split(r"[/\\]", m.group(0))[-1], text)
