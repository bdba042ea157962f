"""The Alefeld–Potra–Shi test problems as expression text, shared by the order and diagnosis tests.

Alefeld, Potra and Shi, ACM TOMS 21(3) 1995 (Algorithm 748), Table I; the parameters come from scipy's copy
(``scipy.optimize._tstutils._APS_TESTS_DICTS``). Problems 2, 13, 14 and 15 have no single expression here.
"""

from __future__ import annotations


def aps_text(d):
    """The APS function as expression text (Alefeld, Potra & Shi 1995, Table I, via scipy's copy)."""
    a = d["args"]
    text = {
        "aps.01": lambda: "sin(x) - x/2",
        "aps.03": lambda: f"{a[0]}*x*exp({a[1]}*x)",
        "aps.04": lambda: f"x**{a[0]} - {a[1]}",
        "aps.05": lambda: "sin(x) - 1/2",
        "aps.06": lambda: f"2*x*exp(-{a[0]}) - 2*exp(-{a[0]}*x) + 1",
        "aps.07": lambda: f"(1 + (1 - {a[0]})**2)*x - (1 - {a[0]}*x)**2",
        "aps.08": lambda: f"x**2 - (1 - x)**{a[0]}",
        "aps.09": lambda: f"(1 + (1 - {a[0]})**4)*x - (1 - {a[0]}*x)**4",
        "aps.10": lambda: f"exp(-{a[0]}*x)*(x - 1) + x**{a[0]}",
        "aps.11": lambda: f"({a[0]}*x - 1)/(({a[0]} - 1)*x)",
        "aps.12": lambda: f"x**(1/{a[0]}) - {a[0]}**(1/{a[0]})",
    }.get(d["ID"][:6])
    return None if text is None else text()
