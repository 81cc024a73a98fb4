"""Settings file: schema, defaults, remapping, unknown keys."""
from __future__ import annotations

import pickle
from pathlib import Path

import pytest

from dxf2frame.errors import SettingsError
from dxf2frame.settings import OUTPUT_LAYER_KEYS, Settings, load_settings

FULL = """\
[units]
force = "kN"
length = "m"

[geometry]
snap = "5 mm"
arc_segments = 0

[limits]
max_file_mb = 200
max_entities = 500000

[layers]
frame = "FRAME"
supports = "SUPPORTS"
connections = "CONNECTIONS"
loads = "LOADS"

[blocks]
pin = "SUP-PIN"

[attributes]
P = "FORCE_VALUE"

[output_layers]
axial = "RESULT-AXIAL"
shear = "RESULT-SHEAR"
moment = "RESULT-MOMENT"
reactions = "RESULT-REACTIONS"
deflected = "RESULT-DEFLECTED"
notes = "RESULT-NOTES"
mechanism = "RESULT-MECHANISM"
changes = "RESULT-CHANGES"

[sections.default]
E = "200 GPa"
A = "5000 mm**2"
I = "8e7 mm**4"

[sections."FRAME-BEAMS"]
name = "beam"
E = "200 GPa"
A = "7600 mm**2"
I = "2.5e8 mm**4"

[combinations]
builtin = ["LRFD", "ASD"]
extra = ["1.2D + 1.6L + 0.5S"]
draw = "envelope:LRFD"

[deflection]
limit = 240
[deflection.layers]
"FRAME-BEAMS" = 360

[compare]
threshold = 0.05
"""


def write(tmp_path: Path, text: str, name: str = "dxf2frame.toml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def test_defaults():
    s = Settings()
    assert s.force_unit == "kN" and s.length_unit is None and s.snap is None
    assert s.section_for("FRAME") is None  # no sections given: determinate frames need none
    assert s.block_kind("pin") == "PIN" and s.block_kind("Roller") == "ROLLER"
    assert s.block_kind("TITLEBLOCK") is None
    assert s.attr("p") == "P"
    assert s.is_frame_layer("FRAME") and s.is_frame_layer("frame-beams")
    assert not s.is_frame_layer("FRAMES") and not s.is_frame_layer("SUPPORTS")
    assert s.is_result_layer("RESULT-MOMENT") and s.is_result_layer("result-notes")
    assert not s.is_result_layer("FRAME")
    assert s.output_layer("moment") == "RESULT-MOMENT"
    assert set(OUTPUT_LAYER_KEYS) == {
        "axial", "shear", "moment", "reactions", "deflected", "notes", "mechanism", "changes", "tags",
        "buckling", "moving", "influence",
    }
    assert s.combinations_builtin == ("LRFD", "ASD")
    assert s.deflection_limit == 240  # span/240, common practice
    assert s.compare_threshold == 0.05


def test_full_schema_file(tmp_path):
    s = load_settings(write(tmp_path, FULL))
    assert s.source == tmp_path / "dxf2frame.toml"
    assert s.length_unit == "m" and s.snap == "5 mm"
    beam = s.section_for("frame-beams")
    # 1 mm = 1e-3 m, G = 1e9 (SI prefixes): 7600 mm**2 = 7.6e-3 m**2, 2.5e8 mm**4 = 2.5e-4 m**4
    assert beam.E == pytest.approx(200e9, rel=1e-12)
    assert beam.A == pytest.approx(7.6e-3, rel=1e-12)
    assert beam.I == pytest.approx(2.5e-4, rel=1e-12)
    assert beam.name == "beam"
    col = s.section_for("FRAME-COLUMNS")  # unlisted layer -> default section
    assert col.A == pytest.approx(5e-3, rel=1e-12)  # 5000 mm**2 (SI prefixes)
    assert col.I == pytest.approx(8e-5, rel=1e-12)  # 8e7 mm**4 (SI prefixes)
    assert s.block_kind("sup-pin") == "PIN"
    assert s.block_kind("PIN") is None  # remapped: the old name no longer counts
    assert s.attr("P") == "FORCE_VALUE" and s.canonical_tag("force_value") == "P"
    assert s.canonical_tag("P") is None  # remapped: the old tag no longer counts
    assert s.canonical_tag("CASE") == "CASE"
    assert s.combinations_extra == ("1.2D + 1.6L + 0.5S",)
    assert s.deflection_limit_for("FRAME-BEAMS") == 360 and s.deflection_limit_for("FRAME") == 240
    assert s.deflection_limits() == {"limit": 240.0, "layers": {"FRAME-BEAMS": 360.0}}


def test_found_beside_drawing(tmp_path):
    write(tmp_path, '[units]\nforce = "kip"\nlength = "ft"\n')
    s = load_settings(None, drawing=tmp_path / "frame.dxf")
    assert s.force_unit == "kip" and s.length_unit == "ft"
    other = tmp_path / "sub"
    other.mkdir()
    assert load_settings(None, drawing=other / "frame.dxf") == Settings()


def test_explicit_path_must_exist(tmp_path):
    with pytest.raises(SettingsError, match="not found"):
        load_settings(tmp_path / "nope.toml")


def test_invalid_toml(tmp_path):
    with pytest.raises(SettingsError, match="TOML"):
        load_settings(write(tmp_path, "[units\nforce = 1"))


@pytest.mark.parametrize(
    "text, key",
    [
        ("[unit]\nforce = 'kN'", "unit"),
        ("[units]\nforse = 'kN'", "units.forse"),
        ("[geometry]\nsnapp = 1", "geometry.snapp"),
        ("[limits]\nmax_mb = 1", "limits.max_mb"),
        ("[layers]\nbeams = 'B'", "layers.beams"),
        ("[blocks]\npinn = 'P'", "blocks.pinn"),
        ("[attributes]\nPP = 'X'", "attributes.PP"),
        ("[output_layers]\nmoments = 'X'", "output_layers.moments"),
        ("[sections.default]\nE = '1 GPa'\nA = '1 m**2'\nI = '1 m**4'\nJ = '1 m**4'", "sections.default.J"),
        ("[combinations]\nbuiltins = []", "combinations.builtins"),
        ("[deflection]\nlimits = 3", "deflection.limits"),
        ("[compare]\nthresh = 1", "compare.thresh"),
    ],
)
def test_unknown_keys_are_errors(tmp_path, text, key):
    with pytest.raises(SettingsError) as exc:
        load_settings(write(tmp_path, text))
    assert exc.value.key == key
    assert key.split(".")[-1] in str(exc.value)


@pytest.mark.parametrize(
    "data, key",
    [
        ({"units": {"force": "m"}}, "units.force"),
        ({"units": {"length": "kN"}}, "units.length"),
        ({"geometry": {"snap": "5 kN"}}, "geometry.snap"),
        ({"geometry": {"arc_segments": -1}}, "geometry.arc_segments"),
        ({"sections": {"default": {"E": 200e9, "A": "1 m**2", "I": "1 m**4"}}}, "sections.default.E"),
        ({"sections": {"default": {"E": "200", "A": "1 m**2", "I": "1 m**4"}}}, "sections.default.E"),
        ({"sections": {"default": {"E": "200 kN", "A": "1 m**2", "I": "1 m**4"}}}, "sections.default.E"),
        ({"sections": {"FRAME-X": {"E": "200 GPa"}}}, "sections.FRAME-X"),
        ({"combinations": {"builtin": ["LRFD", "EC0"]}}, "combinations.builtin"),
        ({"deflection": {"limit": 0}}, "deflection.limit"),
        ({"deflection": {"limit": 1 / 360}}, "deflection.limit"),   # the ratio, not its n
        ({"deflection": {"layers": {"FRAME-BEAMS": 0.004}}}, "deflection.layers.FRAME-BEAMS"),
        ({"drift": {"limit": 0.0025}}, "drift.limit"),
        ({"compare": {"threshold": 5}}, "compare.threshold"),      # 5 % written as 5
        ({"compare": {"threshold": "five %"}}, "compare.threshold"),
        ({"drift": {"limit": "1/400"}}, "drift.limit"),
        ({"deflection": {"limit": "h/360"}}, "deflection.limit"),
        ({"blocks": {"pin": "ROLLER"}}, "blocks"),
        ({"output_layers": {"moment": "FRAME-M"}}, "output_layers.moment"),
    ],
)
def test_invalid_values(data, key):
    with pytest.raises(SettingsError) as exc:
        Settings.from_dict(data, "x.toml")
    assert exc.value.key == key


def test_compare_threshold_as_a_fraction_or_a_percentage():
    assert Settings.from_dict({"compare": {"threshold": "5 %"}}).compare_threshold == pytest.approx(0.05)
    assert Settings.from_dict({"compare": {"threshold": 0.1}}).compare_threshold == 0.1
    with pytest.raises(SettingsError) as exc:
        Settings.from_dict({"compare": {"threshold": 5}}, "x.toml")
    assert "0.05" in str(exc.value) and '"5 %"' in str(exc.value)


def test_limits_as_l_over_n_and_the_ratio_refused_with_its_n():
    s = Settings.from_dict({"deflection": {"limit": "L/360", "layers": {"FRAME-BEAMS": "l / 480"}},
                            "drift": {"limit": "h/300"}})
    assert (s.deflection_limit, s.deflection_limit_for("FRAME-BEAMS"), s.drift_limit) == (360, 480, 300)
    with pytest.raises(SettingsError) as exc:
        Settings.from_dict({"deflection": {"limit": 0.0025}}, "x.toml")
    assert "L/400" in str(exc.value)   # 1 / 0.0025 = 400


def test_layer_section_inherits_default_values():
    s = Settings.from_dict(
        {"sections": {"default": {"E": "29000 ksi", "A": "10 in**2", "I": "100 in**4"},
                      "FRAME-BEAMS": {"I": "204 in**4", "name": "W12x26"}}}
    )
    beam = s.section_for("FRAME-BEAMS")
    # 1 ksi = 4448.2216152605 N / 0.0254**2 m**2 * 1000 (NIST SP 811, exact definitions)
    assert beam.E == pytest.approx(29000 * 4448.2216152605 / 0.0254**2, rel=1e-12)
    assert beam.I == pytest.approx(204 * 0.0254**4, rel=1e-12)  # 1 in = 0.0254 m (NIST SP 811)
    assert beam.A == pytest.approx(10 * 0.0254**2, rel=1e-12)  # 1 in = 0.0254 m (NIST SP 811)
    assert beam.name == "W12x26"


def test_remapped_layers_and_snap_number():
    s = Settings.from_dict({"layers": {"frame": "S-BEAM"}, "geometry": {"snap": 0.01}})
    assert s.is_frame_layer("s-beam-roof") and not s.is_frame_layer("FRAME")
    assert s.snap == 0.01


def test_settings_pickle_for_worker_processes():
    s = Settings.from_dict({"blocks": {"pin": "SUP-PIN"}, "sections": {"default": {"E": "1 GPa", "A": "1 m**2", "I": "1 m**4"}}})
    t = pickle.loads(pickle.dumps(s))
    assert t == s and t.block_kind("sup-pin") == "PIN"
