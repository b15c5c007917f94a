"""UCUM codes parsed and compared through the units library; factors checked against NIST SP 811."""

import pytest

from registry.features.units import UnknownUnit, compare_units, parse_unit


@pytest.mark.parametrize(("old", "new", "factor"), [
    # NIST Special Publication 811 (2008), Appendix B.8: pound-force per square inch (psi)
    # = 6.894 757 E+00 kilopascal.
    ("[psi]", "kPa", 6.894757),
    # NIST SP 811, B.8: inch = 2.54 E-02 m (exact); foot = 3.048 E-01 m (exact).
    ("[in_i]", "m", 2.54e-2),
    ("[ft_i]", "m", 3.048e-1),
    # NIST SP 811, B.8: mile (international) = 1.609 344 E+03 m (exact).
    ("[mi_i]", "m", 1.609344e3),
    # NIST SP 811, B.8: pound (avoirdupois) = 4.535 924 E-01 kg.
    ("[lb_av]", "kg", 4.535924e-1),
    # NIST SP 811, B.8: gallon (U.S.) = 3.785 412 E-03 m3.
    ("[gal_us]", "m3", 3.785412e-3),
    # NIST SP 811, B.8: bar = 1.0 E+05 Pa; atmosphere, standard = 1.013 25 E+05 Pa;
    # millimeter of mercury, conventional = 1.333 224 E+02 Pa.
    ("bar", "Pa", 1.0e5),
    ("atm", "Pa", 1.01325e5),
    ("mm[Hg]", "Pa", 1.333224e2),
    # NIST SP 811, B.8: day = 8.64 E+04 s; liter = 1.0 E-03 m3.
    ("d", "s", 8.64e4),
    ("L", "m3", 1.0e-3),
])
def test_conversion_factors_match_nist_sp_811(old, new, factor):
    comparison = compare_units(old, new)
    assert comparison.convertible
    # NIST gives seven significant digits.
    assert comparison.factor == pytest.approx(factor, rel=5e-7)
    assert comparison.offset == 0


def test_kilopascal_to_psi_is_the_inverse_of_the_nist_factor():
    # NIST SP 811, B.8: 1 psi = 6.894 757 kPa, so 1 kPa = 0.145 037 7 psi.
    comparison = compare_units("kPa", "[psi]")
    assert comparison.factor == pytest.approx(1 / 6.894757, rel=5e-7)
    assert comparison.factor == pytest.approx(0.1450377, rel=1e-6)


def test_celsius_to_fahrenheit_has_a_factor_and_an_offset():
    # NIST SP 811, B.8 footnote: t/degF = 1.8 t/degC + 32.
    comparison = compare_units("Cel", "[degF]")
    assert comparison.factor == pytest.approx(1.8)
    assert comparison.offset == pytest.approx(32)


def test_same_unit_in_another_spelling_converts_with_factor_one():
    comparison = compare_units("m/s", "m.s-1")
    assert comparison.is_same_unit
    assert not comparison.same_code


def test_units_of_different_dimensions_are_not_convertible():
    comparison = compare_units("mm", "kPa")
    assert not comparison.convertible
    assert comparison.factor is None


def test_an_annotation_alone_is_the_unity_but_a_changed_annotation_is_noticed():
    # UCUM specification, section 2.4 (annotations): {count} is equivalent to 1.
    assert parse_unit("{count}").dimensions == "dimensionless"
    comparison = compare_units("{count}", "{repairs}")
    assert comparison.convertible and comparison.factor == 1.0
    assert comparison.annotations_differ
    assert not comparison.is_same_unit


def test_a_temperature_scale_is_marked_as_having_an_offset():
    assert parse_unit("Cel").has_offset
    assert not parse_unit("K").has_offset


@pytest.mark.parametrize("code", ["kpa", "psi", "Kpa", "metres", "m//s", ""])
def test_an_unknown_unit_names_its_place(code):
    with pytest.raises(UnknownUnit) as caught:
        parse_unit(code, place="v1.toml [features.x].unit")
    assert caught.value.place == "v1.toml [features.x].unit"


def test_a_temperature_scale_inside_a_compound_unit_is_refused():
    with pytest.raises(UnknownUnit, match="K/h"):
        parse_unit("Cel/h")
