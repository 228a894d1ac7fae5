"""The cautions every report, the index page and the workbooks carry, in the project's words.

Sources: the project's design (safety section); the hazards named follow ICNIRP 2004
(actinic UV exposure limits for eyes and skin) and IEC 62471 (photobiological safety of
lamps); electrical and veterinary points are common practice.
"""

from __future__ import annotations

#: One sentence per caution, in the order shown.
CAUTIONS = (
    "These figures are guidance worked out from the readings, lamp data and models supplied; "
    "they are not a guarantee of safe or sufficient lighting for any animal.",
    "UV meters drift and need regular calibration; broadband meters read narrow-band LED "
    "lamps wrongly unless their readings are corrected for the meter's spectral response.",
    "Protect your eyes and skin when measuring close to lamps: UV lamps can burn skin and "
    "injure eyes of people and animals within minutes at short distances.",
    "Lamp fittings are mains electrical equipment: have them installed, moved and checked by "
    "a qualified person, and switch off before touching a fitting.",
    "Lamps and fittings get hot: keep heat and burn risks in mind for both keepers and "
    "animals, and guard lamps animals can reach.",
    "Decisions about an animal's health, diet and lighting belong with its veterinarian; "
    "follow local regulations and licensed professional practice.",
)


def cautions_markdown() -> str:
    """Return the cautions as a Markdown bullet list (for display in a workbook)."""
    return "\n".join(f"- {text}" for text in CAUTIONS)


def show_cautions() -> None:
    """Display the cautions in a notebook (Markdown output)."""
    from IPython.display import Markdown, display

    display(Markdown("**Cautions**\n\n" + cautions_markdown()))
