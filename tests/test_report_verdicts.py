from audit_lib.judge.targets import read_zone_table, species_targets
from audit_lib.judge.verdicts import assess_enclosure
from audit_lib.report.style import STATE_COLOURS
from audit_lib.report.verdicts import style_verdict_table, verdict_frame, verdict_html


def _verdict():
    zones = read_zone_table()
    species = species_targets([{"id": "odd<script>", "scientific_name": "A & <b>B</b>",
                                "zone": 4, "uv_provision": "basking_patch"}])
    return assess_enclosure("viv<1>", species["odd<script>"], zones[4], basking_max_uvi=11.2,
                            mean_uvi=3.0, refuge_share=0.1, light_hours=12.0,
                            floor_area_m2=0.72)


def test_frame_has_one_row_per_check_with_states_in_words():
    """Verdicts are records (conventions.md); states are words plus a symbol, never colour
    alone (WCAG 2.1 success criterion 1.4.1, use of colour)."""
    frame = verdict_frame(_verdict())
    assert len(frame) == 6
    assert frame.loc[0, "state"] == "\u25b2 above range"
    assert frame.loc[0, "target"] == "4.5 to 9.5"
    assert frame.loc[5, "state"] == "? not enough data"
    assert frame.loc[0, "status"] == "from memory"


def test_html_escapes_user_text():
    """HTML escaping of user-supplied text (Python html.escape; OWASP output encoding):
    ids and names from site files never become markup."""
    text = verdict_html(_verdict())
    assert "<script>" not in text and "&lt;script&gt;" in text
    assert "viv&lt;1&gt;" in text
    assert "odd&lt;script&gt;" in text
    assert "Recommended actions" in text and "Add at least 0.11 m2" in text
    assert "from memory" in text


def test_styler_escapes_and_colours_states():
    """pandas Styler.format(escape='html') escapes cells; state cells carry the Okabe-Ito
    colour of their state (Okabe & Ito 2008)."""
    html = style_verdict_table(_verdict()).to_html()
    assert "<script>" not in html
    assert STATE_COLOURS["above range"] in html
