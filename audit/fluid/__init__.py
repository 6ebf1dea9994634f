"""Fluid properties at the valve's inlet and outlet, from CoolProp's equations of state.

``names`` resolves the line list's fluid names and mixtures; ``properties``
computes, per valve-case, the inlet state (density, vapour and critical
pressure, viscosity, isentropic exponent, speed of sound, enthalpy) and the
isenthalpic outlet state.

May import: nothing else in ``audit`` (numpy, CoolProp only).
"""
