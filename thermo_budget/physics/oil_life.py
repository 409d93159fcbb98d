"""The oil's life over a session: oxidation ageing as equivalent hours at a reference temperature.

The rule used is the trade's rule of thumb that the oxidation rate of a mineral oil roughly doubles
for every 10 K rise in temperature (an Arrhenius-type rate with an activation energy of the order
of 60 kJ/mol near 60-100 degC). It is common practice with no single source.

Its limits, said wherever the figure is shown:
- It compares days with each other; it is not a life prediction. How many equivalent hours an oil
  lasts depends on its base stock, its additives, water, air, wear metals and contamination, none
  of which is modelled.
- The doubling interval is itself approximate (quoted between about 8 and 12 K); over 40 K of
  difference, that alone changes the factor by about two.
- It holds only where oxidation is the main way the oil ages, roughly from 50 to 100 degC; above
  about 100 degC other reactions set in and the oil ages faster than the rule says.
- It ages the bulk oil at its own temperature; the hotter return-line oil spends little time hot.
"""
from __future__ import annotations

import numpy as np
from ..units import ZERO_CELSIUS_K

AGEING_REFERENCE_C = 60.0       # equivalent hours are counted at this temperature
AGEING_DOUBLING_K = 10.0        # the rate doubles per this rise (common practice, no source)
AGEING_RULE = ("oxidation rate doubles per 10 K (common practice, no single source); a relative figure "
               "for comparing days, not a life prediction; roughly valid from 50 to 100 degC")


def ageing_rate(T_K, reference_C: float = AGEING_REFERENCE_C, doubling_K: float = AGEING_DOUBLING_K):
    """Oxidation rate relative to the rate at reference_C: 2 ** ((T - T_ref) / doubling_K).
    T_K : float or array, K."""
    return np.exp2((np.asarray(T_K, dtype=float) - ZERO_CELSIUS_K - reference_C) / doubling_K)


def ageing_equivalent_h(time_s, T_K, reference_C: float = AGEING_REFERENCE_C,
                        doubling_K: float = AGEING_DOUBLING_K) -> float:
    """Hours at reference_C that age the oil as much as the history T_K(time_s) does.

    time_s, T_K : (M,) arrays, s and K; the rate is integrated by the trapezoidal rule.
    One hour at 70 degC counts as two hours at 60 degC.
    """
    time_s = np.asarray(time_s, dtype=float)
    rate = ageing_rate(T_K, reference_C, doubling_K)
    return float(np.sum(0.5 * (rate[1:] + rate[:-1]) * np.diff(time_s)) / 3600.0)
