"""Stage 3 of reading, supports: restraints and springs of each node, with unit directions and written texts.

Each node has at most one support entry; an axis must exist in the model's
dimension; a direction must not be the zero vector; a spring's stiffness may
be zero but not negative; the restraint directions at one node must be
linearly independent.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..model import AXES
from .problems import Path_, _path_str, _Problems
from .values import _id, _one_float, _show, _text


def _direction(
    raw: list[Any], dim: int, path: Path_, probs: _Problems
) -> tuple[tuple[float, ...], tuple[str, ...]] | None:
    """A unit vector and the written texts of a direction, or None after reporting a problem."""
    texts = tuple(_text(c) for c in raw)
    if len(raw) != dim:
        probs.add(path, f"a direction needs {dim} components in a {dim}D model, got {len(raw)}")
        return None
    comps = [_one_float(c, (*path, i), probs) for i, c in enumerate(raw)]
    if not all(math.isfinite(c) for c in comps):
        return None
    norm = math.sqrt(sum(c * c for c in comps))
    if norm == 0.0 or not math.isfinite(norm):
        probs.add(path, "a direction must not be the zero vector")
        return None
    return tuple(c / norm for c in comps), texts


def _axis_vector(axis: int, dim: int) -> tuple[tuple[float, ...], tuple[str, ...]]:
    vec = tuple(1.0 if i == axis else 0.0 for i in range(dim))
    return vec, tuple("1" if i == axis else "0" for i in range(dim))


@dataclass
class _Supports:
    node: list[int]
    dirs: list[tuple[float, ...]]
    labels: list[str]
    dir_texts: list[tuple[str, ...]]
    spring_node: list[int]
    spring_dirs: list[tuple[float, ...]]
    spring_k: list[float]
    spring_k_text: list[str]
    spring_dir_texts: list[tuple[str, ...]]
    by_node: dict[int, list[int]]  #: node index -> its restraint indices
    entry_of_node: dict[int, int]  #: node index -> support entry index


def _supports(doc: dict[str, Any], dim: int, node_index: Mapping[str, int], probs: _Problems) -> _Supports:
    s = _Supports([], [], [], [], [], [], [], [], [], {}, {})
    for i, sup in enumerate(doc.get("supports", [])):
        p: Path_ = ("supports", i)
        nid = _id(sup["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        elif ni in s.entry_of_node:
            probs.add(
                (*p, "node"),
                f"node {nid!r} already has a support entry ({_path_str(('supports', s.entry_of_node[ni]))})",
            )
            ni = None
        else:
            s.entry_of_node[ni] = i
        if "restrain" not in sup and "springs" not in sup:
            probs.add(p, "a support needs 'restrain' or 'springs'")
        for j, r in enumerate(sup.get("restrain", [])):
            rp = (*p, "restrain", j)
            got: tuple[tuple[float, ...], tuple[str, ...]] | None
            if isinstance(r, str):
                axis = AXES.index(r)
                if axis >= dim:
                    probs.add(rp, f"axis {r!r} does not exist in a {dim}D model")
                    continue
                got, label = _axis_vector(axis, dim), r
            else:
                got = _direction(r["direction"], dim, (*rp, "direction"), probs)
                label = "dir(" + ",".join(_text(c) for c in r["direction"]) + ")"
            if got is None or ni is None:
                continue
            s.by_node.setdefault(ni, []).append(len(s.node))
            s.node.append(ni)
            s.dirs.append(got[0])
            s.dir_texts.append(got[1])
            s.labels.append(label)
        for j, sp in enumerate(sup.get("springs", [])):
            sp_path = (*p, "springs", j)
            k = _one_float(sp["stiffness"], (*sp_path, "stiffness"), probs)
            if k < 0:
                probs.add(
                    (*sp_path, "stiffness"), f"a spring stiffness must not be negative, got {_show(sp['stiffness'])}"
                )
            if ("axis" in sp) == ("direction" in sp):
                probs.add(sp_path, "a spring needs exactly one of 'axis' and 'direction'")
                continue
            if "axis" in sp:
                axis = AXES.index(sp["axis"])
                if axis >= dim:
                    probs.add((*sp_path, "axis"), f"axis {sp['axis']!r} does not exist in a {dim}D model")
                    continue
                got = _axis_vector(axis, dim)
            else:
                got = _direction(sp["direction"], dim, (*sp_path, "direction"), probs)
            if got is None or ni is None:
                continue
            s.spring_node.append(ni)
            s.spring_dirs.append(got[0])
            s.spring_dir_texts.append(got[1])
            s.spring_k.append(k)
            s.spring_k_text.append(_text(sp["stiffness"]))
    _dependent_restraints(s, dim, doc, probs)
    return s


def _dependent_restraints(s: _Supports, dim: int, doc: dict[str, Any], probs: _Problems) -> None:
    """Report nodes whose restraint directions are linearly dependent (batched rank, no loop over nodes)."""
    by_count: dict[int, list[int]] = {}
    for ni, rows in s.by_node.items():
        if len(rows) > 1:
            by_count.setdefault(len(rows), []).append(ni)
    dirs = np.array(s.dirs, dtype=np.float64).reshape(-1, dim)
    for count, nodes in by_count.items():
        if count > dim:
            bad = nodes
        else:
            stack = dirs[np.array([s.by_node[n] for n in nodes], dtype=np.int64)]
            ranks = np.linalg.matrix_rank(stack, tol=1e-9)
            bad = [n for n, r in zip(nodes, np.atleast_1d(ranks).tolist(), strict=True) if r < count]
        for ni in bad:
            entry = s.entry_of_node[ni]
            labels = ", ".join(s.labels[r] for r in s.by_node[ni])
            nid = _id(doc["supports"][entry]["node"])
            probs.add(
                ("supports", entry, "restrain"),
                f"the restraints at node {nid!r} are linearly dependent ({labels}): one of them repeats another",
            )
