"""Display conversions at the edges: the cached affine form must agree with pint and with the
defined values of the US customary units."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.units import UREG, affine_conversion, convert, to_display


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
