"""Physical constants shared by the engine and the target checks."""

SIGMA = 5.670374419e-8  # W/m^2/K^4, Stefan-Boltzmann constant (CODATA 2018)
KELVIN = 273.15  # kelvin at 0 degC
