"""Cells of a table read as the neutral tree keeps them: ids as strings, numbers as their decimal text.

A number becomes what the JSON reader would have made of the same text (:mod:`audit.exchange.jsonread`):
an ``int`` for an integer, else the ``bytes`` of its decimal text in JSON's spelling (``+1.50`` is
``1.50``, ``.5`` is ``0.5``, ``1,5`` is ``1.5`` with ``decimal = ","``): every written digit is kept, so
the precision path and the rounding tolerances start from the text as written.  A workbook cell stored
as a number is taken at its stored value (the shortest text that reads back to the same float).
A unit conversion multiplies the decimal text exactly (:func:`scaled`).
"""

from __future__ import annotations

import math
import re
from decimal import Context, Decimal, localcontext
from fractions import Fraction
from typing import Any

#: a decimal number as people write it in a table (a leading '+', '.5' and '5.' allowed)
_NUMBER = re.compile(r"([+-]?)(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?")
_INT = re.compile(r"-?(?:0|[1-9]\d*)")

#: the truth words of a restraint flag (TABLES.md), lower case
FLAG_WORDS = {"1": True, "0": False, "yes": True, "no": False, "true": True, "false": False}
FLAG_WORDS |= {"fixed": True, "free": False}

#: the most digits a text may have (Python's own guard on integer conversion is 4300)
MAX_DIGITS = 4000


class CellError(ValueError):
    """A cell that cannot be read; the message says what is wrong in plain words."""


def is_empty(cell: Any) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def show(cell: Any) -> str:
    """A cell as the user sees it, for messages."""
    text = cell if isinstance(cell, str) else _stored_text(cell)
    text = text.strip()
    return repr(text if len(text) <= 40 else text[:37] + "...")


def _stored_text(cell: Any) -> str:
    if isinstance(cell, bool):
        return "TRUE" if cell else "FALSE"
    if isinstance(cell, float):
        return repr(cell)
    return str(cell)


def number_text(text: str, decimal_comma: bool) -> str:
    """The JSON spelling of a decimal number written as ``text``; :class:`CellError` if it is not one."""
    t = text.strip().replace("\u2212", "-")  # a typographic minus sign
    if decimal_comma:
        if "." in t:
            raise CellError(f"{t!r} is not a number with a decimal comma (decimal = ',' in the mapping file)")
        t = t.replace(",", ".")
    m = _NUMBER.fullmatch(t)
    if not m or not (m.group(2) or m.group(3)):
        raise CellError(f"{t!r} is not a number")
    sign, whole, frac, exp = m.groups()
    if len(whole) + len(frac or "") > MAX_DIGITS:
        raise CellError(f"a number has too many digits (more than {MAX_DIGITS})")
    whole = whole.lstrip("0") or "0"
    out = ("-" if sign == "-" else "") + whole
    if frac:
        out += "." + frac
    if exp is not None:
        out += "e" + exp
    return out


def tree_number(text: str) -> int | bytes:
    """What the JSON reader keeps for this JSON number text: an int for an integer, else its bytes."""
    if _INT.fullmatch(text):
        return int(text)
    return text.encode("ascii")


def read_number(cell: Any, decimal_comma: bool) -> int | bytes:
    """A number cell: CSV text as written, a workbook number at its stored value."""
    if isinstance(cell, bool):
        raise CellError(f"{show(cell)} is not a number")
    if isinstance(cell, int):
        return cell
    if isinstance(cell, float):
        if not math.isfinite(cell):
            raise CellError(f"{show(cell)} is not a finite number")
        if cell.is_integer() and abs(cell) < 2**53:
            return int(cell)
        return repr(cell).encode("ascii")
    if not isinstance(cell, str):
        raise CellError(f"{show(cell)} is not a number (a {type(cell).__name__} cell)")
    value = tree_number(number_text(cell, decimal_comma))
    if type(value) is bytes and not math.isfinite(float(value)):
        raise CellError(f"{cell.strip()!r} is beyond the range of a 64-bit float")
    return value


def read_id(cell: Any) -> str:
    """An id or a name: text as written (trimmed); a workbook integer as its decimal string."""
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    if isinstance(cell, bool):
        raise CellError(f"{show(cell)} is not an id")
    return str(cell).strip()


def read_flag(cell: Any) -> bool:
    """A restraint flag: 1/0, yes/no, true/false, fixed/free (any case), or a workbook boolean or 1/0."""
    if isinstance(cell, bool):
        return cell
    if isinstance(cell, (int, float)) and cell in (0, 1):
        return bool(cell)
    word = str(cell).strip().lower()
    if word in FLAG_WORDS:
        return FLAG_WORDS[word]
    raise CellError(f"{show(cell)} is not a restraint flag: use 1/0, yes/no, true/false or fixed/free")


def read_components(cell: Any, decimal_comma: bool) -> list[int | bytes]:
    """A direction: numbers separated by spaces or ';' (or ',' when the decimal mark is a point)."""
    if not isinstance(cell, str):
        raise CellError(f"{show(cell)} is not a direction: give its components separated by spaces or ';'")
    seps = r"[\s;]+" if decimal_comma else r"[\s;,]+"
    parts = [p for p in re.split(seps, cell.strip()) if p]
    if not 2 <= len(parts) <= 3:
        raise CellError(f"{show(cell)} is not a direction: give 2 or 3 components separated by spaces or ';'")
    return [read_number(p, decimal_comma) for p in parts]


def _decimal_text(v: int | bytes) -> str:
    return v.decode("ascii") if type(v) is bytes else str(v)


def scaled(v: int | bytes, factor: Fraction) -> tuple[int | bytes, bool]:
    """``v`` times ``factor`` as a decimal text, and whether that is exact.

    A factor whose denominator has only the primes 2 and 5 has a finite decimal form, and then the
    product is exact (every digit of the text kept); any other is rounded to 40 significant digits.
    """
    if factor == 1:
        return v, True
    d = Decimal(_decimal_text(v))
    den = factor.denominator
    while den % 2 == 0:
        den //= 2
    while den % 5 == 0:
        den //= 5
    exact = den == 1
    with localcontext(Context(prec=10**6 if exact else 40)):
        if exact:
            num, q = factor.numerator, factor.denominator
            k = 0
            while q % 10:  # make the denominator a power of ten
                mult = 5 if q % 2 == 0 else 2
                num, q = num * mult, q * mult
            while q > 1:
                q //= 10
                k += 1
            out = d * Decimal(num).scaleb(-k).normalize()
        else:
            out = d * Decimal(factor.numerator) / Decimal(factor.denominator)
    exponent = out.as_tuple().exponent
    positional = isinstance(exponent, int) and exponent <= 0 and -30 < out.adjusted() < 30
    text = format(out, "f") if positional else format(out, "e")
    return tree_number(number_text(text, False)), exact
