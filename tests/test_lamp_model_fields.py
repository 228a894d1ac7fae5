"""Site-file fields of lamp models added by issue 12: whole-fitting references of LED arrays,
general lighting lamps, and the retired reflector factor."""

from __future__ import annotations

import warnings

import pytest
from pydantic import ValidationError

from audit_lib.pipeline.assemble import build_lamp
from audit_lib.site.schema import IgnoredKeyWarning, LedArrayModel, TubeModel
from audit_lib.sources.axis import quantity_on_axis

UVB = {"id": "uvb310", "peak_nm": 310, "fwhm_nm": 12, "beam_angle_deg": 100}
WHITE = {"id": "white", "peak_nm": 450, "fwhm_nm": 20}
LAYOUT = [{"emitter": "uvb310", "x": f"{x} cm", "y": "0 cm"} for x in (-3, -1, 1, 3)]


def _array(**changes):
    record = {"kind": "led_array", "id": "bar", "name": "Bar", "emitters": [UVB],
              "layout": LAYOUT}
    record.update(changes)
    return LedArrayModel.model_validate(record)


def test_whole_fitting_reference_reproduces_its_reading():
    """A lamp model's reference is one reading of the whole fitting on its axis: the built
    lamp gives that UV Index there (superposition of its four emitters)."""
    model = _array(reference={"distance": "25 cm", "uvi": 1.5})
    lamp = build_lamp(None, model)
    assert quantity_on_axis(lamp, "uvi", 0.25) == pytest.approx(1.5, rel=1e-9)


def test_per_emitter_reference_stays_per_emitter():
    """The emitter's own reference keeps its meaning (one emitter on its own axis): four
    emitters each read 0.4 UVI at 20 cm give about 4 x 0.4 on the fitting's axis (they sit
    within 3 cm, so slightly less than 1.6 by the inverse-square and cosine laws)."""
    model = _array(emitters=[{**UVB, "reference": {"distance": "20 cm", "uvi": 0.4}}])
    total = quantity_on_axis(build_lamp(None, model), "uvi", 0.2)
    assert 1.45 < total < 1.6


def test_outputs_must_be_given_once():
    """Without a fitting reference each emitter type needs an output; with it and several
    types, each type still needs one for their ratio; both forms on one emitter are refused."""
    with pytest.raises(ValidationError, match=r"emitter\(s\) uvb310 give no output"):
        _array()
    with pytest.raises(ValidationError, match="for their ratio"):
        _array(emitters=[UVB, {**WHITE, "flux_w": 0.5}], reference={"distance": "20 cm",
                                                                    "uvi": 1.0})
    with pytest.raises(ValidationError, match="not both"):
        _array(emitters=[{**UVB, "flux_w": 0.1, "reference": {"distance": "20 cm", "uvi": 1}}])


def test_general_lighting_flag_defaults_to_false():
    """Lamps are classified at 200 mm unless marked general lighting (IEC 62471, from memory)."""
    assert _array(reference={"distance": "25 cm", "uvi": 1.5}).general_lighting is False
    assert _array(reference={"distance": "25 cm", "uvi": 1.5},
                  general_lighting=True).general_lighting is True


def test_reflector_factor_is_accepted_but_ignored_with_a_note():
    """Older site files with reflector_factor still load; a note says the key is ignored
    because the reading under the fitting already holds the reflector's gain."""
    record = {"kind": "tube", "id": "t5", "name": "T5", "length": "60 cm",
              "reference": {"distance": "30 cm", "uvi": 3.0},
              "bands": [{"peak_nm": 313, "fwhm_nm": 22}]}
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        TubeModel.model_validate(record)
    with pytest.warns(IgnoredKeyWarning, match="reflector_factor is ignored"):
        TubeModel.model_validate({**record, "reflector_factor": 1.8})
