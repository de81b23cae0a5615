"""Exact numbers: decimal texts as scaled integers, high-precision values as integers times 10^a·2^b.

A decimal text is read exactly (``fractions.Fraction``) into an integer M with
a power of ten common to its kind of quantity, value = M·10^-k
(:func:`decimal_ints`); a high-precision value is an integer times
``10^e10·2^e2`` (:class:`Fixed`).  Any finite decimal text is handled
(``5e-324``, ``1e-400``, ``0e400``, 60 digits): nothing here converts a huge
integer or a power of ten to float64 before the scaling is done in integer
arithmetic.  :func:`ints_to_float` cuts each entry to its leading 64 bits and
a sticky bit only at the end (so the rounding to 53 bits stays correct, and a
small entry next to a huge one keeps its digits); :func:`floor_log2_scaled`
is exact; :func:`round_scaled` multiplies in float64 only while the products
stay far inside the float range (:func:`scale_float`), and exactly otherwise.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

import mpmath
import numpy as np

from audit.model import FloatArray

U = 2.0**-53


ObjArray = np.ndarray  #: numpy object array of Python ints


def _decimal_k(fr: Fraction) -> int:
    """Smallest k with fr·10^k an integer (fr must be a decimal fraction)."""
    d = fr.denominator
    a = (d & -d).bit_length() - 1
    rest = d >> a
    b = 0
    while rest % 5 == 0:
        rest //= 5
        b += 1
    if rest != 1:
        raise ValueError(f"{fr} is not a decimal fraction")
    return max(a, b)


def decimal_ints(texts: Sequence[str]) -> tuple[ObjArray, int]:
    """Integers M_i and one k with value_i = M_i · 10^-k exactly (texts parsed once each)."""
    parsed: dict[str, Fraction] = {t: Fraction(t) for t in set(texts)}
    k = max((_decimal_k(f) for f in parsed.values()), default=0)
    p = 10**k
    as_int = {t: f.numerator * (p // f.denominator) for t, f in parsed.items()}
    out = np.empty(len(texts), dtype=object)
    out[:] = list(map(as_int.__getitem__, texts))
    return out, k


_NUMBER = re.compile(r"^[+-]?(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?$")


def text_quantum(text: str) -> float:
    """Half a unit in the last written digit of a decimal text ("2.1e8" -> 5e6)."""
    m = _NUMBER.match(text.strip())
    if not m:
        return float("nan")
    frac = len(m.group(2) or "")
    exp = int(m.group(3) or 0) - frac
    if exp > 308:  # "0e400": a finite value whose last digit's unit is beyond the float range
        return float("inf")
    if exp < -400:
        return 0.0
    return 0.5 * 10.0**exp


def texts_or_repr(texts: Sequence[str], values: FloatArray) -> tuple[list[str], bool]:
    """The decimal texts, or the shortest repr of each float when the model carries no texts."""
    flat = np.asarray(values, dtype=np.float64).reshape(-1)
    if len(texts) == flat.size and flat.size:
        return list(texts), True
    return [repr(float(x)) for x in flat], flat.size == 0


def ints_to_float(ints: ObjArray, e10: int, e2: int) -> FloatArray:
    """Correctly rounded float64 of ints·10^e10·2^e2 (up to one ulp when e10 < 0).

    Integers beyond the float range are cut, entry by entry, to their leading
    64 bits plus a sticky bit before conversion (so small entries next to huge
    ones keep their digits); a value beyond the float range becomes ±inf,
    one below it 0 or a subnormal.  The ints are converted to float64 once
    (``astype``) and that conversion is shared by the fast paths.
    """
    a = np.asarray(ints, dtype=object)
    if a.size == 0:
        return np.zeros(a.shape)
    f0 = None
    if abs(e10) <= _EXACT_POW10:
        try:
            f0 = a.astype(np.float64)  # correctly rounded (PyLong_AsDouble)
        except OverflowError:
            f0 = None
    if f0 is not None:
        fast = _small_ints_to_float(a, e10, e2, f0)
        if fast is not None:
            return fast
        mixed = _mixed_ints_to_float(a, e10, e2, f0)
        if mixed is not None:
            return mixed
    return _exact_ints_to_float(a, e10, e2)


def _exact_ints_to_float(a: ObjArray, e10: int, e2: int) -> FloatArray:
    """The exact path of :func:`ints_to_float` (no fast path tried)."""
    shift = 0
    if e10 > 0:
        a = a * 10**e10
    elif e10 < 0:
        den = 10 ** (-e10)
        shift = 64 + den.bit_length()
        a = np.left_shift(a, shift) // den  # a·2^shift, exactly (one shift instead of a multiplication)
    try:
        f = a.astype(np.float64)
    except OverflowError:
        return _huge_ints_to_float(a, e2 - shift)
    return np.ldexp(f, e2 - shift)


#: 10^k is a float64 exactly for 0 <= k <= 22 (5^22 < 2^53)
_EXACT_POW10 = 22


def _small_ints_to_float(a: ObjArray, e10: int, e2: int, f0: FloatArray | None = None) -> FloatArray | None:
    """The fast path of :func:`ints_to_float` when |e10| <= 22 and (e10 = 0 or every |int| < 2^53), else None.

    Then each int and 10^|e10| are float64 exactly, and one IEEE multiplication or division is correctly
    rounded (IEEE 754-2019, §4.3); the scaling by 2^e2 is exact unless the result leaves the normal range,
    which sends the call down the exact path.  ``f0`` is ``a.astype(np.float64)`` when the caller has it.
    """
    if abs(e10) > _EXACT_POW10:
        return None
    if f0 is not None:
        f = f0
    else:
        try:
            f = a.astype(np.float64)  # correctly rounded (PyLong_AsDouble)
        except OverflowError:
            return None
    if e10 and not float(np.max(np.abs(f))) < 2.0**53:  # |f| < 2^53 implies |int| < 2^53 (2^53 + 1 rounds to 2^53)
        return None
    if e10 > 0:
        f = f * 10.0**e10
    elif e10 < 0:
        f = f / 10.0 ** (-e10)
    if e2:
        nz = f[f != 0.0]
        if nz.size:
            lo = float(np.min(np.abs(nz)))
            hi = float(np.max(np.abs(nz)))
            if math.frexp(lo)[1] + e2 < -1000 or math.frexp(hi)[1] + e2 > 1000:
                return None
        f = np.ldexp(f, e2)
    return f


#: relative error bound of :func:`abs_to_float_bound` (four roundings of 2^-53 each, rounded up)
ABS_BOUND_REL = 2.0**-50


def abs_to_float_bound(ints: ObjArray, e10: int, e2: int) -> FloatArray:
    """|ints|·10^e10·2^e2 in float64 within a relative :data:`ABS_BOUND_REL`, for error bounds (not results).

    ``float(int)`` is correctly rounded (relative error ≤ 2^-53), the scale ``10.0**e10·2.0**e2`` of
    :func:`scale_float` is within two roundings (C ``pow``, then an exact power of two) and the product adds
    one more (IEEE 754-2019, §4.3; common practice: a relative error below 4·2^-53 that the bounds' safety
    factors cover).  That holds only while every product stays in the normal range; otherwise (and for an
    integer beyond the float range or a scale beyond 2^±900) it is :func:`ints_to_float`, correctly rounded.
    One float multiplication instead of two object-array operations when 10^e10 is not an integer.
    """
    a = np.asarray(ints, dtype=object)
    conv = scale_float(e10, e2)
    if a.size and conv is not None:
        try:
            f = np.abs(a.astype(np.float64))
        except OverflowError:
            f = None
        if f is not None:
            with np.errstate(over="ignore", under="ignore"):  # out of range: checked just below
                out = f * conv
            nz = out[out != 0.0]
            if not nz.size or (float(nz.min()) >= 2.0**-1000 and float(nz.max()) <= 2.0**1000):
                return out
    return np.abs(ints_to_float(a, e10, e2))


def _mixed_ints_to_float(a: ObjArray, e10: int, e2: int, f: FloatArray | None = None) -> FloatArray | None:
    """:func:`ints_to_float` when only some entries reach 2^53 (0 < |e10| <= 22): the fast path for the others.

    Each entry's value is the same either way: an int below 2^53 divided (multiplied) by 10^|e10| <= 10^22
    is correctly rounded by one IEEE operation, and the exact path's ``(a·2^shift) // 10^|e10|`` (64 bits more
    than needed) cannot land on a rounding midpoint for such an entry: its distance to one is at least
    ``2^-54·5^-22·|a| > 2^-117·|a|`` unless it is one exactly.  None when the split does not apply.
    """
    if not 0 < abs(e10) <= _EXACT_POW10 or a.size < 2:
        return None
    if f is None:
        try:
            f = a.astype(np.float64)
        except OverflowError:
            return None
    big = np.abs(f) >= 2.0**53
    if big.all() or not big.any():
        return None
    small = ~big
    lo = _small_ints_to_float(a[small], e10, e2, f[small])
    if lo is None:
        return None
    out = np.empty(a.shape)
    out[small] = lo
    out[big] = _exact_ints_to_float(a[big], e10, e2)  # what ints_to_float does with them: none is below 2^53
    return out


def _huge_ints_to_float(a: ObjArray, e2: int) -> FloatArray:
    """float64 of a·2^e2 entry by entry for integers too long for a float: leading 64 bits and a sticky bit."""
    flat = a.reshape(-1)
    mant = np.empty(flat.size, dtype=np.float64)
    expo = np.empty(flat.size, dtype=np.int64)
    for i, x in enumerate(flat.tolist()):
        x = int(x)
        mag = abs(x)
        sh = max(mag.bit_length() - 64, 0)
        top = mag >> sh
        if sh and mag & ((1 << sh) - 1):
            top |= 1  # sticky bit: keeps the rounding to 53 bits correct
        mant[i] = float(-top if x < 0 else top)
        expo[i] = e2 + sh
    with np.errstate(over="ignore", under="ignore"):
        out = np.ldexp(mant, np.clip(expo, -(2**30), 2**30).astype(np.int32))
    return out.reshape(a.shape)


def floor_log2_scaled(x: float, k10: int) -> int:
    """floor(log2(x·10^k10)) for a finite x > 0, exactly (integer arithmetic, any k10)."""
    m, e = math.frexp(x)
    mi = int(m * 2.0**53)
    e -= 53
    if k10 >= 0:
        return (mi * 10**k10).bit_length() - 1 + e
    den = 10 ** (-k10)
    j = mi.bit_length() - den.bit_length()  # floor(log2(mi/den)) is j or j − 1
    if not _le_pow(den, j, mi):
        j -= 1
    return j + e


def _le_pow(den: int, j: int, mi: int) -> bool:
    """den·2^j <= mi, exactly, for any integer j."""
    return (den << j) <= mi if j >= 0 else den <= (mi << -j)


def scale_float(k10: int, e2: int) -> float | None:
    """10^k10·2^e2 as the float64 ``10.0**k10 * 2.0**e2``, or None when it is beyond about 2^±900.

    None tells the caller to scale exactly (:func:`round_scaled`): a product
    of such a factor with a float could overflow or lose its digits.
    """
    if abs(k10 * math.log2(10) + e2) > 900:
        return None
    if abs(k10) <= 300 and abs(e2) <= 1000:
        return 10.0**k10 * 2.0**e2
    return float(mpmath.mpf(10) ** k10 * mpmath.mpf(2) ** e2)


def round_scaled(x: FloatArray, k10: int, e2: int, conv: float | None) -> ObjArray:
    """Nearest integers to x·10^k10·2^e2.

    With ``conv`` the float64 of the scale (:func:`scale_float`) and every
    product ``x·conv`` below 2^1000 this is ``rint(x·conv)`` in float64 (the
    steering of the refinement needs no more); otherwise it is computed
    exactly from each float's 53-bit mantissa, rounding half up.
    """
    x = np.asarray(x, dtype=np.float64)
    if conv is not None and math.isfinite(conv) and conv > 0:
        big = float(np.max(np.abs(x), initial=0.0))
        if big * conv < 2.0**1000:
            return float_to_ints(np.rint(x * conv))
    m, e = np.frexp(x)
    mi = (m * 2.0**53).astype(np.int64).astype(object)
    sh = e.astype(np.int64) - 53 + e2
    p10 = 10 ** abs(k10)

    def one(mant: int, s: int) -> int:
        num, den = (mant * p10, 1) if k10 >= 0 else (mant, p10)
        if s >= 0:
            num <<= s
        else:
            den <<= -s
        return (2 * num + den) // (2 * den)

    out = np.empty(x.shape, dtype=object)
    out.reshape(-1)[:] = [one(int(a), int(b)) for a, b in zip(mi.reshape(-1), sh.reshape(-1), strict=True)]
    return out


def float_to_ints(y: FloatArray) -> ObjArray:
    """Exact Python ints of an integer-valued float array.

    Below 2^62 through int64; above, each float is its 53-bit mantissa (exact in int64) shifted left by its
    exponent, ``m·2^(e−53)`` with ``e − 53 ≥ 10``: the float's value exactly, as ``int(float)`` gives it, in
    one object shift per entry (85 ms against 116 ms for ``int`` per entry on 4.8·10⁵ floats of 2^150).
    Non-finite floats go through ``int`` (which raises, as before).
    """
    y = np.asarray(y, dtype=np.float64)
    out = np.empty(y.shape, dtype=object)
    small = np.abs(y) < 2.0**62
    if small.all():
        out[...] = y.astype(np.int64).astype(object) if y.ndim else int(y)
        return out
    out[small] = y[small].astype(np.int64).astype(object)
    big = y[~small]
    if np.all(np.isfinite(big)):
        m, e = np.frexp(big)
        out[~small] = np.left_shift((m * 2.0**53).astype(np.int64).astype(object), (e - 53).astype(object))
    else:
        out[~small] = _INT(big)  # int(float) is exact for an integer-valued float (raises for inf and nan)
    return out


_INT = np.frompyfunc(int, 1, 1)


def float_exact_to_scale(x: FloatArray, k10: int, s2: int) -> tuple[ObjArray, FloatArray]:
    """floor(x·10^k10·2^s2) as ints (exact when possible) and the per-entry conversion error in units of the scale.

    The error is 1 wherever the scaled float has bits below the unit (``exponent − 53 + s2 < 0``), else 0.
    With ``k10 = 0`` and every nonzero ``x·2^s2`` within ``2^±1000`` the scaling by a power of two is exact in
    float64, and so is ``floor``: the ints are then :func:`float_to_ints` of that float (the same integers).
    """
    x = np.asarray(x, dtype=np.float64)
    m, e = np.frexp(x)
    if k10 == 0 and x.size and np.all(np.isfinite(x)):
        nz = np.abs(x[x != 0.0])
        if not nz.size or (math.frexp(float(nz.min()))[1] + s2 > -1000 and math.frexp(float(nz.max()))[1] + s2 < 1000):
            err = np.where(e.astype(np.int64) - 53 + s2 < 0, 1.0, 0.0)
            return float_to_ints(np.floor(np.ldexp(x, s2))), err
    mi = (m * 2.0**53).astype(np.int64).astype(object) * 10**k10
    sh = (e.astype(np.int64) - 53 + s2).astype(object)
    out = np.empty(x.shape, dtype=object)
    err = np.zeros(x.shape)
    pos = (e.astype(np.int64) - 53 + s2) >= 0
    one = np.ones(x.shape, dtype=object)
    out[pos] = mi[pos] * (one[pos] << sh[pos])
    neg = ~pos
    if neg.any():
        out[neg] = mi[neg] // (one[neg] << (-sh[neg]))
        err[neg] = 1.0
    return out, err


@dataclass(frozen=True)
class Fixed:
    """High-precision values ints·10^e10·2^e2 (exact dyadic-decimal numbers)."""

    ints: ObjArray
    e10: int
    e2: int

    def to_float(self) -> FloatArray:
        return ints_to_float(self.ints, self.e10, self.e2)

    def to_mpf(self, dps: int) -> ObjArray:
        """mpmath mpf values at ``dps`` decimal digits (object array of the same shape)."""
        with mpmath.workdps(dps + 10):
            scale = mpmath.mpf(10) ** self.e10 * mpmath.mpf(2) ** self.e2
            out = np.empty(self.ints.shape, dtype=object)
            flat = out.reshape(-1)
            for i, v in enumerate(self.ints.reshape(-1)):
                flat[i] = mpmath.mpf(int(v)) * scale
        return out

    def to_fractions(self) -> ObjArray:
        """Exact values as fractions.Fraction (object array)."""
        scale = Fraction(10) ** self.e10 * Fraction(2) ** self.e2
        out = np.empty(self.ints.shape, dtype=object)
        out.reshape(-1)[:] = [Fraction(int(v)) * scale for v in self.ints.reshape(-1)]
        return out

    def to_strings(self, digits: int) -> ObjArray:
        vals = self.to_mpf(digits)
        out = np.empty(vals.shape, dtype=object)
        out.reshape(-1)[:] = [mpmath.nstr(v, digits, strip_zeros=False) for v in vals.reshape(-1)]
        return out


def ints_to_float_rows(a: ObjArray) -> FloatArray:
    """Float rows of an integer matrix, each row scaled by a power of two so that its largest entry is below 2^60.

    For direction vectors: the direction is kept, the length is not.
    """
    if not a.size:
        return np.zeros(a.shape)
    try:
        return a.astype(np.float64)
    except OverflowError:
        pass
    out = np.empty(a.shape, dtype=np.float64)
    for i in range(a.shape[0]):
        top = max(abs(int(x)).bit_length() for x in a[i])
        out[i] = ints_to_float(a[i], 0, -max(top - 60, 0))
    return out
