"""The JSON text of a number to write: shortest round-trip float, or N significant digits from the exact value."""

from __future__ import annotations

import math
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np


class _Raw(str):
    """A JSON number's text, written as it is."""

    __slots__ = ()


def _exact(v: Any) -> tuple[int, int]:
    """The exact value of a float, int, Fraction, Decimal or mpmath number as a ratio (numerator, denominator > 0)."""
    if isinstance(v, bool):
        raise TypeError("a boolean is not a number")
    if isinstance(v, Fraction):
        return v.numerator, v.denominator
    if isinstance(v, int):
        return v, 1
    if hasattr(v, "_mpf_"):  # mpmath.mpf: (sign, mantissa, exponent, bits)
        import mpmath

        if not mpmath.isfinite(v):
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        sign, man, exp, _bits = v._mpf_
        man = -int(man) if sign else int(man)
        return (man << int(exp), 1) if exp >= 0 else (man, 1 << -int(exp))
    if isinstance(v, Decimal):
        if not v.is_finite():
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        q = Fraction(v)
        return q.numerator, q.denominator
    f = float(v)
    if not math.isfinite(f):
        raise ValueError(f"cannot write a non-finite number ({f}) in JSON")
    return f.as_integer_ratio()


_LOG10_2 = math.log10(2)


def _round_ratio(p: int, q: int, digits: int) -> tuple[str, int]:
    """Significant digits and decimal exponent of p/q > 0, rounded half to even: (digit string, e) with
    p/q ~= 0.d1d2... * 10**(e+1)."""
    e = math.floor((p.bit_length() - q.bit_length()) * _LOG10_2)
    low, high = 10 ** (digits - 1), 10**digits
    while True:
        shift = digits - 1 - e
        num, den = (p * 10**shift, q) if shift >= 0 else (p, q * 10**-shift)
        n, r = divmod(num, den)
        if n >= high:
            e += 1
        elif n < low:
            e -= 1
        else:
            if 2 * r > den or (2 * r == den and n & 1):
                n += 1
            if n == high:  # rounded up into the next decade: 9.99.. -> 10.0
                return str(low), e + 1
            return str(n), e


def _layout(negative: bool, s: str, e: int) -> str:
    """A JSON number from significant digits ``s`` and exponent ``e``: positional as Python's repr would, else
    ``d.ddde-05`` style; every digit kept (trailing zeros are significant)."""
    digits = len(s)
    sign = "-" if negative else ""
    if e >= digits or e < -4:  # the same switch as Python's repr of a float
        return f"{sign}{s[0]}{'.' + s[1:] if digits > 1 else ''}e{e:+03d}"
    if e >= 0:
        return sign + s[: e + 1] + ("." + s[e + 1 :] if e + 1 < digits else "")
    return sign + "0." + "0" * (-e - 1) + s


def _significant(v: Any, digits: int) -> str:
    """``v`` rounded half to even to ``digits`` significant digits, from its exact value."""
    if type(v) is float:
        if not math.isfinite(v):
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        if v == 0:
            return "0"
        # float formatting is correctly rounded from the exact binary value (half to even on ties)
        mant, _, exp = format(v, f".{digits - 1}e").partition("e")
        return _layout(mant.startswith("-"), mant.lstrip("-").replace(".", ""), int(exp))
    p, q = _exact(v)
    if p == 0:
        return "0"
    s, e = _round_ratio(abs(p), q, digits)
    return _layout(p < 0, s, e)


def _number(v: Any, digits: int | None) -> _Raw:
    if digits is None:
        f = float(v)
        if not math.isfinite(f):
            raise ValueError(f"cannot write a non-finite number ({f}) in JSON")
        return _Raw("0" if f == 0 else repr(f))
    return _Raw(_significant(v, digits))


def _numbers(values: Any, digits: int | None) -> list[str]:
    """JSON texts of many numbers (see :func:`dump_results`)."""
    arr = np.asarray(values)
    if arr.dtype.kind in "fiub":
        floats = arr.astype(np.float64).ravel()
        if not np.isfinite(floats).all():
            raise ValueError("cannot write a non-finite number in JSON")
        if digits is None:
            return ["0" if f == 0 else repr(f) for f in floats.tolist()]
        return [_significant(f, digits) for f in floats.tolist()]
    return [_number(v, digits) for v in arr.ravel().tolist()]
