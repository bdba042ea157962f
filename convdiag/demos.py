"""Scenario models for the demo and the example notebooks (plain Python, no convdiag imports).

The scenarios and their plant data are invented for demonstration; the
equations and physical constants are the published ones named in each
docstring. Results from these models are illustrations, not engineering
advice: pipe sizing, pressure vessels and orbits follow local codes and
licensed practice.

Models here compute with Python's ``math`` module (one value at a time,
the same result on every machine with the same C library), except where a
docstring says it takes numpy arrays.
"""

from __future__ import annotations

import math
from typing import Any

__all__ = [
    "PIPE_P17",
    "ROBERTSON_RATES",
    "R_GAS",
    "VDW_CO2",
    "colebrook_residual",
    "colebrook_y_residual",
    "haaland_friction",
    "kepler_prime",
    "kepler_residual",
    "kepler_residual_array",
    "robertson_rhs",
    "swamee_jain_friction",
    "vdw_cubic_coefficients",
    "vdw_ln_fugacity_coefficient",
    "vdw_pressure_residual",
    "vdw_pressure_slope",
]

#: Invented plant data: pipe P-17 of a district water network (DN 150
#: ductile iron, 20 °C water at 1.5 m/s).
PIPE_P17 = {"Re": 1.0e5, "rel_roughness": 1.0e-4}

#: Molar gas constant in L·bar/(K·mol): 8.314462618 J/(K·mol) (CODATA 2018, from memory) / 100.
R_GAS = 0.083144626

#: Van der Waals constants of carbon dioxide: a in bar·L²/mol², b in L/mol (CRC Handbook of
#: Chemistry and Physics, table "Van der Waals constants for gases", after Reid, Prausnitz and
#: Poling, *The Properties of Gases and Liquids*, 4th ed., 1987).
VDW_CO2 = {"a": 3.658, "b": 0.0429}

#: Rate constants of Robertson's three-species reaction system (H. H. Robertson, "The solution of
#: a set of reaction rate equations", 1966; as reprinted in Hairer and Wanner, *Solving Ordinary
#: Differential Equations II*, §IV.1; from memory). Units: 1/s, L/(mol·s), L/(mol·s).
ROBERTSON_RATES = {"k1": 0.04, "k2": 3.0e7, "k3": 1.0e4}


def colebrook_residual(f: float, Re: float = 1.0e5, rel_roughness: float = 1.0e-4) -> float:
    """Colebrook–White equation in the Darcy friction factor f (Colebrook 1939).

    r(f) = 1/√f + 2 log10(ε/(3.7 D) + 2.51/(Re √f)); the friction factor is
    the root. Undefined for f <= 0 (raises ValueError, as a model would).
    """
    s = math.sqrt(f)
    return 1.0 / s + 2.0 * math.log10(rel_roughness / 3.7 + 2.51 / (Re * s))


def colebrook_y_residual(y: float, Re: float = 1.0e5, rel_roughness: float = 1.0e-4) -> float:
    """The Colebrook–White equation (Colebrook 1939) written in y = 1/√f.

    g(y) = y + 2 log10(ε/(3.7 D) + 2.51 y/Re). For y > 0 it is increasing and
    concave, so Newton's method from any 0 < y0 below the root climbs to it
    without overshooting; f = 1/y².

    Examples
    --------
    >>> y = 7.349392486953610  # root for Re = 1e5, ε/D = 1e-4 (mpmath.findroot, 30 digits)
    >>> abs(colebrook_y_residual(y)) < 1e-13, round(1 / y**2, 12)  # f = 0.0185138660775 (same source)
    (True, 0.018513866077)
    """
    return y + 2.0 * math.log10(rel_roughness / 3.7 + 2.51 * y / Re)


def haaland_friction(Re: float, rel_roughness: float) -> float:
    """Darcy friction factor from Haaland's explicit formula (J. Fluids Eng. 105 (1983) 89).

    1/√f = −1.8 log10[(ε/D / 3.7)^1.11 + 6.9/Re]; stated accuracy about ±2 % of
    Colebrook–White (from memory).

    Examples
    --------
    >>> round(haaland_friction(1e5, 1e-4) / 0.0185138660775 - 1, 4)  # Colebrook value: mpmath, 30 digits
    -0.0134
    """
    return (-1.8 * math.log10((rel_roughness / 3.7) ** 1.11 + 6.9 / Re)) ** -2


def swamee_jain_friction(Re: float, rel_roughness: float) -> float:
    """Darcy friction factor from the Swamee–Jain formula (J. Hydraul. Div. ASCE 102(HY5), 1976).

    f = 0.25 / [log10(ε/(3.7 D) + 5.74/Re^0.9)]²; stated ±1 % for
    1e-6 ≤ ε/D ≤ 1e-2 and 5e3 ≤ Re ≤ 1e8 (from memory). Recomputed against
    Colebrook–White it is off by up to 2.8 % near Re = 5e3, ε/D = 1e-2.
    """
    return 0.25 / math.log10(rel_roughness / 3.7 + 5.74 / Re**0.9) ** 2


def kepler_residual(E: float, M: float = 1.0, ecc: float = 0.5) -> float:
    """Kepler's equation E − e sin E − M for the eccentric anomaly E (radians)."""
    return E - ecc * math.sin(E) - M


def kepler_prime(E: float, M: float = 1.0, ecc: float = 0.5) -> float:
    """The derivative of Kepler's equation in E: 1 − e cos E (same arguments as :func:`kepler_residual`)."""
    return 1.0 - ecc * math.cos(E)


def kepler_residual_array(E: Any, M: Any = 1.0, ecc: Any = 0.5) -> Any:
    """Kepler's equation E − e sin E − M on numpy arrays (for sweeps and basin maps)."""
    import numpy as np

    return E - ecc * np.sin(E) - M


def vdw_pressure_residual(V: float, P: float = 50.0, T: float = 280.0, a: float = 3.658, b: float = 0.0429) -> float:
    """Van der Waals equation of state (van der Waals 1873) as a residual in the molar volume V.

    r(V) = R T/(V − b) − a/V² − P (bar, L/mol, K; R = :data:`R_GAS`). For V > b
    its roots are the roots of the cubic of :func:`vdw_cubic_coefficients`;
    it has a pole at V = b.

    Examples
    --------
    >>> abs(vdw_pressure_residual(0.298841964478)) < 1e-9  # CO2 vapour root at 280 K, 50 bar (numpy.roots)
    True
    """
    return R_GAS * T / (V - b) - a / (V * V) - P


def vdw_pressure_slope(V: float, T: float = 280.0, a: float = 3.658, b: float = 0.0429) -> float:
    """dP/dV of the van der Waals equation at constant T: −R T/(V − b)² + 2a/V³.

    A state with dP/dV > 0 is mechanically unstable (its pressure would rise
    as it expands); the middle of three roots always has it.
    """
    return -R_GAS * T / (V - b) ** 2 + 2.0 * a / V**3


def vdw_cubic_coefficients(P: float = 50.0, T: float = 280.0, a: float = 3.658,
                           b: float = 0.0429) -> tuple[float, float, float, float]:
    """The van der Waals equation (van der Waals 1873) as a cubic in V: P V³ − (P b + R T) V² + a V − a b = 0.

    Returns its coefficients, highest power first (for numpy.roots or mpmath.polyroots).
    """
    return (P, -(P * b + R_GAS * T), a, -a * b)


def vdw_ln_fugacity_coefficient(V: float, P: float = 50.0, T: float = 280.0, a: float = 3.658,
                                b: float = 0.0429) -> float:
    """ln φ of a van der Waals fluid at the root V: Z − 1 − ln(Z − B) − A/Z.

    Z = P V/(R T), A = a P/(R T)², B = b P/(R T) (the standard result for the
    van der Waals equation, e.g. Smith, Van Ness and Abbott, *Introduction to
    Chemical Engineering Thermodynamics*; from memory). Of two roots at the
    same T and P, the one with the smaller ln φ has the lower Gibbs energy:
    it is the stable phase.
    """
    rt = R_GAS * T
    Z = P * V / rt
    return Z - 1.0 - math.log(Z - b * P / rt) - (a * P / rt**2) / Z


def robertson_rhs(t: float, y: Any, k1: float = 0.04, k2: float = 3.0e7, k3: float = 1.0e4) -> list[float]:
    """Right-hand side of Robertson's stiff reaction system (Robertson 1966; from memory).

    A → B (k1), 2B → B + C (k2), B + C → A + C (k3):
    y1' = −k1 y1 + k3 y2 y3, y2' = k1 y1 − k3 y2 y3 − k2 y2², y3' = k2 y2².
    Computed in Python floats (the same on every machine).
    """
    y1, y2, y3 = float(y[0]), float(y[1]), float(y[2])
    a, c, d = k1 * y1, k3 * y2 * y3, k2 * y2 * y2
    return [-a + c, a - c - d, d]
