"""CAS Registry Numbers: the shape and the check digit, in one place for every layer.

The check digit is the sum of the other digits, each weighted by its position counted from the
right (1, 2, 3, ...), modulo 10 (CAS Registry, "Check digit verification of CAS Registry
Numbers"). Example: water 7732-18-5: 8*1+1*2+2*3+3*4+7*5+7*6 = 105, 105 mod 10 = 5.
"""

from __future__ import annotations

import re

# ASCII digits only (re.ASCII: Python's \d would take Arabic-Indic or fullwidth digits too);
# the first group never starts with 0, so 0000-00-0 and padded forms are not CAS numbers
_CAS_RE = re.compile(r"([1-9]\d{1,6})-(\d{2})-(\d)", re.ASCII)


def cas_check_digit(cas: str) -> int | None:
    """The check digit a CAS number of the right shape should end with; None for another shape.
    Surrounding spaces are ignored."""
    match = _CAS_RE.fullmatch(cas.strip())
    if not match:
        return None
    digits = (match.group(1) + match.group(2))[::-1]
    return sum((i + 1) * int(d) for i, d in enumerate(digits)) % 10


def cas_is_valid(cas: str) -> bool:
    """True when ``cas`` has the CAS Registry shape and its check digit is right."""
    expected = cas_check_digit(cas)
    return expected is not None and cas.strip()[-1] == str(expected)
