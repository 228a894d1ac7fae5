"""Collect the library's warnings while a report is computed and show them as notes.

A warning in a report is something the reader must see (a spectrum clipped, a range not
covered, a distance law used beyond its readings), so it is shown as a note, never as a
stderr box with file paths.
"""

from __future__ import annotations

import html
import warnings
from contextlib import contextmanager

from audit_lib.errors import AuditWarning


class Notes(list):
    """The messages collected by :func:`collect_notes`, renderable as HTML in a notebook."""

    def _repr_html_(self) -> str:
        if not self:
            return ""
        items = "".join(f"<li>{html.escape(str(n))}</li>" for n in self)
        return f'<div class="audit-notes"><strong>Notes</strong><ul>{items}</ul></div>'

    def _repr_markdown_(self) -> str:
        return "\n".join(f"- {n}" for n in self)


@contextmanager
def collect_notes():
    """Record every :class:`AuditWarning` raised inside the block.

    Yields a :class:`Notes` list of the warning messages (deduplicated, in order).
    """
    notes = Notes()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AuditWarning)
        yield notes
    for warning in caught:
        if issubclass(warning.category, AuditWarning):
            message = str(warning.message)
            if message not in notes:
                notes.append(message)
        else:
            warnings.showwarning(warning.message, warning.category, warning.filename,
                                 warning.lineno)
