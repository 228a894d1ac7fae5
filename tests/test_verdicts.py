import datetime as dt

import pytest

from audit_lib.errors import InputError
from audit_lib.judge.targets import NO_DATA, WITHIN, read_zone_table, species_targets
from audit_lib.judge.verdicts import (
    ATTENTION,
    MEETS,
    assess_enclosure,
    overall_state,
    recommend_actions,
)


@pytest.fixture
def zones():
    return read_zone_table()


@pytest.fixture
def species():
    return species_targets()


def test_all_within_meets_targets(zones, species):
    """Zone 4 ranges (Ferguson et al. 2010, from memory): figures inside every range give
    'meets targets' and the verdict notes that the zone values are from memory."""
    v = assess_enclosure("viv-1", species["bearded-dragon"], zones[4], basking_max_uvi=6.0,
                         mean_uvi=3.0, refuge_share=0.4, light_hours=12.0,
                         short_uvb_fraction=0.0, keeper_limit_s=7200.0)
    assert v.state == MEETS
    assert all(c.state == WITHIN for c in v.checks)
    assert v.actions == ()
    assert any("from memory" in n for n in v.notes)
    assert any("demo data" in n for n in v.notes)


def test_missing_core_figure_gives_not_enough_data(zones, species):
    """Without the basking maximum there is no verdict on the zone (project rule)."""
    v = assess_enclosure("viv-1", species["corn-snake"], zones[2], mean_uvi=0.8)
    assert v.state == NO_DATA
    assert v.checks[0].state == NO_DATA


def test_out_of_range_needs_attention_and_counts(zones, species):
    """Boundary just above the zone 1 maximum 1.4 (from memory) flips the verdict."""
    ok = assess_enclosure("v", species["leopard-gecko"], zones[1], basking_max_uvi=1.4,
                          mean_uvi=0.3, refuge_share=0.5, light_hours=12)
    bad = assess_enclosure("v", species["leopard-gecko"], zones[1], basking_max_uvi=1.41,
                           mean_uvi=0.3, refuge_share=0.5, light_hours=12)
    assert ok.state == MEETS and bad.state == ATTENTION
    assert bad.reason.startswith("1 of 6 checks are out of range: basking UV Index maximum")


def test_zone_mismatch_is_an_error(zones, species):
    """A species assigned to zone 1 cannot be judged against zone 4 (input check)."""
    with pytest.raises(InputError, match="zone: species 'leopard-gecko' is in zone 1, not 4"):
        assess_enclosure("v", species["leopard-gecko"], zones[4])


def _inverse_square_search(uvi_now, h_now, surface_z=0.5, top=1.0):
    """Point-source inverse-square law E ~ 1/d^2 (lighting handbooks; photometric distance
    law) as a bounded height search: the height above the surface giving the aimed UVI,
    refused above the enclosure top ``top`` (lamp face above the floor)."""
    from types import SimpleNamespace

    def search(uvi_range, aim):
        h = h_now * (uvi_now / aim) ** 0.5
        ok = surface_z + h <= top
        best = surface_z + h if ok else top
        return SimpleNamespace(
            lamp="uv-1", achievable=ok, suggested_height_m=best,
            suggested_uvi=aim if ok else uvi_now * (h_now / (top - surface_z)) ** 2,
            present_height_m=surface_z + h_now, surface_z_m=surface_z, top_m=top,
            side="" if ok else "above", heights_m=[surface_z + 0.05, top])

    return search


def test_height_action_uses_the_scene_function(zones, species):
    """Inverse-square law (photometric distance law): 11.2 UVI at 0.30 m to the zone 4 mid
    maximum 7.0 UVI needs 0.30 x sqrt(11.2 / 7.0) = 0.379 m, i.e. raise by 8 cm; the action
    carries the lamp and its new height above the floor (0.5 m surface + 0.379 m)."""
    v = assess_enclosure("v", species["bearded-dragon"], zones[4], basking_max_uvi=11.2,
                         height_search=_inverse_square_search(11.2, 0.30), lamp="uv-1")
    move = [a for a in v.actions if a.kind == "move lamp"]
    assert len(move) == 1
    assert move[0].value == pytest.approx(0.30 * (11.2 / 7.0) ** 0.5 - 0.30)
    assert move[0].height_m == pytest.approx(0.5 + 0.30 * (11.2 / 7.0) ** 0.5)
    assert move[0].lamp == "uv-1" and move[0].check == "basking_uvi_max"
    assert move[0].text.startswith("Raise the lamp uv-1 by 8 cm (from 0.30 m to 0.38 m")


def test_height_the_enclosure_lacks_is_said_plainly(zones, species):
    """Bounded search: 0.379 m above a 0.5 m surface would put the lamp at 0.88 m, above a
    0.75 m top; the action says no height fixes it and moves nothing (inverse-square law)."""
    v = assess_enclosure("v", species["bearded-dragon"], zones[4], basking_max_uvi=11.2,
                         height_search=_inverse_square_search(11.2, 0.20, 0.5, 0.75),
                         lamp="uv-1")
    assert not [a for a in v.actions if a.kind == "move lamp"]
    (change,) = [a for a in v.actions if a.kind == "change lamp"]
    assert change.height_m is None and change.check == "basking_uvi_max"
    assert change.text.startswith("No mount height of the lamp uv-1 up to the top of the "
                                  "enclosure (0.75 m above the floor")
    assert "weaker lamp" in change.text


def test_screen_refuge_photoperiod_keeper_and_replacement_actions(zones, species):
    """Computed actions: a screen passing 50 % halves the UVI (transmission definition), so
    removing it doubles 0.6 to 1.2; refuge area = (0.25 - 0.05) x 0.8 m2 = 0.16 m2; the
    photoperiod moves to the nearer range end; a forecast date before the audit means now."""
    v = assess_enclosure(
        "v", species["corn-snake"], zones[2], basking_max_uvi=0.6,
        refuge_share=0.05, light_hours=15.5, keeper_limit_s=300.0,
        screen_transmission=0.5, floor_area_m2=0.8,
        replacement_date=dt.date(2026, 11, 1), audit_date=dt.date(2026, 12, 2), lamp="uv-2",
    )
    kinds = {a.kind: a for a in v.actions}
    assert kinds["remove screen"].value == pytest.approx(1.2)
    assert kinds["add refuge"].value == pytest.approx(0.16)
    assert kinds["change photoperiod"].value == pytest.approx(-1.5)
    assert kinds["change photoperiod"].text.startswith("Shorten the light period by 1.5 h")
    assert kinds["limit keeper time"].value == pytest.approx(5.0)
    assert kinds["replace lamp"].text.startswith("Replace lamp uv-2 now")
    assert kinds["replace lamp"].value == -31


def test_emitter_action_and_future_replacement(zones, species):
    """Emitter count scales UVI linearly (superposition of identical emitters): 12 emitters
    giving 2.0 UVI need round(12 x 5.15 / 2.0) = 31 for the zone 3 mid maximum 5.15."""
    checks = assess_enclosure("v", species["hermanns-tortoise"], zones[3],
                              basking_max_uvi=2.0).checks
    actions = recommend_actions(checks, emitters_for_uvi=lambda u: round(12 * u / 2.0),
                                current_emitters=12, replacement_date=dt.date(2027, 6, 1),
                                audit_date=dt.date(2026, 12, 1))
    kinds = {a.kind: a for a in actions}
    assert kinds["change emitters"].value == 31
    assert kinds["replace lamp"].text.startswith("Plan to replace the lamp by 2027-06-01")


def test_overall_state_of_no_checks():
    """Nothing assessed is not a pass (project rule: a partial run is never a verdict)."""
    assert overall_state([])[0] == NO_DATA


def test_short_wave_tolerance_is_a_site_setting(zones, species):
    """The short-wave tolerance is a project default, not a published limit (ASTM G173
    sunlight share ~4e-9 plus tolerance): a 2 % share fails at 0.1 % and passes at 5 %."""
    kwargs = dict(basking_max_uvi=6.0, short_uvb_fraction=0.02, sun_short_uvb_fraction=4e-9)
    strict = assess_enclosure("v", species["bearded-dragon"], zones[4], **kwargs)
    loose = assess_enclosure("v", species["bearded-dragon"], zones[4],
                             short_uvb_tolerance=0.05, **kwargs)
    assert strict.checks[4].state == "above range" and loose.checks[4].state == WITHIN


def test_meets_targets_names_checks_without_data(zones, species):
    """Readings alone (a basking UV Index meter reading, no time budget): the verdict can be
    made and says which checks lacked data (project rule: verdicts carry reasons)."""
    v = assess_enclosure("v", species["corn-snake"], zones[2], basking_max_uvi=2.0)
    assert v.state == MEETS
    assert v.reason.startswith("The one check made is within range (5 could not be made")
    v = assess_enclosure("v", species["corn-snake"], zones[2], basking_max_uvi=2.0,
                         light_hours=12.0)
    assert v.reason.startswith("All 2 checks made are within range (4 could not be made")
    assert "mean UV Index of the animal" in v.reason
