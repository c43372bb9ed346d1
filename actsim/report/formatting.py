"""Formatting helpers of the report: numbers, lengths, pressures, angles and quantities as plain text.

The texts are plain (the templates escape them); an exponent is written ``×10^n`` and the ``sup`` filter of
:mod:`actsim.report.render` turns it into a superscript. :func:`_card` is the one record of a card of the
first screen.
"""

from __future__ import annotations

import math

import numpy as np

def _num(x, digits=4) -> str:
    if x is None:
        return "not reached"
    if isinstance(x, str):
        s = x.strip().lower()
        if s in ("inf", "+inf", "infinity"):
            return "∞"
        if s in ("-inf", "-infinity"):
            return "−∞"
        return x
    x = float(x)
    if math.isnan(x):
        return "NaN"
    if math.isinf(x):
        return "∞" if x > 0 else "−∞"
    s = f"{x:.{digits}g}"
    if "e" in s:
        mant, ex = s.split("e")
        s = f"{mant}×10^{int(ex)}"
    return s.replace("-", "−")


def _float(x):
    """A number from a JSON field (numbers, null, or the words a writer uses for infinities); None otherwise."""
    if isinstance(x, bool) or x is None:
        return None
    if isinstance(x, (int, float)):
        return float(x)
    if isinstance(x, str):
        try:
            return float(x.strip())
        except ValueError:
            return None
    return None


def _length(x) -> tuple[str, str]:
    ax = abs(x)
    if ax >= 1e-3:
        return _num(x * 1e3), "mm"
    if ax >= 1e-6 or ax == 0:
        return _num(x * 1e6), "µm"
    return _num(x * 1e9), "nm"


def _pressure(x) -> tuple[str, str]:
    ax = abs(x)
    for scale, unit in ((1e9, "GPa"), (1e6, "MPa"), (1e3, "kPa")):
        if ax >= scale:
            return _num(x / scale), unit
    return _num(x), "Pa"


def _irr(x) -> str:
    """Irradiance in the customary mW/cm^2 (1 mW/cm^2 = 10 W/m^2)."""
    return f"{_num(x / 10.0)} mW/cm²"


def _deg(rad) -> str:
    return _num(None) if rad is None else _num(math.degrees(float(rad)))


def _quantity(x, unit, difference=False) -> str:
    """A SI value with a prefixed unit, as the check table prints it (a difference: a temperature stays in K)."""
    v = _float(x)
    if v is None:
        return "—" if x is None else str(x)
    try:
        from ..checks.verdict import format_quantity

        return format_quantity(v, str(unit), difference=difference).replace("inf", "∞")
    except Exception:  # formatting must never stop a report
        return f"{_num(v)} {unit}".strip()


def _modulus_law_text(m) -> str:
    """Plain words for a modulus that follows a temperature law (glass transition or DMA table)."""
    law = m.temperature_modulus
    if law is None:
        return "—"
    if law[0] == "glass":
        g, gu = _pressure(law[1])
        r, ru = _pressure(law[2])
        return (f"glass transition from {g} {gu} (glassy) to {r} {ru} (rubbery), Tg {_num(law[3] - 273.15)} °C, "
                f"width {_num(law[4])} K")
    e_lo, u_lo = _pressure(float(np.min(law[2])))
    e_hi, u_hi = _pressure(float(np.max(law[2])))
    return (f"tabulated against temperature ({len(law[1])} points, {_num(law[1][0] - 273.15)}–"
            f"{_num(law[1][-1] - 273.15)} °C, {e_lo} {u_lo} to {e_hi} {u_hi})")


def _card(label, value, unit="", note="", cls=""):
    return {"label": label, "value": value, "unit": unit, "note": note, "cls": cls}
