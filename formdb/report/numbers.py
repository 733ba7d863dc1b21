"""How numbers read in a report: every figure with its unit, rounded for a formulator's eye.

The JSON report keeps full precision (rounded by ``formdb.schemas.result``); these helpers are for
the text and HTML reports only, so both show exactly the same strings.
"""

from __future__ import annotations

import math

DASH = "–"


def glue(number: str, unit: str) -> str:
    """A number and its unit (rich wraps at any Unicode space, so a plain one is used)."""
    return f"{number} {unit}" if unit else number


def _finite(value: float | None) -> bool:
    return value is not None and math.isfinite(value)


def plain(value: float, digits: int = 3) -> str:
    """A number to ``digits`` significant figures without an exponent for everyday sizes."""
    if value == 0:
        return "0"
    if 1e-3 <= abs(value) < 1e6:
        decimals = max(0, digits - 1 - math.floor(math.log10(abs(value))))
        text = f"{value:.{decimals}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return f"{value:.{digits - 1}e}"


def hlb(value: float | None) -> str:
    """HLB with one decimal, or two when the second is significant (4.3, 15.0, 11.79)."""
    if not _finite(value):
        return DASH
    assert value is not None
    text = f"{value:.2f}"
    return text[:-1] if text.endswith("0") else text


def percent(value: float | None, unit: str = "% w/w") -> str:
    """A mass percentage: two decimals from 0.1 up, three significant figures below."""
    if not _finite(value):
        return DASH
    assert value is not None
    number = f"{value:.2f}" if abs(value) >= 0.1 or value == 0 else plain(value)
    return glue(number, unit)


def share(fraction: float | None) -> str:
    """A fraction of a whole (0.3) as a percentage of it (30.0 %)."""
    if not _finite(fraction):
        return DASH
    assert fraction is not None
    return glue(f"{fraction * 100:.1f}", "%")


def fraction(value: float | None) -> str:
    if not _finite(value):
        return DASH
    assert value is not None
    return f"{value:.3f}"


def density(value: float | None) -> str:
    return DASH if not _finite(value) else glue(f"{value:.3f}", "g/mL")


def volume_ml(value: float | None) -> str:
    return DASH if not _finite(value) else glue(f"{value:.2f}", "mL")


def signed(value: float, decimals: int = 2) -> str:
    return f"{value:+.{decimals}f}"


def with_unit(value: float | None, unit: str, digits: int = 3) -> str:
    """Any other quantity: three significant figures and its unit."""
    if not _finite(value):
        return DASH
    assert value is not None
    return glue(plain(value, digits), unit)


def count(n: int, singular: str, plural: str | None = None) -> str:
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"
