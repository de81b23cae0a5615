"""Self weight of the members as nodal loads (``FORMAT.md``, additions to version 1).

A case with ``self_weight`` ``{"factor": f, "direction": d}`` loads every member
with its weight ``W = unit_weight · A · L · f`` along the unit vector of ``d``
(default −y in 2D, −z in 3D), half at each end joint: the usual lumping for a
pin-jointed model, which is exact for the joint equilibrium of a bar whose
weight is carried by its two pins (common practice; the bending of the bar
under its own weight is outside a truss model).

:func:`self_weight_loads` gives the float64 loads; :func:`self_weight_load_texts`
gives the same loads as decimal texts for the exact path of
:mod:`audit.precision`, computed from the input's decimal texts with
:data:`EXACT_DIGITS` significant digits (``L`` and the direction's norm are
square roots, irrational in general; this rounding is far below the working
precision of the exact path, at most 100 digits plus the condition's).
"""

from __future__ import annotations

import decimal
from fractions import Fraction

import numpy as np

from audit.model import FloatArray, LoadCase, Model

#: significant digits of the self-weight loads handed to the exact path
EXACT_DIGITS = 160


def default_direction(dim: int) -> tuple[float, ...]:
    """−y in 2D, −z in 3D."""
    return (0.0, -1.0) if dim == 2 else (0.0, 0.0, -1.0)


def member_weights(model: Model) -> FloatArray:
    """(n_members,) unit_weight · A · L (NaN where a member has no unit weight)."""
    if model.unit_weight.size != model.n_members:
        return np.full(model.n_members, np.nan)
    return model.unit_weight * model.A * model.lengths()


def self_weight_loads(model: Model, lc: LoadCase) -> FloatArray:
    """(n_nodes, dim) nodal loads of the case's self weight (zeros when it has none)."""
    out = np.zeros((model.n_nodes, model.dim), dtype=np.float64)
    if not lc.has_self_weight or lc.self_weight == 0.0 or model.n_members == 0:
        return out
    direction = np.asarray(lc.self_weight_direction or default_direction(model.dim), dtype=np.float64)
    half = 0.5 * lc.self_weight * np.nan_to_num(member_weights(model))
    share = half[:, None] * direction[None, :]
    np.add.at(out, model.conn[:, 0], share)
    np.add.at(out, model.conn[:, 1], share)
    return out


def _dec(text: str) -> decimal.Decimal:
    return decimal.Decimal(text)


def self_weight_load_texts(model: Model, lc: LoadCase) -> tuple[tuple[int, int, str], ...]:
    """The case's self-weight loads as (node, axis, decimal text) terms, from the input's texts.

    Each member gives one term per end and axis (terms for one node add up in the exact path).  Where a
    text is missing (a model built in memory) the float's shortest repr stands in for it.
    """
    if not lc.has_self_weight or model.n_members == 0:
        return ()
    ctx = decimal.Context(prec=EXACT_DIGITS)
    factor = _dec(lc.self_weight_text or repr(float(lc.self_weight)))
    if factor == 0:
        return ()
    dim = model.dim
    if lc.self_weight_direction:
        raw = [
            _dec(t) for t in lc.self_weight_direction_text or tuple(repr(float(c)) for c in lc.self_weight_direction)
        ]
        norm = ctx.sqrt(sum((ctx.multiply(c, c) for c in raw), decimal.Decimal(0)))
        unit = [ctx.divide(c, norm) for c in raw]
    else:
        unit = [_dec(repr(c)) for c in default_direction(dim)]
    coords = model.coords_text or tuple(tuple(repr(float(c)) for c in row) for row in model.coords)
    a_texts = model.A_text or tuple(repr(float(a)) for a in model.A)
    w_texts = model.unit_weight_text or tuple(repr(float(w)) for w in model.unit_weight)
    terms: list[tuple[int, int, str]] = []
    half = decimal.Decimal("0.5")
    for j in range(model.n_members):
        s, e = int(model.conn[j, 0]), int(model.conn[j, 1])
        l2 = sum((Fraction(coords[e][a]) - Fraction(coords[s][a])) ** 2 for a in range(dim))
        length = ctx.sqrt(ctx.divide(_dec(str(l2.numerator)), _dec(str(l2.denominator))))
        w = ctx.multiply(ctx.multiply(ctx.multiply(_dec(w_texts[j]), _dec(a_texts[j])), length), factor)
        w = ctx.multiply(w, half)
        for a in range(dim):
            if unit[a] == 0:
                continue
            t = format(ctx.multiply(w, unit[a]), "e")
            terms.append((s, a, t))
            terms.append((e, a, t))
    return tuple(terms)
