"""How numbers are written for people: one set of rules for the terminal, the reports
and the sentences stored in summary.json, so the same figure reads the same everywhere.

Use :func:`fmt_num` for a plain figure, :func:`fmt_prob` for a probability (bounds near
0 and 1 kept readable), :func:`fmt_sigma` for a signed distance in standard deviations
and :func:`fmt_pm` for a value with its error.
"""

from __future__ import annotations

import math

#: significant digits of a figure written for people
DIGITS = 3


def fmt_num(x: float | None, digits: int = DIGITS) -> str:
    """A figure to ``digits`` significant digits (``n/a`` for None, ``inf``/``-inf``)."""
    if x is None:
        return "n/a"
    x = float(x)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    ax = abs(x)
    if x == 0.0:
        return "0"
    if 1e-3 <= ax < 1e6:  # positional, to `digits` significant digits: 20000, 0.00587
        dec = max(digits - 1 - math.floor(math.log10(ax)), 0)
        text = f"{round(x, dec):.{dec}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return format(x, f".{digits}g")


def fmt_prob(p: float | None, digits: int = DIGITS) -> str:
    """A probability: ``0.447``, ``3.2e-07``, ``1 - 2.1e-05`` (close to one), ``0``, ``1``."""
    if p is None:
        return "n/a"
    p = float(p)
    if 0.999 < p < 1.0:
        return f"1 - {format(1.0 - p, '.2g')}"
    return fmt_num(p, digits)


def fmt_pct(p: float) -> str:
    """A probability as a percentage with three significant digits: ``52.6%``, ``< 0.001%``."""
    if p <= 0.0:
        return "0%"
    if p < 1e-5:
        return "< 0.001%"
    if p > 1.0 - 1e-5:
        return "> 99.999%"
    return f"{format(100.0 * p, '.3g')}%"


def fmt_sigma(z: float, digits: int = 2) -> str:
    """A distance in standard deviations, without a sign: ``0.13 sigma``, ``inf sigma``."""
    z = abs(float(z))
    return f"{fmt_num(z, digits)} sigma"


def fmt_pm(x: float, err: float | None, digits: int = DIGITS) -> str:
    """``value +- error`` with the error to two significant digits."""
    if err is None:
        return fmt_num(x, digits)
    return f"{fmt_num(x, digits)} +- {fmt_num(err, 2)}"


def fmt_kinematics(kin: dict) -> str:
    """A region's kinematics on one line: ``pion_mass = 139.57 MeV, fpi = 92.07 MeV;
    convention ...; families ...``.  Keys ending in ``_mev`` are written with MeV."""
    parts, tail = [], []
    for k, v in kin.items():
        vals = v if isinstance(v, (list, tuple)) else [v]
        if not vals:                                  # an empty list says nothing
            continue
        if k.endswith("_mev"):
            txt = ", ".join(fmt_num(x, 6) for x in vals)
            parts.append(f"{k[:-4]} = {txt} MeV")
        elif all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in vals):
            parts.append(f"{k} = {', '.join(fmt_num(x, 6) for x in vals)}")
        else:                                         # words: convention, families, units
            tail.append(f"{k.replace('_', ' ')} {', '.join(str(x) for x in vals)}")
    return "; ".join(p for p in (", ".join(parts), *tail) if p)
