"""Attribute quantities -> SI, checked against the exact unit definitions.

Definitions used (NIST SP 811, Appendix B; exact by definition):
1 in = 0.0254 m, 1 ft = 0.3048 m, 1 lbf = 4.4482216152605 N,
so 1 kip = 1000 lbf = 4448.2216152605 N and 1 ksi = 1 kip/in**2.
"""
from __future__ import annotations

import math

import pytest
from hypothesis import given, settings, strategies as st

from dxf2frame.errors import UnitError
from dxf2frame.units import (
    INSUNITS,
    length_unit_scale,
    normalise_length_unit,
    parse_quantity,
    build_registry,
    registry,
    unit_factor,
)

KIP = 4448.2216152605  # N, 1000 lbf (NIST SP 811, exact by definition)
FT = 0.3048  # m (NIST SP 811, exact by definition)
INCH = 0.0254  # m (NIST SP 811, exact by definition)


def q(text: str, kind: str, default: str = "kN") -> float:
    return parse_quantity(text, kind, default_unit=default, handle="2F", layer="LOADS", tag="P")


@pytest.mark.parametrize(
    "text, kind, expected",
    [
        ("2 kip/ft", "distributed", 2 * KIP / FT),  # 1 kip, 1 ft by definition (NIST SP 811)
        ("35 kN", "force", 35e3),  # SI prefix k = 1e3 (SI Brochure)
        ("15 kip*ft", "moment", 15 * KIP * FT),  # NIST SP 811 definitions
        ("4.5 kN/m", "distributed", 4.5e3),  # SI prefix k = 1e3
        ("200 GPa", "stress", 200e9),  # SI prefix G = 1e9
        ("204 in**4", "inertia", 204 * INCH**4),  # 1 in = 0.0254 m (NIST SP 811)
        ("29000 ksi", "stress", 29000 * KIP / INCH**2),  # ksi = kip/in**2 (NIST SP 811)
        ("8 kip", "force", 8 * KIP),  # 1 kip = 1000 lbf (NIST SP 811)
        ("5000 mm**2", "area", 5000e-6),  # 1 mm = 1e-3 m
        ("500 kN/m", "spring_linear", 500e3),  # SI prefix k = 1e3
        ("2000 kN*m/rad", "spring_rotational", 2e6),  # rad is dimensionless in SI
        ("30 deg", "angle", math.pi / 6),  # 180 deg = pi rad
        ("35kN", "force", 35e3),  # no space between number and unit; SI prefix
        ("-12.5 kN", "force", -12.5e3),  # sign kept
    ],
)
def test_quantities_with_units(text, kind, expected):
    assert q(text, kind) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "text, kind, default, expected",
    [
        ("35", "force", "kN", 35e3),  # bare force in the default force unit
        ("8", "force", "kip", 8 * KIP),  # NIST SP 811
        ("2", "distributed", "(kip)/(ft)", 2 * KIP / FT),  # NIST SP 811
        ("15", "moment", "(kip)*(ft)", 15 * KIP * FT),  # NIST SP 811
        ("3", "length", "ft", 3 * FT),  # 1 ft = 0.3048 m (NIST SP 811)
        ("250", "length", "mm", 0.25),  # 1 mm = 1e-3 m
        ("30", "angle", "deg", math.pi / 6),  # bare angles in degrees
        ("0.01", "angle", "rad", 0.01),  # settlement rotation: bare radians
        ("1.5e3", "force", "N", 1500.0),  # exponent notation
    ],
)
def test_bare_numbers_take_the_default_unit(text, kind, default, expected):
    assert q(text, kind, default) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "text, kind",
    [
        ("15 kip*ft", "force"),  # a moment where a force belongs
        ("10 kN", "distributed"),
        ("3 m", "force"),
        ("2 kip/ft", "moment"),
        ("200 GPa", "inertia"),
    ],
)
def test_wrong_dimension_names_handle_layer_tag(text, kind):
    with pytest.raises(UnitError) as exc:
        q(text, kind)
    err = exc.value
    assert err.handle == "2F" and err.layer == "LOADS"
    msg = str(err)
    assert "#2F" in msg and "LOADS" in msg and "P" in msg and text in msg


@pytest.mark.parametrize("text", ["", "   ", "nan", "inf", "-inf kN", "1e400", "kN", "abc", "12 flurbs", "3 kN +", "10**10**10 kN", "2 m**100"])
def test_rejects_bad_text(text):
    with pytest.raises(UnitError) as exc:
        q(text, "force")
    assert exc.value.handle == "2F"


def test_one_registry_per_process():
    assert registry() is registry()


def test_registry_without_a_usable_cache(monkeypatch):
    """A definitions cache that cannot be read (damaged file, read-only home)
    only costs time: the registry is built without it, with the same units."""
    import pint

    real = pint.UnitRegistry

    def refuse_cache(*args, **kwargs):
        if kwargs.get("cache_folder"):
            raise EOFError("damaged cache file")
        return real(*args, **kwargs)

    monkeypatch.setattr(pint, "UnitRegistry", refuse_cache)
    ureg = build_registry()
    assert isinstance(ureg, real)
    assert ureg("1 kip").to("N").magnitude == pytest.approx(KIP, rel=1e-12)  # NIST SP 811, exact


def test_length_scales_are_exact():
    assert length_unit_scale("ft") == 0.3048  # exact (NIST SP 811)
    assert length_unit_scale("inch") == 0.0254  # exact (NIST SP 811)
    assert length_unit_scale("in") == 0.0254  # exact (NIST SP 811)
    assert length_unit_scale("feet") == 0.3048  # exact (NIST SP 811)
    assert length_unit_scale("mm") == 1e-3  # SI prefix m = 1e-3
    assert length_unit_scale("cm") == 1e-2  # SI prefix c = 1e-2
    assert length_unit_scale("m") == 1.0
    assert length_unit_scale("yard") == pytest.approx(0.9144, rel=1e-12)  # 1 yd = 0.9144 m (NIST SP 811)


def test_insunits_codes():
    # DXF reference, header variable $INSUNITS: 1 inches, 2 feet, 4 mm, 5 cm, 6 m (from memory)
    assert INSUNITS == {1: "inch", 2: "ft", 4: "mm", 5: "cm", 6: "m"}


def test_normalise_and_factor_errors():
    assert normalise_length_unit("Metres") == "m"
    with pytest.raises(UnitError):
        normalise_length_unit("kN")
    with pytest.raises(UnitError):
        unit_factor("m", "force")
    assert unit_factor("kip", "force") == pytest.approx(KIP, rel=1e-12)  # NIST SP 811


@settings(max_examples=40, deadline=None)
@given(st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False))
def test_kip_per_ft_any_value(x):
    # 1 kip/ft = 4448.2216152605 N / 0.3048 m (NIST SP 811 definitions)
    assert q(f"{x!r} kip/ft", "distributed") == pytest.approx(x * KIP / FT, rel=1e-12, abs=1e-9)
