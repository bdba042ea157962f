"""Scenario models for the demo and the example notebooks (plain Python, no convdiag imports).

The scenarios and their plant data are invented for demonstration; the
equations are the published ones named in each docstring. Results from
these models are illustrations, not engineering advice: pipe sizing,
pressure vessels and orbits follow local codes and licensed practice.
"""

from __future__ import annotations

import math

__all__ = ["PIPE_P17", "colebrook_residual", "kepler_residual"]

#: Invented plant data: pipe P-17 of a district water network (DN 150
#: ductile iron, 20 °C water at 1.5 m/s).
PIPE_P17 = {"Re": 1.0e5, "rel_roughness": 1.0e-4}


def colebrook_residual(f: float, Re: float = 1.0e5, rel_roughness: float = 1.0e-4) -> float:
    """Colebrook–White equation in the Darcy friction factor f (Colebrook 1939).

    r(f) = 1/√f + 2 log10(ε/(3.7 D) + 2.51/(Re √f)); the friction factor is
    the root. Undefined for f <= 0 (raises ValueError, as a model would).
    """
    s = math.sqrt(f)
    return 1.0 / s + 2.0 * math.log10(rel_roughness / 3.7 + 2.51 / (Re * s))


def kepler_residual(E: float, M: float = 1.0, ecc: float = 0.5) -> float:
    """Kepler's equation E − e sin E − M for the eccentric anomaly E (radians)."""
    return E - ecc * math.sin(E) - M
