"""Hardening, round 2: hostile number texts, block grids, damaged inserts,
undecodable bytes, damaged report files and far-away linework.

Every drawing is built here with ezdxf; resource cases run under an
address-space limit (``resource.setrlimit``) so a regression fails fast
instead of exhausting the machine.  Beam values are checked against the
AISC Manual, Table 3-23 (via ``check_simple_beam``).
"""
from __future__ import annotations

import json
import math

import pytest
from hypothesis import HealthCheck, assume, given, settings as hsettings, strategies as st

from dxf_builders import add_load
from dxf2frame.errors import UnitError
from dxf2frame.units import parse_quantity
from test_hardening import (FAST_SETTINGS, SPAN, assert_bad_input, beam_doc, run_cli, solve_ok,
                            write_case)


# ---------------------------------------------------------------------------
# number texts: minus signs and commas
# ---------------------------------------------------------------------------

#: minus-like characters -> read as a minus? (True: yes, silently or with a
#: warning; False: refused).  U+2212 is the Unicode minus sign; the dashes
#: are what word processors and CAD text editors put in its place.
MINUS_LIKE = {
    "-": True, "\u2212": True, "\u2013": True, "\u2012": True, "\u2010": True, "\u2011": True,
    "\ufe63": True, "\uff0d": True, "\u2014": False, "\u2015": False, "\u00ad": False, "\u207b": False,
    "\u208b": False, "\u2796": False, "~": False,
}
WARNED = {"\u2013", "\u2012", "\u2010", "\u2011", "\ufe63", "\uff0d"}


def _force(text: str, notes: list | None = None) -> float:
    return parse_quantity(text, "force", default_unit="kN", handle="2F", layer="LOADS", tag="P", notes=notes)


@pytest.mark.parametrize("dash", sorted(MINUS_LIKE))
def test_minus_like_characters_are_a_minus_or_refused(dash):
    notes: list[str] = []
    if MINUS_LIKE[dash]:
        # 1 kN = 1000 N (SI prefix k = 1e3)
        assert _force(f"{dash}5 kN", notes) == -5000.0
        assert bool(notes) == (dash in WARNED)
        if notes:
            assert "#2F" in notes[0] and "'LOADS'" in notes[0] and "P" in notes[0] and "minus" in notes[0]
    else:
        with pytest.raises(UnitError) as exc:
            _force(f"{dash}5 kN")
        assert exc.value.handle == "2F" and f"U+{ord(dash):04X}" in str(exc.value)


@pytest.mark.parametrize("text, fix", [
    ("5,5 kN", "'5.5 kN'"), ("1,000 kN", "'1000 kN'"), ("1.000,5 kN", "point as the decimal mark"),
    ("-2,25", "'-2.25'"), ("1 000 kN", "'1000 kN'"), ("1\u00a0000 kN", "'1000 kN'"),
])
def test_commas_and_grouped_digits_are_refused_as_ambiguous(text, fix):
    with pytest.raises(UnitError) as exc:
        _force(text)
    msg = str(exc.value)
    assert "#2F" in msg and "'LOADS'" in msg and "attribute P" in msg and repr(text.strip())[1:-1] in msg
    assert fix in msg


@pytest.mark.parametrize("junk", [";", "!", "=", "#", "[", "]", "%", "&", "|", "\u00d7", "\u2044"])
def test_characters_the_unit_parser_would_drop_are_refused(junk):
    # the unit parser reads "5 kN; 2" as 10 kN: such texts must be refused
    with pytest.raises(UnitError):
        _force(f"5 kN{junk} 2")


_DIGITS = st.integers(min_value=0, max_value=99_999)
_FRACTION = st.integers(min_value=0, max_value=999)


@hsettings(max_examples=400, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(whole=_DIGITS, frac=_FRACTION, sign=st.sampled_from(sorted(MINUS_LIKE) + ["", "+"]),
       sep=st.sampled_from([".", ",", "", " ", "\u00a0", "'", "\u066b", "\u2009"]),
       group=st.sampled_from(["", ",", ".", " ", "'"]), unit=st.sampled_from(["kN", " kN", "", " N"]))
def test_number_texts_are_read_exactly_or_refused(whole, frac, sign, sep, group, unit):
    """A number text with any minus-like sign, decimal mark and thousands
    separator is either read as exactly the number meant or refused."""
    digits = str(whole)
    if group and whole >= 1000:
        digits = f"{whole:,}".replace(",", group)
    text = f"{sign}{digits}{sep}{frac if sep else ''}{unit}"
    # "1.000 kN" is one kilonewton by the convention (a point is the decimal mark)
    assume(not (group == "." and whole >= 1000 and text.count(".") == 1))
    meant = whole + (frac / 10 ** len(str(frac)) if sep else 0.0)
    if sign in MINUS_LIKE:
        meant = -meant
    # bare numbers are in kN (the default unit); 1 kN = 1000 N (SI prefix)
    meant *= 1.0 if unit.strip() == "N" else 1000.0
    try:
        value = _force(text)
    except UnitError:
        return
    assert value == pytest.approx(meant, rel=1e-12, abs=1e-9), text


def test_unicode_minus_and_comma_from_the_command_line(tmp_path, capsys):
    doc = beam_doc()
    msp = doc.modelspace()
    up = add_load(msp, "force", (SPAN / 2, 0.0), P="\u221220 kN")  # acts upward: -20 kN along the arrow
    down = add_load(msp, "force", (SPAN / 2, 0.0), P="\u201320 kN")  # en dash: -20 kN, with a warning
    add_load(msp, "force", (SPAN / 2, 0.0), P="40 kN")
    path = write_case(tmp_path / "in", doc)
    report, err = solve_ok(capsys, path, tmp_path / "out")
    # the three point loads cancel (-20 - 20 + 40 = 0): the beam carries only
    # its uniform load, R = wL/2 (AISC Manual, Table 3-23 case 1; from memory)
    from test_hardening import check_simple_beam
    check_simple_beam(report)
    warned = [w for w in report["warnings"] if "en dash" in w]
    assert len(warned) == 1 and f"#{down.dxf.handle}" in warned[0], report["warnings"]
    assert not any(f"#{up.dxf.handle}" in w for w in report["warnings"])
    assert "en dash" in err

    doc = beam_doc()
    bad = add_load(doc.modelspace(), "force", (SPAN / 2, 0.0), P="5,5 kN")
    path = write_case(tmp_path / "in2", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out2", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out2", names=(f"#{bad.dxf.handle}", "'LOADS'", "P", "5,5 kN",
                                                         "'5.5 kN'"))
