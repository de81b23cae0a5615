"""The rebuilt model: frozen dataclasses holding numpy arrays of fixed dtype.

Everything the core computes with lives here.  A :class:`Model` is built once
by :mod:`audit.exchange` from a validated file and never changed afterwards.

Conventions (``../shared/FORMAT.md``):

* all quantities are in the model's own units (``Model.units``);
* node and member *indices* are positions in ``node_ids`` / ``member_ids``;
* axial force is tension positive;
* a reaction is the force a support exerts on the structure, in global axes;
* member force ``N = EA/L * (elongation - alpha*delta*L - length_error)``.

Every number read from the file keeps its decimal text (``*_text`` fields) so
that :mod:`audit.precision` can start from the input exactly as written.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

AXES = ("x", "y", "z")

#: member behaviours (FORMAT.md, additions to version 1), by their code in :attr:`Model.behaviour`:
#: 0 linear, 1 tension only, -1 compression only (the sign the axial force must have when active)
BEHAVIOURS: dict[str, int] = {"linear": 0, "tension_only": 1, "compression_only": -1}
BEHAVIOUR_NAMES: dict[int, str] = {v: k for k, v in BEHAVIOURS.items()}


def _no_floats() -> FloatArray:
    return np.zeros(0, dtype=np.float64)


def _no_ints() -> IntArray:
    return np.zeros(0, dtype=np.int64)


#: exact factors to SI (metre, newton); lbf = 0.45359237 kg * 9.80665 m/s^2 (exact by definition)
LENGTH_UNITS: dict[str, Fraction] = {
    "m": Fraction(1),
    "cm": Fraction(1, 100),
    "mm": Fraction(1, 1000),
    "ft": Fraction(3048, 10000),
    "in": Fraction(254, 10000),
}
FORCE_UNITS: dict[str, Fraction] = {
    "N": Fraction(1),
    "kN": Fraction(1000),
    "MN": Fraction(1000000),
    "lbf": Fraction("4.4482216152605"),
    "kip": Fraction("4448.2216152605"),
}
#: size of one degree, in kelvin (temperature differences only)
TEMPERATURE_UNITS: dict[str, Fraction] = {
    "degC": Fraction(1),
    "K": Fraction(1),
    "degF": Fraction(5, 9),
}


@dataclass(frozen=True)
class Units:
    length: str
    force: str
    temperature: str | None = None


@dataclass(frozen=True)
class LoadCase:
    """One load case.  Arrays are dense over nodes / members / restraints."""

    id: str
    title: str
    loads: FloatArray  #: (n_nodes, dim) float64, summed nodal forces
    temperature: FloatArray  #: (n_members,) float64, temperature change delta
    length_error: FloatArray  #: (n_members,) float64, fabricated minus geometric length
    settlement: FloatArray  #: (n_restraints,) float64, prescribed displacement along each restraint
    #: exact-path terms, as written: (node index, axis index, decimal text)
    load_text: tuple[tuple[int, int, str], ...] = ()
    #: (member index, decimal text)
    temperature_text: tuple[tuple[int, str], ...] = ()
    length_error_text: tuple[tuple[int, str], ...] = ()
    #: (restraint index, decimal text)
    settlement_text: tuple[tuple[int, str], ...] = ()
    #: self weight (FORMAT.md additions): the factor f, and its text ("" when the case has no self weight)
    self_weight: float = 0.0
    self_weight_text: str = ""
    #: unit direction of the self weight; () means the default (-y in 2D, -z in 3D)
    self_weight_direction: tuple[float, ...] = ()
    self_weight_direction_text: tuple[str, ...] = ()  #: the direction as written (unnormalised)

    @property
    def has_initial_strain(self) -> bool:
        return bool(np.any(self.temperature) or np.any(self.length_error))

    @property
    def has_self_weight(self) -> bool:
        return bool(self.self_weight_text) or self.self_weight != 0.0


@dataclass(frozen=True)
class Combination:
    id: str
    #: (load case index, factor, factor decimal text)
    factors: tuple[tuple[int, float, str], ...]


@dataclass(frozen=True)
class CaseResults:
    """Reported results of one load case or combination, in model units, tension positive.

    NaN marks a quantity that was not reported.  ``*_quantum`` holds half a unit
    in the last printed digit of each reported number, converted to model
    units: the largest error that rounding alone can explain (0 where the
    number had no fractional limit, e.g. an exact integer with trailing
    significant zeros is still given its last-digit quantum).
    """

    case_id: str
    displacements: FloatArray  #: (n_nodes, dim) float64
    displacement_quantum: FloatArray  #: (n_nodes, dim) float64
    axial_forces: FloatArray  #: (n_members,) float64
    axial_force_quantum: FloatArray  #: (n_members,) float64
    reactions: FloatArray  #: (n_nodes, dim) float64
    reaction_quantum: FloatArray  #: (n_nodes, dim) float64
    has_displacements: bool
    has_axial_forces: bool
    has_reactions: bool


@dataclass(frozen=True)
class Results:
    source: str
    sign_convention: str  #: "tension_positive" or "compression_positive" (as declared)
    units: Units  #: the units the file was written in (values below are converted)
    length_factor: float  #: declared results length unit -> model length unit
    force_factor: float  #: declared results force unit -> model force unit
    cases: tuple[CaseResults, ...]

    def case(self, case_id: str) -> CaseResults | None:
        for c in self.cases:
            if c.case_id == case_id:
                return c
        return None


@dataclass(frozen=True)
class SourceStiffness:
    """The source's own assembled matrix, as exported (``stiffness`` in the format)."""

    dof_node: IntArray  #: (n_dofs,) int64 node index of each row/column
    dof_axis: IntArray  #: (n_dofs,) int64 axis index (0=x, 1=y, 2=z)
    storage: str  #: "full" or "upper"
    rows: IntArray  #: (nnz,) int64
    cols: IntArray  #: (nnz,) int64
    values: FloatArray  #: (nnz,) float64


@dataclass(frozen=True)
class Model:
    title: str
    dim: int  #: 2 or 3
    units: Units
    node_ids: tuple[str, ...]
    coords: FloatArray  #: (n_nodes, dim) float64
    member_ids: tuple[str, ...]
    conn: IntArray  #: (n_members, 2) int64, start and end node index
    E: FloatArray  #: (n_members,) float64
    A: FloatArray  #: (n_members,) float64
    alpha: FloatArray  #: (n_members,) float64, 0 where not given
    restraint_node: IntArray  #: (n_restraints,) int64
    restraint_dir: FloatArray  #: (n_restraints, dim) float64, unit vectors
    restraint_label: tuple[str, ...]  #: "x", "y", "z" or "dir(a,b[,c])"
    spring_node: IntArray  #: (n_springs,) int64
    spring_dir: FloatArray  #: (n_springs, dim) float64, unit vectors
    spring_k: FloatArray  #: (n_springs,) float64
    load_cases: tuple[LoadCase, ...]
    combinations: tuple[Combination, ...]
    results: Results | None = None
    stiffness: SourceStiffness | None = None
    description: str = ""
    # --- decimal text of every input number, for the exact path -------------
    coords_text: tuple[tuple[str, ...], ...] = ()  #: per node, per axis
    E_text: tuple[str, ...] = ()  #: per member
    A_text: tuple[str, ...] = ()
    alpha_text: tuple[str, ...] = ()  #: "0" where not given
    restraint_dir_text: tuple[tuple[str, ...], ...] = ()  #: raw (unnormalised) direction
    spring_dir_text: tuple[tuple[str, ...], ...] = ()
    spring_k_text: tuple[str, ...] = ()
    # --- additions to version 1 (FORMAT.md): both empty when the file uses none -----------
    unit_weight: FloatArray = field(default_factory=_no_floats)  #: (n_members,) NaN where not given
    unit_weight_text: tuple[str, ...] = ()  #: per member, "" where not given
    behaviour: IntArray = field(default_factory=_no_ints)  #: (n_members,) int64 codes of BEHAVIOURS

    # ------------------------------------------------------------------ sizes
    @property
    def n_nodes(self) -> int:
        return len(self.node_ids)

    @property
    def n_members(self) -> int:
        return len(self.member_ids)

    @property
    def n_dofs(self) -> int:
        return self.n_nodes * self.dim

    @property
    def n_restraints(self) -> int:
        return int(self.restraint_node.shape[0])

    @property
    def is_nonlinear(self) -> bool:
        """True when some member is tension-only or compression-only (superposition does not hold)."""
        return bool(self.behaviour.size and np.any(self.behaviour))

    def behaviour_codes(self) -> IntArray:
        """(n_members,) int64 behaviour code of every member (0 where the model gives none)."""
        if self.behaviour.size == self.n_members:
            return self.behaviour
        return np.zeros(self.n_members, dtype=np.int64)

    # ------------------------------------------------------------- geometry
    def member_vectors(self) -> FloatArray:
        """(n_members, dim) end minus start coordinates (computed once per model; read-only)."""
        return self._cached("_member_vectors", lambda: self.coords[self.conn[:, 1]] - self.coords[self.conn[:, 0]])

    def lengths(self) -> FloatArray:
        """(n_members,) member lengths (computed once per model; read-only)."""
        v = self.member_vectors()
        return self._cached("_lengths", lambda: np.sqrt(np.einsum("ij,ij->i", v, v)))

    def _cached(self, key: str, make: Callable[[], FloatArray]) -> FloatArray:
        """A geometry array kept on the instance: the checks ask for it tens of times (10⁶ members: 25 ms each).

        Kept with the coordinate and connectivity arrays it was made from, so that a model whose arrays were
        replaced recomputes it; the result is read-only, so that no caller can change it for the next one.
        """
        hit = self.__dict__.get(key)
        if hit is not None and hit[0] is self.coords and hit[1] is self.conn:
            value: FloatArray = hit[2]
            return value
        value = np.asarray(make())
        value.setflags(write=False)
        object.__setattr__(self, key, (self.coords, self.conn, value))
        return value

    def directions(self) -> FloatArray:
        """(n_members, dim) unit vectors from start to end."""
        v = self.member_vectors()
        return v / np.sqrt(np.einsum("ij,ij->i", v, v))[:, None]

    def axial_stiffness(self) -> FloatArray:
        """(n_members,) EA/L."""
        return self.E * self.A / self.lengths()

    def case_index(self, case_id: str) -> int | None:
        for i, c in enumerate(self.load_cases):
            if c.id == case_id:
                return i
        return None

    def combination_index(self, comb_id: str) -> int | None:
        for i, c in enumerate(self.combinations):
            if c.id == comb_id:
                return i
        return None

    def all_case_ids(self) -> tuple[str, ...]:
        """Load case ids then combination ids, in file order."""
        return tuple(c.id for c in self.load_cases) + tuple(c.id for c in self.combinations)

    def node_index(self) -> dict[str, int]:
        return {n: i for i, n in enumerate(self.node_ids)}

    def member_index(self) -> dict[str, int]:
        return {m: i for i, m in enumerate(self.member_ids)}
