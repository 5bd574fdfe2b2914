"""Reference relations for grey diffuse radiation, shared by tests: the textbook radiosity
equations solved directly (independent of rcsim's network reduction)."""

import numpy as np
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.constants import zero_Celsius


def kelvin(t):
    return np.asarray(t, dtype=float) + zero_Celsius


def radiosity_equations(T, areas, eps, F):
    """The textbook radiosity equations, solved directly (Incropera eqs. 13.13-13.15):
    J_i = e_i E_b,i + (1 - e_i) sum_j F_ij J_j, q_i = A_i (J_i - sum_j F_ij J_j). Independent of
    the network reduction under test; needs every row of F to sum to 1 and finite areas."""
    Eb = SIGMA * kelvin(T) ** 4
    eps = np.asarray(eps, dtype=float)
    n = len(areas)
    J = np.linalg.solve(np.eye(n) - (1 - eps)[:, None] * F, eps * Eb)
    return np.asarray(areas) * (J - F @ J), J
