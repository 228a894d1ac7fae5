import json
import re

from audit_lib.run.cli import main


def test_sun_command_prints_noaa_day_length(capsys):
    """NOAA GML day length at the equator at the March equinox: about 12 h 07 min (reference
    README, with refraction); the Madronich (2007) noon UVI there at 300 DU is near 12.5."""
    assert main(["sun", "--latitude", "0", "--date", "2026-03-20"]) == 0
    out = capsys.readouterr().out
    assert "day length                  12 h 07 min" in out
    assert "Madronich 2007" in out


def test_sun_command_json(capsys):
    """51.5 N at the June solstice: 16 h 38 min (NOAA GML, reference README)."""
    assert main(["sun", "--latitude", "51.5", "--longitude", "-0.1", "--date", "2026-06-21",
                 "--utc-offset", "1", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert abs(data["day_length_h"] * 60 - (16 * 60 + 38)) < 1.5
    assert data["sunrise"] < data["solar_noon"] < data["sunset"]


def test_sun_command_bad_input_exits_2(capsys):
    """Bad input: status 2 and one message naming the field (project CLI rule)."""
    assert main(["sun", "--latitude", "0", "--date", "20.3.2026"]) == 2
    assert "--date: '20.3.2026' is not a date" in capsys.readouterr().err
    assert main(["sun", "--latitude", "91", "--date", "2026-03-20"]) == 2
    assert "latitude_deg: latitude 91.0 is outside" in capsys.readouterr().err


def test_sun_command_labels_times_with_the_iana_zone(capsys):
    """IANA time zone database through Python's zoneinfo: London keeps British Summer Time
    (UTC+01:00) in June and GMT in December; the local times are the UTC times moved by it."""
    assert main(["sun", "--latitude", "51.5", "--longitude", "-0.1", "--date", "2026-06-21",
                 "--time-zone", "Europe/London"]) == 0
    out = capsys.readouterr().out
    assert re.search(r"sunrise\s+04:4\d Europe/London \(UTC\+01:00\)", out)
    assert main(["sun", "--latitude", "51.5", "--longitude", "-0.1", "--date", "2026-12-21",
                 "--time-zone", "Europe/London", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["time_zone"] == "Europe/London"
    assert data["sunrise_iso"].endswith("+00:00")
    assert main(["sun", "--latitude", "51.5", "--longitude", "-0.1", "--date", "2026-12-21",
                 "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["sunrise"] == data["sunrise"]


def test_sun_command_says_utc_or_the_given_offset(capsys):
    """Without a zone the times are labelled UTC, or with the offset given (ISO 8601 form)."""
    assert main(["sun", "--latitude", "0", "--date", "2026-03-20"]) == 0
    assert re.search(r"solar noon\s+12:0\d UTC\n", capsys.readouterr().out)
    assert main(["sun", "--latitude", "0", "--date", "2026-03-20", "--utc-offset", "-5.5"]) == 0
    assert re.search(r"solar noon\s+06:3\d UTC-05:30\n", capsys.readouterr().out)


def test_sun_command_rejects_unknown_zone_and_both_forms(capsys):
    """Bad input: status 2 and one message naming the field (project CLI rule)."""
    assert main(["sun", "--latitude", "0", "--date", "2026-03-20", "--time-zone", "Mars/Base"]) == 2
    assert "unknown time zone 'Mars/Base'" in capsys.readouterr().err
    assert main(["sun", "--latitude", "0", "--date", "2026-03-20", "--time-zone", "UTC",
                 "--utc-offset", "1"]) == 2
    assert "not both" in capsys.readouterr().err
