"""Display conversions at the edges: the cached affine form must agree with pint and with the
defined values of the US customary units."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.units import UREG, ZERO_CELSIUS_K, affine_conversion, convert, to_display


@pytest.mark.parametrize("from_unit,to_unit", [
    ("K", "degF"), ("K", "degC"), ("m^3", "gal"), ("W", "hp"), ("W/K", "BTU/hr/delta_degF"),
    ("Pa", "psi"), ("m^3", "in^3"), ("kg", "lb"), ("N*m", "lbf*ft"), ("degF", "K")])
def test_affine_conversion_matches_pint_over_a_range(from_unit, to_unit):
    values = np.linspace(-50.0, 900.0, 7)
    expected = [UREG.Quantity(v, from_unit).to(to_unit).magnitude for v in values]
    np.testing.assert_allclose(convert(values, from_unit, to_unit), expected, rtol=1e-12, atol=1e-9)


def test_defined_values_of_us_units():
    # US gallon = 231 in^3 = 3.785411784 L exactly (NIST SP 811, Appendix B)
    assert to_display(3.785411784e-3, "volume", "US") == pytest.approx(1.0, rel=1e-12)
    # mechanical horsepower = 550 ft lbf/s = 745.699872 W (NIST SP 811, Appendix B)
    assert to_display(745.699872, "power", "US") == pytest.approx(1.0, rel=1e-8)
    # 1 psi = 6894.757 Pa (NIST SP 811, Appendix B)
    assert to_display(6894.757, "pressure", "US") == pytest.approx(1.0, rel=1e-6)
    # 32 degF is the ice point, 273.15 K; 212 degF is 373.15 K (definition of the Fahrenheit scale)
    assert to_display(273.15, "temperature", "US") == pytest.approx(32.0, abs=1e-9)
    assert to_display(373.15, "temperature", "US") == pytest.approx(212.0, abs=1e-9)
    # 0 degC = 273.15 K exactly (NIST SP 811, 4.2.1.1): the one constant every conversion uses
    assert ZERO_CELSIUS_K == 273.15
    assert convert(0.0, "degC", "K") == 273.15
    # 1 BTU/(hr degF) = 0.5275 W/K (International Table BTU: 1055.056 J / 3600 s x 1.8)
    assert convert(1.0, "BTU/hr/delta_degF", "W/K") == pytest.approx(0.527527, rel=1e-5)


def test_round_trip_and_types():
    assert isinstance(convert(1.0, "K", "degF"), float)
    assert convert(np.array([1.0]), "K", "degF").shape == (1,)
    for si_unit, us_unit in (("K", "degF"), ("m^3", "gal"), ("W", "hp"), ("W/K", "BTU/hr/delta_degF"),
                             ("Pa", "psi"), ("m^3", "in^3")):
        assert convert(convert(321.0, si_unit, us_unit), us_unit, si_unit) == pytest.approx(321.0, rel=1e-12)
    scale, offset = affine_conversion("K", "degC")
    assert (scale, offset) == (pytest.approx(1.0), pytest.approx(-273.15))


# ---------------------------------------------------------------- our quantity grammar (issue 13)

import time  # noqa: E402

from thermo_budget.errors import ScenarioError  # noqa: E402
from thermo_budget.units import _UNITS, MAX_QUANTITY_CHARS, parse_quantity, registry, split_quantity  # noqa: E402


@pytest.mark.parametrize("text, unit", [
    ("19 L", "L"), ("  -3.5e2 kW ", "kW"), ("+.5 gal", "gal"), ("16 cm^3", "cm^3"), ("16 cm**3", "cm^3"),
    ("40 BTU/hr/degF", "BTU/hr/degF"), ("1.2 J/(kg*K)", "J/(kg*K)"), ("7e-4 1/K", "1/K"), ("20", ""),
    ("3 lbf*ft", "lbf*ft"), ("2 m^-1", "m^-1")])
def test_grammar_accepts_a_number_then_a_unit_expression(text, unit):
    assert split_quantity(text, "k", "L")[1] == unit


@pytest.mark.parametrize("text", [
    "18 L*10**10**10",      # the power tower that used to hang pint's expression parser
    "18 L/0",               # division by zero
    "18 (L",                # an unbalanced parenthesis
    "18 L)",
    "18 ((L))",             # nesting beyond one level
    "1" * 2000 + " L",      # 2,000 digits
    "18 L * 2",             # arithmetic on numbers
    "18 + 2 L",
    "18 L^10",              # powers are small integers
    "18 L L",               # names are joined by * or /
    "1e5000 L",             # exponents of at most four digits (and then a finite number)
    "nan L", "inf L", "L", "", "18 L/", "18 __import__('os')",
])
def test_grammar_refuses_fast_with_a_one_line_message_naming_key_and_form(text):
    start = time.perf_counter()
    with pytest.raises(ScenarioError) as info:
        parse_quantity(text, "reservoir.oil_volume", "volume", "L")
    message = str(info.value)
    assert time.perf_counter() - start < 0.5
    assert message.startswith("reservoir.oil_volume: got ") and "\n" not in message
    assert "expected" in message
    assert len(message) < 400


def test_the_length_limit_is_quoted():
    with pytest.raises(ScenarioError, match=f"at most {MAX_QUANTITY_CHARS} characters"):
        split_quantity("1" * 2000 + " L", "k", "L")


def test_bare_numbers_and_huge_integers():
    assert parse_quantity(5, "k", "volume", "gal") == pytest.approx(5 * 3.785411784e-3)
    with pytest.raises(ScenarioError, match="finite"):
        parse_quantity(10**400, "k", "volume", "L")
    with pytest.raises(ScenarioError, match="finite"):
        parse_quantity(float("nan"), "k", "volume", "L")


def test_units_pint_does_not_know_are_refused_by_pint_after_the_grammar():
    with pytest.raises(ScenarioError, match="volume in units"):
        parse_quantity("18 furlongs_per_fortnight", "k", "volume", "L")


_GROUPS = {}
for _unit, (_group, _, _) in _UNITS.items():
    _GROUPS.setdefault(_group, []).append(_unit)
_PAIRS = [(a, b) for units in _GROUPS.values() for a in units for b in units if a != b]


@pytest.mark.parametrize("from_unit,to_unit", _PAIRS)
def test_table_of_exact_units_agrees_with_pint(from_unit, to_unit):
    # the table spares a run pint's start-up; pint (its definitions file) stays the reference
    values = np.array([-40.0, 0.0, 1.0, 77.0, 1000.0])
    expected = [registry().Quantity(v, from_unit).to(to_unit).magnitude for v in values]
    np.testing.assert_allclose(convert(values, from_unit, to_unit), expected, rtol=1e-12, atol=1e-9)
