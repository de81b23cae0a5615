"""The records of the stability analysis: traps, mechanisms, states of self-stress and the report.

``StabilityReport.as_dict`` is the FORMAT.md ``stability`` block.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from audit.stability.wording import plural


@dataclass(frozen=True)
class Trap:
    """A recognised mistake, explained in words."""

    kind: str  #: "no-supports", "unsupported-part", "isolated-joint", "parallel-reactions", ...
    message: str
    nodes: tuple[str, ...] = ()
    members: tuple[str, ...] = ()
    direction: tuple[float, ...] = ()
    point: tuple[float, ...] = ()

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"kind": self.kind, "message": self.message}
        for key in ("nodes", "members", "direction", "point"):
            if getattr(self, key):
                out[key] = list(getattr(self, key))
        return out


@dataclass(frozen=True)
class Mechanism:
    """One mechanism of the basis: which joints move, and how."""

    kind: str  #: "rigid-body" or "internal"
    description: str
    joints: tuple[str, ...]  #: moving joints, largest movement first
    #: (joint, displacement) scaled so that the joint that moves most moves by 1
    mode: tuple[tuple[str, tuple[float, ...]], ...]
    order: str = ""  #: internal: "finite", "first-order infinitesimal", "not proven infinitesimal"
    trap: str = ""  #: kind of the trap it illustrates, if any
    trap_nodes: tuple[str, ...] = ()  #: the joints the trap names (e.g. the panel without a diagonal)

    def as_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "description": self.description,
            "joints": list(self.joints),
            "mode": {j: list(v) for j, v in self.mode},
            "order": self.order,
            "trap": self.trap,
        }


@dataclass(frozen=True)
class SelfStress:
    """One state of self-stress: members (and reactions) carrying a self-equilibrated set of forces."""

    members: tuple[str, ...]  #: largest force first
    forces: tuple[float, ...]  #: tension positive, scaled so that the largest |force| is 1
    reactions: tuple[str, ...]  #: e.g. "A x", "C dir(1,1)"

    def as_dict(self) -> dict[str, Any]:
        return {"members": list(self.members), "forces": list(self.forces), "reactions": list(self.reactions)}


@dataclass(frozen=True)
class StabilityReport:
    """Everything :func:`analyse` established.  ``as_dict`` holds the FORMAT.md ``stability`` block."""

    dim: int
    joints: int
    members: int
    reactions: int  #: r: restraint components plus springs of non-zero stiffness
    springs_counted: int
    springs_zero: int
    maxwell_count: int  #: m + r − d·j
    rank: int  #: an upper bound when ``lower_bound_only``
    mechanisms: int  #: a lower bound when ``lower_bound_only``
    rigid_body_mechanisms: int
    internal_mechanisms: int
    self_stress_states: int  #: a lower bound when ``self_stress_is_lower_bound``
    proof: str  #: "exact" or "numerical"
    method: str  #: how the rank was established, in words
    evidence: str  #: the numbers behind a numerical rank
    threshold: float | None  #: the numerical zero threshold used (relative), None when exact
    lower_bound_only: bool  #: the numerical search stopped before finding every zero mode
    components: int
    #: ``self_stress_states`` is only a lower bound (with ``lower_bound_only``: the rank is then an upper bound)
    self_stress_is_lower_bound: bool = False
    mechanism_list: tuple[Mechanism, ...] = ()
    self_stress_list: tuple[SelfStress, ...] = ()
    traps: tuple[Trap, ...] = ()
    order_test: dict[str, Any] = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    @property
    def stable(self) -> bool:
        return self.mechanisms == 0

    @property
    def classification(self) -> str:
        if self.mechanisms:
            return "unstable"
        return "stable-indeterminate" if self.self_stress_states else "stable-determinate"

    def summary(self) -> str:
        how = "proven in exact arithmetic" if self.proof == "exact" else "established numerically"
        count = f"Maxwell count m + r − d·j = {self.maxwell_count}"
        if self.stable:
            det = (
                f"statically indeterminate to degree {self.self_stress_states}"
                if self.self_stress_states
                else "statically determinate"
            )
            return f"stable and {det}: rank {self.rank} = d·j, no mechanism ({how}; {count})"
        parts = []
        if self.rigid_body_mechanisms:
            parts.append(plural(self.rigid_body_mechanisms, "rigid-body motion") + " left free by the supports")
        if self.internal_mechanisms:
            parts.append(plural(self.internal_mechanisms, "internal mechanism"))
        at_least = "at least " if self.lower_bound_only else ""
        at_most = "at most " if self.lower_bound_only else ""
        return (
            f"unstable: {at_least}{plural(self.mechanisms, 'independent mechanism')} ({', '.join(parts)}), "
            f"rank {at_most}{self.rank} < d·j = {self.dim * self.joints}, {self.self_stress_words()} "
            f"({how}; {count})"
        )

    def self_stress_words(self) -> str:
        """'2 states of self-stress', 'at least 3 states ...', or 'states of self-stress not established'."""
        if not self.self_stress_is_lower_bound:
            return f"{plural(self.self_stress_states, 'state')} of self-stress"
        if self.self_stress_states > 0:
            return f"at least {plural(self.self_stress_states, 'state')} of self-stress"
        return "states of self-stress not established"

    @property
    def self_stress_established(self) -> int | None:
        """The number of states of self-stress, None when only a lower bound is known."""
        return None if self.self_stress_is_lower_bound else self.self_stress_states

    def as_dict(self) -> dict[str, Any]:
        return {
            "maxwell_count": self.maxwell_count,
            "rank": self.rank,
            "mechanisms": self.mechanisms,
            "self_stress_states": self.self_stress_established,
            "classification": self.classification,
            "proof": self.proof,
            "summary": self.summary(),
            "counts": {
                "dimensions": self.dim,
                "joints": self.joints,
                "members": self.members,
                "reaction_components": self.reactions,
                "springs_counted_as_reactions": self.springs_counted,
                "zero_springs_not_counted": self.springs_zero,
            },
            "rigid_body_mechanisms": self.rigid_body_mechanisms,
            "internal_mechanisms": self.internal_mechanisms,
            "mechanism_count_is_lower_bound": self.lower_bound_only,
            "rank_is_upper_bound": self.lower_bound_only,
            "self_stress_states_at_least": self.self_stress_states,
            "self_stress_count_is_lower_bound": self.self_stress_is_lower_bound,
            "connected_parts": self.components,
            "method": self.method,
            "evidence": self.evidence,
            "threshold": self.threshold,
            "mechanisms_detail": [m.as_dict() for m in self.mechanism_list],
            "self_stress_detail": [s.as_dict() for s in self.self_stress_list],
            "traps": [t.as_dict() for t in self.traps],
            "first_order_test": dict(self.order_test),
            "notes": list(self.notes),
        }
