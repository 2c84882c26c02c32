"""Physical constants used throughout the package (SI units).

Every module takes its constants from here so that no bare ``9.81`` appears in a
formula.
"""

#: Standard acceleration of gravity. [m/s^2] (CGPM 1901, ISO 80000-3)
GRAVITY = 9.80665

#: Standard atmospheric pressure at mean sea level. [Pa] (ISO 2533:1975)
P_ATM_SEA_LEVEL = 101_325.0

#: Offset between the Celsius and Kelvin scales. [K]
CELSIUS_TO_KELVIN = 273.15

#: Seconds in one hour. [s]
SECONDS_PER_HOUR = 3600.0

#: Hours in a (non-leap) year, the usual basis for capacity factor. [h]
HOURS_PER_YEAR = 8760.0

#: Joules in one kilowatt-hour and in one megawatt-hour (exact). [J]
J_PER_KWH = 3.6e6
J_PER_MWH = 3.6e9

#: The international foot and inch (exact, 1959). [m]
FOOT = 0.3048
INCH = 0.0254
