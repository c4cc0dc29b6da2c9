"""Physical constants and fixed conventions (SI)."""

#: Molar gas constant [J mol^-1 K^-1] (CODATA 2018, exact).
GAS_CONSTANT = 8.314462618

#: Gravitational acceleration used throughout [m s^-2] (scenario convention).
GRAVITY = 9.81

#: Zero degrees Celsius in kelvin.
ZERO_CELSIUS = 273.15

#: One million years [s], Julian years (365.25 d).
SECONDS_PER_MYR = 3.15576e13

#: Density of pore water used for the hydrostatic pore-pressure default [kg m^-3].
WATER_DENSITY = 1000.0
