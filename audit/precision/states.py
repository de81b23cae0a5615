"""Load cases and combinations ("states") as exact integers: loads, temperature, length errors, settlements.

Each kind of quantity has one power of ten for all its texts; a combination
is the exact sum of its cases times its factors' decimal texts, so every
state's right-hand side is exact.  A settlement along an inclined restraint
is rounded in the exact path (flagged per state in
:attr:`States.inclined_settlement`; its bounds are then not established).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from audit.model import FloatArray, LoadCase, Model
from audit.selfweight import self_weight_load_texts

from .exact_numbers import ObjArray, decimal_ints, ints_to_float, texts_or_repr


@dataclass(frozen=True)
class States:
    ids: tuple[str, ...]
    loads: ObjArray  #: (n_nodes, dim, ns) at 10^-(kf+kc)
    temp: ObjArray  #: (m, ns) alpha·delta at 10^-(ka+kt+kc)
    lerr: ObjArray  #: (m, ns) at 10^-(ke+kc)
    settle: ObjArray  #: (n_restraints, ns) at 10^-(kg+kc)
    kf: int
    kat: int
    ke: int
    kg: int
    kc: int
    has_temp: bool
    has_lerr: bool
    inclined_settlement: tuple[bool, ...]
    abs_load: FloatArray  #: (n_nodes, dim, ns) |f| in float


def _with_texts(model: Model, lc: LoadCase) -> LoadCase:
    """A load case whose ``*_text`` terms are filled from its float arrays where they were left empty.

    A model read from a file always carries the decimal texts; one built in memory (the Python API, the
    benchmark generators) may not, and must then be taken at its float values (as the coordinates, E and A
    already are), never as unloaded.  A case's self weight joins its loads as decimal texts
    (:func:`audit.selfweight.self_weight_load_texts`).
    """
    repl: dict[str, object] = {}
    load_text = lc.load_text
    if not load_text and np.any(lc.loads):
        nz = np.argwhere(lc.loads != 0.0)
        load_text = tuple((int(n), int(a), repr(float(lc.loads[n, a]))) for n, a in nz)
    if lc.has_self_weight:  # the members' weight, from the input's texts (audit.selfweight)
        load_text = load_text + self_weight_load_texts(model, lc)
    if load_text is not lc.load_text:
        repl["load_text"] = load_text
    for arr, attr in ((lc.temperature, "temperature_text"), (lc.length_error, "length_error_text")):
        if not getattr(lc, attr) and np.any(arr):
            repl[attr] = tuple((int(j), repr(float(arr[j]))) for j in np.flatnonzero(arr))
    if not lc.settlement_text and np.any(lc.settlement):
        repl["settlement_text"] = tuple((int(j), repr(float(lc.settlement[j]))) for j in np.flatnonzero(lc.settlement))
    return replace(lc, **repl) if repl else lc  # type: ignore[arg-type]


def load_states(model: Model) -> States:
    d, nn, m, nr = model.dim, model.n_nodes, model.n_members, model.n_restraints
    lcs = tuple(_with_texts(model, lc) for lc in model.load_cases)

    def texts(attr: str) -> list[str]:
        return [t for lc in lcs for (*_k, t) in getattr(lc, attr)]

    fl_all, kf = decimal_ints(texts("load_text"))
    t_all, kt = decimal_ints(texts("temperature_text"))
    e_all, ke = decimal_ints(texts("length_error_text"))
    g_all, kg = decimal_ints(texts("settlement_text"))
    a_texts, _ok = texts_or_repr(model.alpha_text, model.alpha)
    alpha, ka = decimal_ints(a_texts)
    fac_texts = [t for cb in model.combinations for (_i, _f, t) in cb.factors]
    fac_all, kc = decimal_ints(fac_texts)
    nc = len(lcs)
    F = np.zeros((nn, d, nc), dtype=object)
    Tm = np.zeros((m, nc), dtype=object)
    Em = np.zeros((m, nc), dtype=object)
    G = np.zeros((nr, nc), dtype=object)
    pos = {"load_text": 0, "temperature_text": 0, "length_error_text": 0, "settlement_text": 0}
    for i, lc in enumerate(lcs):
        for node, axis, _t in lc.load_text:
            F[node, axis, i] += fl_all[pos["load_text"]]
            pos["load_text"] += 1
        for mem, _t in lc.temperature_text:
            Tm[mem, i] += t_all[pos["temperature_text"]]
            pos["temperature_text"] += 1
        for mem, _t in lc.length_error_text:
            Em[mem, i] += e_all[pos["length_error_text"]]
            pos["length_error_text"] += 1
        for r, _t in lc.settlement_text:
            G[r, i] += g_all[pos["settlement_text"]]
            pos["settlement_text"] += 1
    TA = Tm * alpha[:, None] if m else Tm
    one = 10**kc
    cols_f = [F[:, :, i] * one for i in range(nc)]
    cols_t = [TA[:, i] * one for i in range(nc)]
    cols_e = [Em[:, i] * one for i in range(nc)]
    cols_g = [G[:, i] * one for i in range(nc)]
    ids = [lc.id for lc in lcs]
    j = 0
    for cb in model.combinations:
        f = np.zeros((nn, d), dtype=object)
        t = np.zeros(m, dtype=object)
        e = np.zeros(m, dtype=object)
        g = np.zeros(nr, dtype=object)
        for ci, _v, _t in cb.factors:
            w = fac_all[j]
            j += 1
            f = f + F[:, :, ci] * w
            t = t + TA[:, ci] * w
            e = e + Em[:, ci] * w
            g = g + G[:, ci] * w
        cols_f.append(f)
        cols_t.append(t)
        cols_e.append(e)
        cols_g.append(g)
        ids.append(cb.id)
    ns = len(ids)
    loads = np.stack(cols_f, axis=2) if ns else np.zeros((nn, d, 0), dtype=object)
    temp = np.stack(cols_t, axis=1) if ns else np.zeros((m, 0), dtype=object)
    lerr = np.stack(cols_e, axis=1) if ns else np.zeros((m, 0), dtype=object)
    settle = np.stack(cols_g, axis=1) if ns else np.zeros((nr, 0), dtype=object)
    incl_r = np.array([sum(1 for x in r if float(x) != 0.0) > 1 for r in model.restraint_dir], dtype=bool)
    incl_settle = tuple(bool(np.any((settle[:, i] != 0) & incl_r)) if nr else False for i in range(ns))
    return States(
        ids=tuple(ids),
        loads=loads,
        temp=temp,
        lerr=lerr,
        settle=settle,
        kf=kf,
        kat=ka + kt,
        ke=ke,
        kg=kg,
        kc=kc,
        has_temp=bool(np.any(temp != 0)) if temp.size else False,
        has_lerr=bool(np.any(lerr != 0)) if lerr.size else False,
        inclined_settlement=incl_settle,
        abs_load=np.abs(ints_to_float(loads, -(kf + kc), 0)) if loads.size else np.zeros(loads.shape),
    )
