"""Physical constants and the thermal voltage, shared by the DC device models.

Lowest level of the numeric side.  The constants are the exact SI values
fixed by the 2019 redefinition and listed in CODATA 2018: the Boltzmann
constant and the elementary charge are exact by definition.

Examples
--------
>>> round(thermal_voltage(27.0) * 1e3, 4)
25.8649
"""

from __future__ import annotations

__all__ = ["BOLTZMANN", "CHARGE", "ZERO_CELSIUS", "kelvin", "thermal_voltage"]

#: Boltzmann constant in J/K (exact, SI 2019 / CODATA 2018).
BOLTZMANN = 1.380649e-23
#: Elementary charge in C (exact, SI 2019 / CODATA 2018).
CHARGE = 1.602176634e-19
#: 0 degC in kelvin.
ZERO_CELSIUS = 273.15


def kelvin(celsius):
    """Convert degC to K (works on floats and numpy arrays).

    Examples
    --------
    >>> kelvin(27.0)
    300.15
    """
    return celsius + ZERO_CELSIUS


def thermal_voltage(celsius):
    """kT/q in volts at a temperature given in degC.

    Examples
    --------
    >>> thermal_voltage(-273.15)
    0.0
    """
    return BOLTZMANN * kelvin(celsius) / CHARGE
