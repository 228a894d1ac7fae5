import json

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
