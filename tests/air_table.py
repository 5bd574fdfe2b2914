"""Properties of air at 1 atm from a textbook table, interpolated linearly: the independent air
that the hand-written references use (never rcsim's own air_properties).

Source: Incropera, DeWitt, Bergman and Lavine, Fundamentals of Heat and Mass Transfer, 6th ed.
(2007), Table A.4, thermophysical properties of air at atmospheric pressure (values from memory;
test_nonlinear.py checks rcsim's Sutherland fits against the same rows). Linear interpolation
between its rows is how the book itself says the table is to be read.
"""

from __future__ import annotations

import numpy as np

K0 = 273.15

#: T [K], rho [kg/m^3], cp [kJ/(kg K)], mu [1e-7 N s/m^2], nu [1e-6 m^2/s], k [1e-3 W/(m K)],
#: alpha [1e-6 m^2/s], Pr
TABLE_A4 = np.array([
    [250.0, 1.3947, 1.006, 159.6, 11.44, 22.3, 15.9, 0.720],
    [300.0, 1.1614, 1.007, 184.6, 15.89, 26.3, 22.5, 0.707],
    [350.0, 0.9950, 1.009, 208.2, 20.92, 30.0, 29.9, 0.700],
    [400.0, 0.8711, 1.014, 230.1, 26.41, 33.8, 38.3, 0.690],
])


def air(temperature_c: float) -> dict:
    """k [W/(m K)], nu [m^2/s], Pr and beta = 1/T [1/K] (ideal gas) of air at ``temperature_c``
    [degC], interpolated in Table A.4 (250-400 K)."""
    T = float(temperature_c) + K0
    if not TABLE_A4[0, 0] <= T <= TABLE_A4[-1, 0]:
        raise ValueError(f"{T} K is outside the table (250-400 K)")
    col = {name: np.interp(T, TABLE_A4[:, 0], TABLE_A4[:, i])
           for i, name in enumerate(("T", "rho", "cp", "mu", "nu", "k", "alpha", "Pr"))}
    return {"k": col["k"] * 1e-3, "nu": col["nu"] * 1e-6, "Pr": col["Pr"], "beta": 1.0 / T}
